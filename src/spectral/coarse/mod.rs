//! Band coherence on a coarsened time grid: the quantity of [`super::coherence`] (same
//! definitions, [`super::smoothing`]), evaluated only as densely as the band's periods need.
//!
//! Why: the full-grid path pays for its cross-spectrum, smoothing and band average at every
//! sample of every scale, yet for periods of 10 s and more sampled at 10 Hz the smoothed
//! quantities change over tens of samples. Three steps, each with a controlled error:
//!
//! 1. *Transform at nodes* (exact). Scale `s` is read only at the instants `j·E`, `E` the
//!    largest power of two with `E·dt ≤ s / NODES_PER_SCALE`. The DFT sum of the transform at
//!    `t = jE` only sees bins modulo `M = N/E`, so folding the filtered spectrum modulo `M` and
//!    one `M`-point inverse FFT give the full-grid transform at exactly those instants.
//! 2. *Time smoothing by quadrature.* Between nodes the product `P = W_x·conj(W_y)/s` is taken
//!    as linear, which turns the full-grid sum `Σ_u g(τ−u)·P(u)` over the segment into
//!    `Σ_j G(τ, j)·P(jE)` with `G(τ, j) = Σ_u g̃(τ−u)·hat((u − jE)/E)`. Linear interpolation
//!    smooths by an extra variance `E²/6` (the hat's), so `g̃` is the Gaussian of variance
//!    `s² − (E·dt)²/6` with the same mass: the composite kernel keeps the Gaussian's first
//!    two moments. Lags beyond `TRUNCATE_SCALES·s` are dropped (they carry under 10⁻⁴ of the
//!    mass, and numerator and powers lose the same lags). The weights are non-negative and the powers use the same weights as the
//!    cross-spectrum, so `R² ≤ 1` still holds exactly (Cauchy–Schwarz).
//! 3. *Band average by Simpson's rule.* A band scale's points outside the cone are a run
//!    `[a, b)`; `R²` is evaluated at `M_r + 1` equally spaced instants over `[a, b − 1]`
//!    (`M_r` a power of two, spacing at most `s / OUTPUT_PER_SCALE`), and the full-grid sum
//!    `Σ_{t=a}^{b−1} R²(t)` is Simpson's integral plus half of each end value (the
//!    Euler–Maclaurin end terms). Power-of-two counts nest the instants of neighbouring
//!    scales, so every time-smoothed scale is evaluated once for all band scales it feeds.
//!
//! The number of points, and so every block weight, stays that of the full grid. The tests
//! bound the difference to the full-grid path on random pairs.
//!
//! Owns the coarse geometry and the pair kernel; the transform itself stays in
//! [`super::morlet`] and the smoothing definitions in [`super::smoothing`].

mod geometry;
#[cfg(test)]
mod tests;

use std::ops::Range;

use super::coherence::BandCoherence;
use super::morlet::WaveletPlan;
use super::{Complex64, ScaleGrid, Seconds, check_len};
use geometry::{Row, Stage};

/// Nodes per scale of the transform: `E·dt ≤ s / NODES_PER_SCALE`.
pub const NODES_PER_SCALE: f64 = 2.0;
/// Output instants per scale of a band row: spacing `≤ s / OUTPUT_PER_SCALE`.
pub const OUTPUT_PER_SCALE: f64 = 2.0;
/// Time-smoothing lags kept, in scales.
pub const TRUNCATE_SCALES: f64 = 4.0;

const LANES: usize = 4;

/// One member's transform at the plan's nodes (split real and imaginary parts, stage after
/// stage) and its smoothed power at every band row's instants.
#[derive(Clone, Debug, PartialEq)]
pub struct MemberNodes {
    re: Vec<f64>,
    im: Vec<f64>,
    power: Vec<f64>,
}

/// Per-worker workspace; build with [`CoarsePlan::scratch`], reuse for every call.
pub struct CoarseScratch {
    spectrum: Vec<Complex64>,
    fold: Vec<Complex64>,
    fft: Vec<Complex64>,
    pre: Vec<f64>,
    pim: Vec<f64>,
    tre: Vec<f64>,
    tim: Vec<f64>,
}

/// Everything needed for band coherence on the coarse grid for one (segment length, dt,
/// ω0, grid, window) geometry. `Send + Sync`; build once, share between threads.
pub struct CoarsePlan {
    wavelet: WaveletPlan,
    stages: Vec<Stage>,
    rows: Vec<Row>,
    boxcar: Vec<f64>,
    n_points: usize,
    member_len: usize,
    power_len: usize,
    max_nodes: usize,
    n_instants: usize,
    max_fold: usize,
    fft_scratch: usize,
}

impl std::fmt::Debug for CoarsePlan {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("CoarsePlan")
            .field("n_samples", &self.wavelet.n_samples())
            .field("n_points", &self.n_points)
            .field("nodes", &self.member_len)
            .field("instants", &self.n_instants)
            .field("row_instants", &self.power_len)
            .finish()
    }
}

impl CoarsePlan {
    /// # Panics
    /// As [`WaveletPlan::new`] and [`super::coherence::CoherencePlan::new`]: on a geometry the
    /// caller should have validated.
    pub fn new(
        n_samples: usize,
        dt: Seconds,
        omega0: f64,
        grid: &ScaleGrid,
        window: Range<usize>,
    ) -> Self {
        let wavelet = WaveletPlan::new(n_samples, dt, omega0, &grid.scales);
        let g = geometry::build(&wavelet, dt, grid, window);
        let mut fft_scratch = wavelet.fft_scratch_len();
        for st in &g.stages {
            if let Some(inv) = &st.inverse {
                fft_scratch = fft_scratch.max(inv.get_inplace_scratch_len());
            }
        }
        let max_fold = g
            .stages
            .iter()
            .filter(|s| s.n_nodes > 0)
            .map(|s| wavelet.padded_len() / s.step)
            .max()
            .unwrap_or(0);
        CoarsePlan {
            max_nodes: g.stages.iter().map(|s| s.n_nodes).max().unwrap_or(0),
            member_len: g.stages.iter().map(|s| s.n_nodes).sum(),
            n_instants: g.stages.iter().map(|s| s.starts.len()).sum(),
            power_len: g.rows.iter().map(|r| r.quad.len()).sum(),
            n_points: g.rows.iter().map(|r| r.points).sum(),
            stages: g.stages,
            rows: g.rows,
            boxcar: g.boxcar,
            wavelet,
            max_fold,
            fft_scratch,
        }
    }

    pub fn n_samples(&self) -> usize {
        self.wavelet.n_samples()
    }

    /// Points outside the cone of influence in band × window, counted on the full grid.
    pub fn n_points(&self) -> usize {
        self.n_points
    }

    /// Bytes one member's [`MemberNodes`] take.
    pub fn member_bytes(&self) -> u64 {
        ((2 * self.member_len + self.power_len) * std::mem::size_of::<f64>()) as u64
    }

    pub fn scratch(&self) -> CoarseScratch {
        let zero = Complex64::new(0.0, 0.0);
        CoarseScratch {
            spectrum: vec![zero; self.wavelet.padded_len()],
            fold: vec![zero; self.max_fold],
            fft: vec![zero; self.fft_scratch],
            pre: vec![0.0; self.max_nodes],
            pim: vec![0.0; self.max_nodes],
            tre: vec![0.0; self.n_instants],
            tim: vec![0.0; self.n_instants],
        }
    }

    /// A member's transform at the nodes and its smoothed power at the row instants.
    pub fn member(&self, signal: &[f64], sc: &mut CoarseScratch) -> MemberNodes {
        let padded = self.wavelet.padded_len();
        self.wavelet
            .spectrum_into(signal, &mut sc.spectrum, &mut sc.fft);
        let mut re = vec![0.0; self.member_len];
        let mut im = vec![0.0; self.member_len];
        for st in self.stages.iter().filter(|s| s.n_nodes > 0) {
            let Some(inverse) = &st.inverse else { continue };
            let m = padded / st.step;
            let mask = m - 1;
            let fold = &mut sc.fold[..m];
            fold.fill(Complex64::new(0.0, 0.0));
            let (first, gain) = self.wavelet.filter(st.grid_index);
            for (q, g) in gain.iter().enumerate() {
                let bin = first + q;
                fold[bin & mask] += sc.spectrum[bin] * *g;
            }
            inverse.process_with_scratch(fold, &mut sc.fft[..inverse.get_inplace_scratch_len()]);
            let nodes = &fold[st.first_node..st.first_node + st.n_nodes];
            let o = st.offset;
            for (j, z) in nodes.iter().enumerate() {
                re[o + j] = z.re;
                im[o + j] = z.im;
            }
        }
        let mut power = vec![0.0; self.power_len];
        for st in self.stages.iter().filter(|s| s.n_nodes > 0) {
            let o = st.offset..st.offset + st.n_nodes;
            let (xr, xi) = (&re[o.clone()], &im[o]);
            products(xr, xi, xr, xi, &mut sc.pre, &mut sc.pim);
            smooth_stage(st, &sc.pre, &sc.pim, &mut sc.tre, &mut sc.tim);
        }
        for row in &self.rows {
            for i in 0..row.quad.len() {
                power[row.p_offset + i] = self.boxcar_at(row, i, &sc.tre);
            }
        }
        MemberNodes { re, im, power }
    }

    /// Band coherence of one pair from the two members' nodes. Nothing is allocated.
    pub fn coherence(
        &self,
        x: &MemberNodes,
        y: &MemberNodes,
        sc: &mut CoarseScratch,
    ) -> BandCoherence {
        check_len("coarse nodes x", self.member_len, x.re.len());
        check_len("coarse nodes y", self.member_len, y.re.len());
        check_len("coarse power x", self.power_len, x.power.len());
        check_len("coarse power y", self.power_len, y.power.len());
        for st in self.stages.iter().filter(|s| s.n_nodes > 0) {
            let o = st.offset..st.offset + st.n_nodes;
            products(
                &x.re[o.clone()],
                &x.im[o.clone()],
                &y.re[o.clone()],
                &y.im[o],
                &mut sc.pre,
                &mut sc.pim,
            );
            smooth_stage(st, &sc.pre, &sc.pim, &mut sc.tre, &mut sc.tim);
        }
        let (mut sum_r2, mut sum_cos, mut sum_sin) = (0.0, 0.0, 0.0);
        for row in &self.rows {
            let px = &x.power[row.p_offset..row.p_offset + row.quad.len()];
            let py = &y.power[row.p_offset..row.p_offset + row.quad.len()];
            for (i, ((w, p), q)) in row.quad.iter().zip(px).zip(py).enumerate() {
                let (cr, ci) = self.boxcar_pair_at(row, i, &sc.tre, &sc.tim);
                let (r2, cos, sin) = point(cr, ci, *p, *q);
                sum_r2 += w * r2;
                sum_cos += w * cos;
                sum_sin += w * sin;
            }
        }
        BandCoherence {
            sum_r2,
            n_points: self.n_points,
            sum_cos,
            sum_sin,
        }
    }

    /// [`Self::boxcar_at`] of the real and imaginary parts in one pass.
    #[inline(always)]
    fn boxcar_pair_at(&self, row: &Row, i: usize, tre: &[f64], tim: &[f64]) -> (f64, f64) {
        let (mut re, mut im) = (0.0, 0.0);
        for (b, feed) in self.boxcar.iter().zip(&row.feeds) {
            let k = feed[i] as usize;
            re += b * tre[k];
            im += b * tim[k];
        }
        (re, im)
    }

    /// `Σ_k b_k · T_{r+k}(τ_i)` for one row instant, from the stage instants `t`.
    #[inline(always)]
    fn boxcar_at(&self, row: &Row, i: usize, t: &[f64]) -> f64 {
        let mut acc = 0.0;
        for (b, feed) in self.boxcar.iter().zip(&row.feeds) {
            acc += b * t[feed[i] as usize];
        }
        acc
    }
}

/// `W_x·conj(W_y)` at the nodes, split into real and imaginary parts.
#[inline(always)]
fn products(xr: &[f64], xi: &[f64], yr: &[f64], yi: &[f64], pre: &mut [f64], pim: &mut [f64]) {
    let n = xr.len();
    let (pre, pim) = (&mut pre[..n], &mut pim[..n]);
    let (xi, yr, yi) = (&xi[..n], &yr[..n], &yi[..n]);
    for j in 0..n {
        pre[j] = xr[j] * yr[j] + xi[j] * yi[j];
        pim[j] = xi[j] * yr[j] - xr[j] * yi[j];
    }
}

/// Time smoothing of one stage at its instants: one weighted sum of `taps` nodes each.
#[inline(always)]
fn smooth_stage(st: &Stage, pre: &[f64], pim: &[f64], tre: &mut [f64], tim: &mut [f64]) {
    let taps = st.taps;
    for (i, (&start, w)) in st
        .starts
        .iter()
        .zip(st.weights.chunks_exact(taps))
        .enumerate()
    {
        let (a, b) = (&pre[start..start + taps], &pim[start..start + taps]);
        let (re, im) = dot2(w, a, b);
        tre[st.t_offset + i] = re;
        tim[st.t_offset + i] = im;
    }
}

/// `(Σ w·a, Σ w·b)` with four interleaved partial sums in a fixed order (vectorisable and
/// independent of threads).
#[inline(always)]
fn dot2(w: &[f64], a: &[f64], b: &[f64]) -> (f64, f64) {
    let mut sa = [0.0; LANES];
    let mut sb = [0.0; LANES];
    let whole = w.len() / LANES * LANES;
    for ((wc, ac), bc) in w[..whole]
        .chunks_exact(LANES)
        .zip(a[..whole].chunks_exact(LANES))
        .zip(b[..whole].chunks_exact(LANES))
    {
        for l in 0..LANES {
            sa[l] += wc[l] * ac[l];
            sb[l] += wc[l] * bc[l];
        }
    }
    for l in 0..w.len() - whole {
        sa[l] += w[whole + l] * a[whole + l];
        sb[l] += w[whole + l] * b[whole + l];
    }
    (
        (sa[0] + sa[1]) + (sa[2] + sa[3]),
        (sb[0] + sb[1]) + (sb[2] + sb[3]),
    )
}

/// One instant's `R²` and unit phasor. Zero cross-spectrum gives `R² = 0` and no phase, or
/// NaN when a member has zero power (a flat signal), as on the full grid.
#[inline(always)]
fn point(cr: f64, ci: f64, p: f64, q: f64) -> (f64, f64, f64) {
    let mag2 = cr * cr + ci * ci;
    let pq = p * q;
    if mag2 > 0.0 {
        let mag = mag2.sqrt();
        (mag2 / pq, cr / mag, ci / mag)
    } else {
        (0.0 / pq, 0.0, 0.0)
    }
}
