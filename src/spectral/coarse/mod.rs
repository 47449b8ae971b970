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
//!    one `M`-point inverse FFT give the full-grid transform at exactly those instants (gains
//!    under 10⁻²⁰ of the filter's peak are left out of the fold).
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

/// Pairs the kernel carries side by side (vector lanes across pairs).
pub const GROUP: usize = 8;

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
            pre: vec![0.0; self.max_nodes * GROUP],
            pim: vec![0.0; self.max_nodes * GROUP],
            tre: vec![0.0; self.n_instants * GROUP],
            tim: vec![0.0; self.n_instants * GROUP],
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
            for (q, g) in gain[st.bins.clone()].iter().enumerate() {
                let bin = first + st.bins.start + q;
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
        let mut member = MemberNodes {
            re,
            im,
            power: vec![0.0; self.power_len],
        };
        // The cross-spectrum of the member with itself: the same arithmetic as a pair's, so
        // that R² of a signal with itself is 1 to the last bit.
        self.smooth_all::<1>(&[&member], &[&member], sc);
        for row in &self.rows {
            for i in 0..row.quad.len() {
                member.power[row.p_offset + i] = self.boxcar_at::<1>(row, i, &sc.tre)[0];
            }
        }
        member
    }

    /// Band coherence of one pair from the two members' nodes. Nothing is allocated.
    pub fn coherence(
        &self,
        x: &MemberNodes,
        y: &MemberNodes,
        sc: &mut CoarseScratch,
    ) -> BandCoherence {
        self.lanes::<1>(&[x], &[y], sc)[0]
    }

    /// Band coherence of many pairs (`xs[i]` with `ys[i]`) into `out`, [`GROUP`] at a time.
    /// Each pair's arithmetic is the same operation for operation as [`Self::coherence`], only
    /// carried out for several pairs side by side, so the bits do not depend on the grouping.
    pub fn coherence_many(
        &self,
        xs: &[&MemberNodes],
        ys: &[&MemberNodes],
        out: &mut [BandCoherence],
        sc: &mut CoarseScratch,
    ) {
        check_len("pairs' second members", xs.len(), ys.len());
        check_len("pairs' results", xs.len(), out.len());
        let whole = xs.len() / GROUP * GROUP;
        for ((x, y), o) in xs[..whole]
            .chunks_exact(GROUP)
            .zip(ys[..whole].chunks_exact(GROUP))
            .zip(out[..whole].chunks_exact_mut(GROUP))
        {
            let x: &[&MemberNodes; GROUP] = x.try_into().expect("chunk of GROUP");
            let y: &[&MemberNodes; GROUP] = y.try_into().expect("chunk of GROUP");
            o.copy_from_slice(&self.group(x, y, sc));
        }
        for ((x, y), o) in xs[whole..].iter().zip(&ys[whole..]).zip(&mut out[whole..]) {
            *o = self.coherence(x, y, sc);
        }
    }

    /// [`Self::lanes`] for a full group, compiled a second time with AVX2 for machines that
    /// have it (chosen at run time). Without fused multiply-add and with every operation in
    /// the same order, both builds give the same bits.
    fn group(
        &self,
        xs: &[&MemberNodes; GROUP],
        ys: &[&MemberNodes; GROUP],
        sc: &mut CoarseScratch,
    ) -> [BandCoherence; GROUP] {
        #[cfg(target_arch = "x86_64")]
        if std::arch::is_x86_feature_detected!("avx2") {
            // SAFETY: the CPU has AVX2, checked just above.
            return unsafe { self.group_avx2(xs, ys, sc) };
        }
        self.lanes::<GROUP>(xs, ys, sc)
    }

    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn group_avx2(
        &self,
        xs: &[&MemberNodes; GROUP],
        ys: &[&MemberNodes; GROUP],
        sc: &mut CoarseScratch,
    ) -> [BandCoherence; GROUP] {
        self.lanes::<GROUP>(xs, ys, sc)
    }

    /// The pair kernel for `G` pairs side by side: lane `l` is pair `(xs[l], ys[l])`.
    #[inline(always)]
    fn lanes<const G: usize>(
        &self,
        xs: &[&MemberNodes; G],
        ys: &[&MemberNodes; G],
        sc: &mut CoarseScratch,
    ) -> [BandCoherence; G] {
        for m in xs.iter().chain(ys) {
            check_len("coarse nodes", self.member_len, m.re.len());
            check_len("coarse power", self.power_len, m.power.len());
        }
        self.smooth_all::<G>(xs, ys, sc);
        let (mut s_r2, mut s_cos, mut s_sin) = ([0.0f64; G], [0.0f64; G], [0.0f64; G]);
        for row in &self.rows {
            for (i, w) in row.quad.iter().enumerate() {
                let cr = self.boxcar_at::<G>(row, i, &sc.tre);
                let ci = self.boxcar_at::<G>(row, i, &sc.tim);
                let p: [f64; G] = std::array::from_fn(|l| xs[l].power[row.p_offset + i]);
                let q: [f64; G] = std::array::from_fn(|l| ys[l].power[row.p_offset + i]);
                for l in 0..G {
                    let (r2, cos, sin) = point(cr[l], ci[l], p[l], q[l]);
                    s_r2[l] += w * r2;
                    s_cos[l] += w * cos;
                    s_sin[l] += w * sin;
                }
            }
        }
        std::array::from_fn(|l| BandCoherence {
            sum_r2: s_r2[l],
            n_points: self.n_points,
            sum_cos: s_cos[l],
            sum_sin: s_sin[l],
        })
    }

    /// Cross-spectra at the nodes and their time smoothing at every stage instant, for `G`
    /// pairs interleaved (`value[index * G + lane]`) in `sc.tre` / `sc.tim`.
    #[inline(always)]
    fn smooth_all<const G: usize>(
        &self,
        xs: &[&MemberNodes; G],
        ys: &[&MemberNodes; G],
        sc: &mut CoarseScratch,
    ) {
        for st in self.stages.iter().filter(|s| s.n_nodes > 0) {
            let o = st.offset..st.offset + st.n_nodes;
            for l in 0..G {
                let (xr, xi) = (&xs[l].re[o.clone()], &xs[l].im[o.clone()]);
                let (yr, yi) = (&ys[l].re[o.clone()], &ys[l].im[o.clone()]);
                for j in 0..st.n_nodes {
                    sc.pre[j * G + l] = xr[j] * yr[j] + xi[j] * yi[j];
                    sc.pim[j * G + l] = xi[j] * yr[j] - xr[j] * yi[j];
                }
            }
            let taps = st.taps;
            for (i, (&start, w)) in st
                .starts
                .iter()
                .zip(st.weights.chunks_exact(taps))
                .enumerate()
            {
                let (mut ar, mut ai) = ([0.0f64; G], [0.0f64; G]);
                let pr = &sc.pre[start * G..(start + taps) * G];
                let pi = &sc.pim[start * G..(start + taps) * G];
                for ((wk, r), m) in w.iter().zip(pr.chunks_exact(G)).zip(pi.chunks_exact(G)) {
                    for l in 0..G {
                        ar[l] += wk * r[l];
                        ai[l] += wk * m[l];
                    }
                }
                let t = (st.t_offset + i) * G;
                sc.tre[t..t + G].copy_from_slice(&ar);
                sc.tim[t..t + G].copy_from_slice(&ai);
            }
        }
    }

    /// `Σ_k b_k · T_{r+k}(τ_i)` for one row instant and each of `G` lanes.
    #[inline(always)]
    fn boxcar_at<const G: usize>(&self, row: &Row, i: usize, t: &[f64]) -> [f64; G] {
        let mut acc = [0.0f64; G];
        for (b, feed) in self.boxcar.iter().zip(&row.feeds) {
            let k = feed[i] as usize * G;
            let v = &t[k..k + G];
            for l in 0..G {
                acc[l] += b * v[l];
            }
        }
        acc
    }
}

/// One instant's `R²` and unit phasor. Zero cross-spectrum gives `R² = 0` and no phase, or
/// NaN when a member has zero power (a flat signal), as on the full grid. Written without
/// branches so that lanes of several pairs run as one vector.
#[inline(always)]
fn point(cr: f64, ci: f64, p: f64, q: f64) -> (f64, f64, f64) {
    let mag2 = cr * cr + ci * ci;
    let inv = if mag2 > 0.0 { 1.0 / mag2.sqrt() } else { 0.0 };
    (mag2 / (p * q), cr * inv, ci * inv)
}
