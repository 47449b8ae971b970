//! Wavelet transform coherence over a period band and an analysis window (Grinsted, Moore &
//! Jevrejeva 2004, eq. 4; smoothing after Torrence & Webster 1999):
//!
//! `R²(s,t) = |S(s⁻¹ W_xy)|² / (S(s⁻¹|W_x|²) · S(s⁻¹|W_y|²))`, `W_xy = W_x · conj(W_y)`,
//!
//! with `S` defined in [`super::smoothing`]. A block value is the mean of `R²` over the band
//! scales × window samples that lie outside the cone of influence of the whole segment
//! ([`super::smoothing::outside_coi`]); every pair of one geometry uses the same points.
//! The phase summary is the circular mean of `φ = arg S(s⁻¹ W_xy)` over the same points:
//! `Σ cos φ`, `Σ sin φ` and `atan2(Σ sin φ, Σ cos φ)`; `φ > 0` means `x` leads `y`. A point
//! whose smoothed cross-spectrum is exactly zero adds nothing to the phase sums.
//!
//! FFT path: each needed scale is time-smoothed by one forward and one inverse FFT of the
//! restricted, zero-padded product series, with the FFT length chosen so that the circular
//! convolution equals the linear one at every sample that is read back (see
//! [`CoherencePlan::new`]). The scale boxcar is then applied in the time domain.
//!
//! Owns the smoothing machinery and the band average; must not compute wavelet transforms.

use super::smoothing::{coi_range, gauss_half_width, gauss_kernel, scale_boxcar};
use super::{Complex64, ScaleGrid, Seconds, check_len};
use rustfft::{Fft, FftPlanner};
use std::ops::Range;
use std::sync::Arc;

const ZERO: Complex64 = Complex64::new(0.0, 0.0);

/// Forward and inverse plans of one length.
type FftPair = (Arc<dyn Fft<f64>>, Arc<dyn Fft<f64>>);

/// Sums over the points of one block; sums add across blocks, so callers can pool blocks
/// before taking means.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BandCoherence {
    pub sum_r2: f64,
    pub n_points: usize,
    pub sum_cos: f64,
    pub sum_sin: f64,
}

impl BandCoherence {
    /// NaN when the block has no point outside the cone of influence.
    pub fn mean_r2(&self) -> f64 {
        self.sum_r2 / self.n_points as f64
    }

    /// Circular mean phase in `(−π, π]`; NaN when the block has no point.
    pub fn mean_phase(&self) -> f64 {
        if self.n_points == 0 {
            f64::NAN
        } else {
            self.sum_sin.atan2(self.sum_cos)
        }
    }
}

/// Time smoothing of one grid scale, restricted to the samples the band needs.
#[derive(Clone)]
struct Stage {
    /// Row of the transform (index into the grid).
    scale: usize,
    /// Segment samples copied into the FFT buffer (buffer position = sample − input.start).
    input: Range<usize>,
    /// `None` when no band point needs this scale.
    fft: Option<FftPair>,
    /// Kernel spectrum with `1/(L·s)` folded in (real: the kernel is even); bins
    /// `keep..L−keep+1` are below [`SPECTRUM_CUT`] and are zeroed instead of multiplied.
    spectrum: Vec<f64>,
    keep: usize,
}

/// Everything needed to compute band coherence for one (segment length, dt, grid, window)
/// geometry. `Send + Sync`; build once, share between threads, pass per-thread scratch.
#[derive(Clone)]
pub struct CoherencePlan {
    n: usize,
    n_scales: usize,
    halo: usize,
    boxcar: Vec<f64>,
    stages: Vec<Stage>,
    /// Per band scale: window samples outside the cone, and the offset of its first point in
    /// a smoothed-power buffer.
    rows: Vec<(Range<usize>, usize)>,
    n_points: usize,
    slot_len: usize,
    acc_len: usize,
    fft_scratch: usize,
}

impl std::fmt::Debug for CoherencePlan {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("CoherencePlan")
            .field("n_samples", &self.n)
            .field("n_scales", &self.n_scales)
            .field("n_points", &self.n_points)
            .field(
                "fft_lens",
                &self
                    .stages
                    .iter()
                    .map(|s| s.spectrum.len())
                    .collect::<Vec<_>>(),
            )
            .finish()
    }
}

/// Odd factors allowed in an FFT length; with a power of two these give lengths rustfft runs
/// at close to power-of-two speed while never overshooting `need` by more than 20%.
const FFT_ODD_FACTORS: [usize; 5] = [1, 3, 5, 7, 9];

/// Smallest `m·2^a ≥ need` with `m` in [`FFT_ODD_FACTORS`]. A fixed rule (not timing) so that
/// the same geometry always gets the same lengths and hence the same bits.
pub fn fast_fft_len(need: usize) -> usize {
    let need = need.max(1);
    FFT_ODD_FACTORS
        .iter()
        .map(|&m| m * need.div_ceil(m).next_power_of_two())
        .min()
        .unwrap_or(need)
}

/// Kernel-spectrum bins below this fraction of the zero-frequency gain are treated as zero:
/// each dropped bin weighs under 10⁻¹⁸ of the DC gain, far below rounding of the FFT itself,
/// and the cut spares the multiply over the many empty bins of the large scales.
pub const SPECTRUM_CUT: f64 = 1e-18;

impl CoherencePlan {
    /// FFT length per scale: outputs are read at `t ∈ [oa, ob)`, inputs are the samples within
    /// the kernel half-width `m` of those, `[ia, ib)`. Lags occurring are
    /// `d = t − u ∈ [−(ib−1−oa), ob−1−ia]`; with `reach` the larger magnitude and the kernel
    /// cut at `m' = min(m, reach)`, a circular length `L ≥ reach + m' + 1` keeps every lag
    /// that occurs off every kernel lag it is not, so the circular convolution is the linear
    /// one at the samples read back.
    ///
    /// # Panics
    /// If `window` is not inside `0..n_samples`, `dt` is not positive, or `grid` lacks the
    /// boxcar halo on either side of its band (a grid not from `band_scale_grid`).
    pub fn new(n_samples: usize, dt: Seconds, grid: &ScaleGrid, window: Range<usize>) -> Self {
        assert!(
            n_samples >= 2,
            "CoherencePlan: need at least 2 samples, got {n_samples}"
        );
        assert!(
            dt.is_finite() && dt > 0.0,
            "CoherencePlan: dt must be positive, got {dt}"
        );
        assert!(
            window.start <= window.end && window.end <= n_samples,
            "CoherencePlan: window {window:?} not inside 0..{n_samples}"
        );
        let boxcar = scale_boxcar(grid.scales_per_octave);
        let halo = (boxcar.len() - 1) / 2;
        debug_assert!(
            boxcar.len() < 3 || boxcar[1..boxcar.len() - 1].iter().all(|w| *w == boxcar[1]),
            "boxcar interior weights must be equal: {boxcar:?}"
        );
        grid.assert_halo(halo, "CoherencePlan");
        let n = n_samples;
        let n_band = grid.band.len();
        let first_scale = grid.band.start - halo;

        let mut rows = Vec::with_capacity(n_band);
        let mut n_points = 0;
        for r in 0..n_band {
            let valid = coi_range(&window, n, dt, grid.scales[grid.band.start + r]);
            let len = valid.len();
            rows.push((valid, n_points));
            n_points += len;
        }

        let mut planner = FftPlanner::<f64>::new();
        let mut stages = Vec::with_capacity(n_band + 2 * halo);
        for si in 0..n_band + 2 * halo {
            let scale = first_scale + si;
            let s = grid.scales[scale];
            // Band row r smooths over stages r..=r + 2·halo, so stage si feeds rows
            // si − 2·halo..=si; it must cover the union of their points.
            let (oa, ob) = (si.saturating_sub(2 * halo)..(si + 1).min(n_band))
                .map(|r| &rows[r].0)
                .filter(|v| !v.is_empty())
                .fold((usize::MAX, 0), |(a, b), v| (a.min(v.start), b.max(v.end)));
            if oa >= ob {
                stages.push(Stage {
                    scale,
                    input: 0..0,
                    fft: None,
                    spectrum: Vec::new(),
                    keep: 0,
                });
                continue;
            }
            let m = gauss_half_width(s, dt, n);
            let input = oa.saturating_sub(m)..(ob + m).min(n);
            let reach = (ob - 1 - input.start).max(input.end - 1 - oa);
            let m_cut = m.min(reach);
            let len = fast_fft_len(reach + m_cut + 1);
            let kernel = gauss_kernel(s, dt, n);
            let forward = planner.plan_fft_forward(len);
            let inverse = planner.plan_fft_inverse(len);
            let mut buf = vec![ZERO; len];
            buf[0] = Complex64::new(kernel[0], 0.0);
            for k in 1..=m_cut {
                buf[k] = Complex64::new(kernel[k], 0.0);
                buf[len - k] = Complex64::new(kernel[k], 0.0);
            }
            forward.process(&mut buf);
            let spectrum: Vec<f64> = buf.iter().map(|z| z.re / (len as f64 * s)).collect();
            let floor = SPECTRUM_CUT * spectrum[0].abs();
            // Smallest `keep` such that every bin in keep..=len−keep is negligible.
            let keep = (1..=len / 2)
                .rev()
                .find(|&q| spectrum[q].abs() > floor || spectrum[len - q].abs() > floor)
                .map_or(1, |q| q + 1);
            stages.push(Stage {
                scale,
                input,
                fft: Some((forward, inverse)),
                spectrum,
                keep,
            });
        }
        let slot_len = stages.iter().map(|s| s.spectrum.len()).max().unwrap_or(0);
        let fft_scratch = stages
            .iter()
            .filter_map(|s| s.fft.as_ref())
            .map(|(f, i)| f.get_inplace_scratch_len().max(i.get_inplace_scratch_len()))
            .max()
            .unwrap_or(0);
        let acc_len = rows.iter().map(|r| r.0.len()).max().unwrap_or(0);
        CoherencePlan {
            n,
            n_scales: grid.scales.len(),
            halo,
            boxcar,
            stages,
            rows,
            n_points,
            slot_len,
            acc_len,
            fft_scratch,
        }
    }

    pub fn n_samples(&self) -> usize {
        self.n
    }

    /// Points outside the cone of influence in band × window; the same for every pair.
    pub fn n_points(&self) -> usize {
        self.n_points
    }

    /// Length of a smoothed-power buffer (one value per point, band scale-major).
    pub fn power_len(&self) -> usize {
        self.n_points
    }

    /// Complex scratch for `smoothed_power_into` and `coherence`: a ring of `2h+1` FFT
    /// buffers (one per scale the boxcar spans), a boxcar accumulator and FFT workspace.
    pub fn scratch_len(&self) -> usize {
        self.boxcar.len() * self.slot_len + self.acc_len + self.fft_scratch
    }

    /// `S(s⁻¹|W|²)` at the plan's points, for caching once per member and window.
    pub fn smoothed_power_into(&self, w: &[Complex64], out: &mut [f64], scratch: &mut [Complex64]) {
        let n = self.n;
        check_len("transform for smoothed power", self.n_scales * n, w.len());
        check_len("smoothed power output", self.n_points, out.len());
        // Same product formula as the cross-spectrum, so that x with itself gives R² = 1.
        self.smooth(
            |scale, input, dst| {
                let src = &w[scale * n + input.start..scale * n + input.end];
                for (d, a) in dst.iter_mut().zip(src) {
                    *d = a * a.conj();
                }
            },
            scratch,
            |offset, acc| {
                for (o, a) in out[offset..offset + acc.len()].iter_mut().zip(acc) {
                    *o = a.re;
                }
            },
        );
    }

    /// Band coherence of one pair from the two transforms and their cached smoothed powers.
    /// Nothing is allocated and the scratch content on entry does not matter.
    pub fn coherence(
        &self,
        wx: &[Complex64],
        wy: &[Complex64],
        px: &[f64],
        py: &[f64],
        scratch: &mut [Complex64],
    ) -> BandCoherence {
        let n = self.n;
        check_len("transform x", self.n_scales * n, wx.len());
        check_len("transform y", self.n_scales * n, wy.len());
        check_len("smoothed power x", self.n_points, px.len());
        check_len("smoothed power y", self.n_points, py.len());
        // Four interleaved partial sums (point i of a row goes to lane i mod 4) let the
        // compiler vectorise the divisions; the order is fixed by the geometry alone, so the
        // result is still bit-reproducible.
        let mut lanes = [[0.0f64; LANES]; 3];
        self.smooth(
            |scale, input, dst| {
                let a = &wx[scale * n + input.start..scale * n + input.end];
                let b = &wy[scale * n + input.start..scale * n + input.end];
                for ((d, a), b) in dst.iter_mut().zip(a).zip(b) {
                    *d = a * b.conj();
                }
            },
            scratch,
            |offset, acc| {
                let end = offset + acc.len();
                let (px, py) = (&px[offset..end], &py[offset..end]);
                let mut local = lanes;
                let whole = acc.len() / LANES * LANES;
                for ((a, p), q) in acc[..whole]
                    .chunks_exact(LANES)
                    .zip(px.chunks_exact(LANES))
                    .zip(py.chunks_exact(LANES))
                {
                    for l in 0..LANES {
                        accumulate_point(&mut local, l, a[l], p[l], q[l]);
                    }
                }
                for (l, ((a, p), q)) in acc[whole..]
                    .iter()
                    .zip(&px[whole..])
                    .zip(&py[whole..])
                    .enumerate()
                {
                    accumulate_point(&mut local, l, *a, *p, *q);
                }
                lanes = local;
            },
        );
        let total = |v: &[f64; LANES]| (v[0] + v[1]) + (v[2] + v[3]);
        BandCoherence {
            sum_r2: total(&lanes[0]),
            n_points: self.n_points,
            sum_cos: total(&lanes[1]),
            sum_sin: total(&lanes[2]),
        }
    }

    /// The smoothing pipeline shared by powers and cross-spectra: `fill(scale, input, dst)`
    /// writes the unsmoothed product for the given samples; `sink(offset, values)` receives
    /// `S(s⁻¹·product)` for one band scale's points, `offset` being the first point's index.
    fn smooth<F, K>(&self, fill: F, scratch: &mut [Complex64], mut sink: K)
    where
        F: Fn(usize, Range<usize>, &mut [Complex64]),
        K: FnMut(usize, &[Complex64]),
    {
        check_len("coherence scratch", self.scratch_len(), scratch.len());
        let ring = self.boxcar.len();
        let (slots, rest) = scratch.split_at_mut(ring * self.slot_len);
        let (acc_buf, fft_scratch) = rest.split_at_mut(self.acc_len);
        let span = 2 * self.halo;
        for (si, stage) in self.stages.iter().enumerate() {
            if let Some((forward, inverse)) = &stage.fft {
                let len = stage.spectrum.len();
                let slot = &mut slots[(si % ring) * self.slot_len..][..len];
                let (head, tail) = slot.split_at_mut(stage.input.len());
                fill(stage.scale, stage.input.clone(), head);
                tail.fill(ZERO);
                forward.process_with_scratch(slot, fft_scratch);
                let keep = stage.keep;
                if 2 * keep > len {
                    for (z, g) in slot.iter_mut().zip(&stage.spectrum) {
                        *z *= *g;
                    }
                } else {
                    let (low, rest) = slot.split_at_mut(keep);
                    let (mid, high) = rest.split_at_mut(len + 1 - 2 * keep);
                    for (z, g) in low.iter_mut().zip(&stage.spectrum) {
                        *z *= *g;
                    }
                    mid.fill(ZERO);
                    for (z, g) in high.iter_mut().zip(&stage.spectrum[len + 1 - keep..]) {
                        *z *= *g;
                    }
                }
                inverse.process_with_scratch(slot, fft_scratch);
            }
            if si < span {
                continue;
            }
            // Band row r needs stages r..=r + 2h, all done now.
            let r = si - span;
            let (valid, offset) = &self.rows[r];
            if valid.is_empty() {
                continue;
            }
            // Boxcar = end weight on the two outer scales, one common weight inside
            // (smoothing module docs): sum first, scale once.
            let acc = &mut acc_buf[..valid.len()];
            let row = |k: usize| {
                let start = valid.start - self.stages[r + k].input.start;
                &slots[((r + k) % ring) * self.slot_len + start..][..valid.len()]
            };
            if span == 0 {
                for (a, z) in acc.iter_mut().zip(row(0)) {
                    *a = z * self.boxcar[0];
                }
            } else {
                let (end_w, mid_w) = (self.boxcar[0], self.boxcar[1]);
                // Interior rows 1..span summed two per pass to halve the accumulator traffic.
                acc.copy_from_slice(row(1));
                let mut k = 2;
                while k + 1 < span {
                    for ((a, u), v) in acc.iter_mut().zip(row(k)).zip(row(k + 1)) {
                        *a += u + v;
                    }
                    k += 2;
                }
                if k < span {
                    for (a, z) in acc.iter_mut().zip(row(k)) {
                        *a += z;
                    }
                }
                for ((a, lo), hi) in acc.iter_mut().zip(row(0)).zip(row(span)) {
                    *a = *a * mid_w + (lo + hi) * end_w;
                }
            }
            sink(*offset, acc);
        }
    }
}

const LANES: usize = 4;

/// One point's `R²` and unit phasor into lane `l` of `[Σ R², Σ cos φ, Σ sin φ]`.
/// One division and one square root per point: with `d = 1/(|a|·p·q)`, `R² = |a|²·|a|·d` and
/// `1/|a| = p·q·d` (exact algebra; needs |a|·p·q inside the f64 range, i.e. powers between
/// about 1e−100 and 1e100).
#[inline(always)]
fn accumulate_point(lanes: &mut [[f64; LANES]; 3], l: usize, a: Complex64, p: f64, q: f64) {
    let mag2 = a.norm_sqr();
    let mag = mag2.sqrt();
    let pq = p * q;
    let d = 1.0 / (mag * pq);
    // Zero cross-spectrum: R² = 0, or NaN when a member has zero power (flat signal).
    let nonzero = mag2 > 0.0;
    let r2_zero = 0.0 / pq;
    let r2 = if nonzero { mag2 * mag * d } else { r2_zero };
    let inv = if nonzero { pq * d } else { 0.0 };
    lanes[0][l] += r2;
    lanes[1][l] += a.re * inv;
    lanes[2][l] += a.im * inv;
}

/// Slow oracle: the same `S` and points as [`CoherencePlan`], computed by direct summation
/// of the definitions in [`super::smoothing`]. For tests only; cost is
/// `points × boxcar × kernel length`.
pub fn coherence_direct(
    n_samples: usize,
    dt: Seconds,
    grid: &ScaleGrid,
    window: Range<usize>,
    wx: &[Complex64],
    wy: &[Complex64],
) -> BandCoherence {
    let n = n_samples;
    check_len("transform x", grid.scales.len() * n, wx.len());
    check_len("transform y", grid.scales.len() * n, wy.len());
    let boxcar = scale_boxcar(grid.scales_per_octave);
    let halo = (boxcar.len() - 1) / 2;
    let mut out = BandCoherence {
        sum_r2: 0.0,
        n_points: 0,
        sum_cos: 0.0,
        sum_sin: 0.0,
    };
    for j in grid.band.clone() {
        for t in coi_range(&window, n, dt, grid.scales[j]) {
            let (mut sxy, mut sxx, mut syy) = (ZERO, 0.0, 0.0);
            for (k, w) in boxcar.iter().enumerate() {
                let i = j + k - halo;
                let s = grid.scales[i];
                let g = gauss_kernel(s, dt, n);
                let m = g.len() - 1;
                let (mut cxy, mut cxx, mut cyy) = (ZERO, 0.0, 0.0);
                for u in t.saturating_sub(m)..(t + m + 1).min(n) {
                    let gk = g[t.abs_diff(u)];
                    let (a, b) = (wx[i * n + u], wy[i * n + u]);
                    cxy += a * b.conj() * gk;
                    cxx += a.norm_sqr() * gk;
                    cyy += b.norm_sqr() * gk;
                }
                sxy += cxy * (w / s);
                sxx += cxx * (w / s);
                syy += cyy * (w / s);
            }
            out.n_points += 1;
            out.sum_r2 += sxy.norm_sqr() / (sxx * syy);
            let mag = sxy.norm();
            if mag > 0.0 {
                out.sum_cos += sxy.re / mag;
                out.sum_sin += sxy.im / mag;
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::super::correlation::pearson;
    use super::super::morlet::{WaveletPlan, tests::normal_series};
    use super::super::{Complex64, band_scale_grid};
    use super::*;

    struct Case {
        n: usize,
        dt: f64,
        grid: ScaleGrid,
        plan: CoherencePlan,
        wavelet: WaveletPlan,
    }

    impl Case {
        fn new(n: usize, dt: f64, band: (f64, f64), spo: usize, window: Range<usize>) -> Case {
            let grid = band_scale_grid(band.0, band.1, 6.0, spo);
            let wavelet = WaveletPlan::new(n, dt, 6.0, &grid.scales);
            let plan = CoherencePlan::new(n, dt, &grid, window);
            Case {
                n,
                dt,
                grid,
                plan,
                wavelet,
            }
        }

        fn run(&self, x: &[f64], y: &[f64]) -> (BandCoherence, Vec<Complex64>, Vec<Complex64>) {
            let wx = self.wavelet.transform(x);
            let wy = self.wavelet.transform(y);
            let mut scratch = vec![ZERO; self.plan.scratch_len()];
            let mut px = vec![0.0; self.plan.power_len()];
            let mut py = vec![0.0; self.plan.power_len()];
            self.plan.smoothed_power_into(&wx, &mut px, &mut scratch);
            self.plan.smoothed_power_into(&wy, &mut py, &mut scratch);
            let c = self.plan.coherence(&wx, &wy, &px, &py, &mut scratch);
            (c, wx, wy)
        }
    }

    fn sine(n: usize, dt: f64, period: f64, phase: f64) -> Vec<f64> {
        (0..n)
            .map(|t| (2.0 * std::f64::consts::PI * t as f64 * dt / period + phase).sin())
            .collect()
    }

    #[test]
    fn plan_is_send_and_sync() {
        fn check<T: Send + Sync>() {}
        check::<CoherencePlan>();
    }

    /// FFT length rule by enumeration: the smallest length ≥ need whose odd part is one of
    /// 1, 3, 5, 7, 9.
    #[test]
    fn fast_len_by_enumeration() {
        for need in 1..5000usize {
            let brute = (need..)
                .find(|&l| {
                    let odd = l >> l.trailing_zeros();
                    [1, 3, 5, 7, 9].contains(&odd)
                })
                .unwrap();
            assert_eq!(fast_fft_len(need), brute, "need {need}");
        }
    }

    /// Cauchy–Schwarz equality (Grinsted et al. 2004, eq. 4 with x = y): R² = 1 at every point.
    #[test]
    fn self_coherence_is_one() {
        let case = Case::new(700, 0.2, (3.0, 20.0), 12, 0..700);
        let x = normal_series(11, case.n);
        let (c, _, _) = case.run(&x, &x);
        assert!(c.n_points > 0);
        assert!((c.mean_r2() - 1.0).abs() < 1e-12, "{}", c.mean_r2());
        assert!(c.mean_phase().abs() < 1e-12);
    }

    /// Rule of the trade: coherence ignores a constant phase lag, correlation does not. Sines a
    /// quarter period apart: R² ≈ 1 over a band around the period, Pearson r ≈ 0 (sin ⟂ cos
    /// over whole periods), and the phase of W_x·conj(W_y) is −π/2 when y leads x by π/2.
    #[test]
    fn quarter_period_lag_is_coherent_but_uncorrelated() {
        let (n, dt, period) = (1200, 0.1, 8.0);
        let case = Case::new(n, dt, (6.0, 11.0), 12, 0..n);
        let x = sine(n, dt, period, 0.0);
        let y = sine(n, dt, period, std::f64::consts::FRAC_PI_2);
        let (c, _, _) = case.run(&x, &y);
        assert!(c.mean_r2() > 0.99, "R² {}", c.mean_r2());
        assert!(
            (c.mean_phase() + std::f64::consts::FRAC_PI_2).abs() < 0.02,
            "phase {}",
            c.mean_phase()
        );
        let r = pearson(&x, &y);
        assert!(r.abs() < 1e-10, "r {r}"); // 15 whole periods: sin·cos sums to 0
    }

    /// Independent white noise: band-mean R² well below one (rule of thumb of the trade: the
    /// 0.6-octave / one-scale smoothing leaves noise coherence around 0.3–0.4).
    #[test]
    fn independent_noise_is_not_coherent() {
        let case = Case::new(1000, 0.25, (4.0, 24.0), 12, 0..1000);
        for seed in 0..4 {
            let x = normal_series(100 + seed, case.n);
            let y = normal_series(200 + seed, case.n);
            let (c, _, _) = case.run(&x, &y);
            assert!(c.mean_r2() < 0.6, "seed {seed}: R² {}", c.mean_r2());
            assert!(c.mean_r2() > 0.05, "seed {seed}: R² {}", c.mean_r2());
        }
    }

    /// R² is symmetric in x and y and the phase changes sign (definition, Grinsted et al. 2004).
    #[test]
    fn swapping_members_keeps_r2() {
        let case = Case::new(800, 0.2, (3.0, 15.0), 12, 100..700);
        let x = normal_series(3, case.n);
        let y: Vec<f64> = normal_series(4, case.n)
            .iter()
            .zip(&x)
            .map(|(a, b)| a + 0.8 * b)
            .collect();
        let (a, _, _) = case.run(&x, &y);
        let (b, _, _) = case.run(&y, &x);
        assert_eq!(a.n_points, b.n_points);
        assert!((a.sum_r2 - b.sum_r2).abs() < 1e-12 * a.sum_r2);
        assert!((a.mean_phase() + b.mean_phase()).abs() < 1e-12);
    }

    /// The FFT path equals direct summation of the definitions for several geometries:
    /// whole segment, a block at each end, a mid block, odd n, coarse and fine grids, and a
    /// band whose upper scales lie wholly inside the cone.
    #[test]
    fn fft_path_matches_direct_summation() {
        let geometries = [
            (400, 0.25, (2.0, 12.0), 12, 0..400),
            (401, 0.25, (2.0, 12.0), 12, 0..120),
            (401, 0.25, (2.0, 12.0), 12, 300..401),
            (517, 0.1, (1.0, 6.0), 8, 150..380),
            (300, 0.5, (2.0, 60.0), 10, 0..300),
            (256, 1.0, (3.0, 40.0), 5, 40..200),
            (333, 0.3, (1.5, 9.0), 1, 0..333),
        ];
        for (gi, (n, dt, band, spo, window)) in geometries.into_iter().enumerate() {
            let case = Case::new(n, dt, band, spo, window.clone());
            let x = normal_series(40 + gi as u64, n);
            let y: Vec<f64> = normal_series(60 + gi as u64, n)
                .iter()
                .zip(&x)
                .map(|(a, b)| a + 0.5 * b)
                .collect();
            let (fast, wx, wy) = case.run(&x, &y);
            let slow = coherence_direct(n, case.dt, &case.grid, window, &wx, &wy);
            assert_eq!(fast.n_points, slow.n_points, "geometry {gi}");
            assert!(fast.n_points > 0, "geometry {gi}");
            let scale = fast.n_points as f64;
            for (a, b, what) in [
                (fast.sum_r2, slow.sum_r2, "R²"),
                (fast.sum_cos, slow.sum_cos, "cos"),
                (fast.sum_sin, slow.sum_sin, "sin"),
            ] {
                assert!(
                    (a - b).abs() < 1e-10 * scale,
                    "geometry {gi} {what}: fft {a} direct {b}"
                );
            }
        }
    }

    /// Same pair twice with garbage in the scratch between calls: identical bits.
    #[test]
    fn dirty_scratch_gives_identical_bits() {
        let case = Case::new(600, 0.2, (2.0, 16.0), 12, 50..550);
        let x = normal_series(21, case.n);
        let y = normal_series(22, case.n);
        let (first, wx, wy) = case.run(&x, &y);
        let mut px = vec![0.0; case.plan.power_len()];
        let mut py = vec![0.0; case.plan.power_len()];
        let mut scratch = vec![Complex64::new(f64::NAN, -3.0e300); case.plan.scratch_len()];
        case.plan.smoothed_power_into(&wx, &mut px, &mut scratch);
        scratch.fill(Complex64::new(1e300, f64::INFINITY));
        case.plan.smoothed_power_into(&wy, &mut py, &mut scratch);
        scratch.fill(Complex64::new(f64::NAN, f64::NAN));
        let second = case.plan.coherence(&wx, &wy, &px, &py, &mut scratch);
        assert_eq!(first.sum_r2.to_bits(), second.sum_r2.to_bits());
        assert_eq!(first.sum_cos.to_bits(), second.sum_cos.to_bits());
        assert_eq!(first.sum_sin.to_bits(), second.sum_sin.to_bits());
    }

    /// n_points counts band × window points outside the cone, worked by hand for a one-scale
    /// band: s = 2/ff(6) = 1.9363 s, √2·s = 2.738 s, dt = 1 → t ∈ [3, n − 4].
    #[test]
    fn point_count_by_hand() {
        let grid = band_scale_grid(2.0, 2.0, 6.0, 1);
        assert_eq!(grid.band.len(), 1);
        let plan = CoherencePlan::new(50, 1.0, &grid, 0..50);
        assert_eq!(plan.n_points(), 50 - 3 - 3);
        let plan = CoherencePlan::new(50, 1.0, &grid, 10..20);
        assert_eq!(plan.n_points(), 10);
        let plan = CoherencePlan::new(50, 1.0, &grid, 0..2);
        assert_eq!(plan.n_points(), 0);
        // A block wholly inside the cone still runs and reports no points.
        let w = vec![Complex64::new(1.0, 0.5); grid.scales.len() * 50];
        let mut scratch = vec![ZERO; plan.scratch_len()];
        plan.smoothed_power_into(&w, &mut [], &mut scratch);
        let c = plan.coherence(&w, &w, &[], &[], &mut scratch);
        assert_eq!((c.n_points, c.sum_r2), (0, 0.0));
        let empty = BandCoherence {
            sum_r2: 0.0,
            n_points: 0,
            sum_cos: 0.0,
            sum_sin: 0.0,
        };
        assert!(empty.mean_r2().is_nan() && empty.mean_phase().is_nan());
    }

    #[test]
    #[should_panic(expected = "smoothed power y has length 3")]
    fn wrong_power_length_panics() {
        let case = Case::new(200, 0.5, (2.0, 8.0), 12, 0..200);
        let w = vec![ZERO; case.grid.scales.len() * case.n];
        let px = vec![1.0; case.plan.power_len()];
        let mut scratch = vec![ZERO; case.plan.scratch_len()];
        let _ = case.plan.coherence(&w, &w, &px, &[1.0; 3], &mut scratch);
    }
}
