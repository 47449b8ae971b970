//! Morlet continuous wavelet transform by FFT (Torrence & Compo 1998, eqs. 1–6, Table 1).
//!
//! Owns the filter bank and FFT plans for one `(n_samples, dt, ω0, scales)` geometry; knows
//! nothing about coherence or smoothing.
//!
//! For a segment `x[0..n)` sampled every `dt`:
//!
//! 1. the segment mean is subtracted, then zeros are appended up to `N` samples (the zeros
//!    keep the circular FFT from wrapping one end of the segment into the other);
//! 2. `x̂_k = (1/N) Σ_t x_t e^{−2πikt/N}` (eq. 3);
//! 3. `W_t(s) = Σ_k x̂_k ψ̂(s ω_k) e^{iω_k t dt}` (eq. 4), with
//!    `ω_k = 2πk/(N dt)` for `k ≤ N/2` and `−2π(N−k)/(N dt)` otherwise (eq. 5), and
//!    `ψ̂(sω) = sqrt(2πs/dt) · π^{−1/4} · H(ω) · exp(−(sω − ω0)²/2)` (eq. 6 normalisation,
//!    Table 1 Morlet, `H` the Heaviside step with `H(0) = 0`), so that white noise of variance
//!    σ² has expected `|W|² = σ²` at every scale.
//!
//! Padded length: `N` is the smallest power of two `≥ n + p` with
//! `p = max(n, ⌈6·s_eff/dt⌉)` and `s_eff = min(s_max, (n−1)·dt/(2√2))` — the largest scale that
//! has any sample outside the cone of influence. A wrapped sample is then at least
//! `√2·s + 6·s` away from every point outside the cone, where the wavelet envelope
//! `exp(−t²/(2s²))` is below 10⁻¹¹.

use super::{COI_EFOLD, Complex64, Seconds, check_len};
use rustfft::{Fft, FftPlanner};
use std::sync::Arc;

/// Zero padding in scales (see the module docs).
pub const WRAP_GUARD_SCALES: f64 = 6.0;

/// The nonzero part of one scale's filter `ψ̂(sω_k)/N` (only positive frequencies survive
/// `H`, and the Gaussian underflows to exactly zero a few dozen bins away from its centre, so
/// storing the nonzero run gives the same numbers as the dense filter).
#[derive(Clone, Debug)]
struct Filter {
    first_bin: usize,
    gain: Vec<f64>,
}

/// Everything needed to transform many segments of one geometry; build once, share between
/// threads (`Send + Sync`), call `transform_into` with per-thread scratch.
#[derive(Clone)]
pub struct WaveletPlan {
    n: usize,
    padded: usize,
    forward: Arc<dyn Fft<f64>>,
    inverse: Arc<dyn Fft<f64>>,
    fft_scratch: usize,
    bank: Vec<Filter>,
}

impl std::fmt::Debug for WaveletPlan {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("WaveletPlan")
            .field("n_samples", &self.n)
            .field("padded_len", &self.padded)
            .field("n_scales", &self.bank.len())
            .finish()
    }
}

/// Padded FFT length for `n` samples and the given scales (rule in the module docs).
pub fn padded_len_for(n: usize, dt: Seconds, scales: &[Seconds]) -> usize {
    let s_max = scales.iter().copied().fold(0.0f64, f64::max);
    let s_cone = (n.saturating_sub(1)) as f64 * dt / (2.0 * COI_EFOLD);
    let guard = (WRAP_GUARD_SCALES * s_max.min(s_cone) / dt).ceil().max(0.0) as usize;
    (n + n.max(guard)).next_power_of_two()
}

impl WaveletPlan {
    /// # Panics
    /// If `n_samples < 2`, `dt` is not positive and finite, `omega0` is not positive, or any
    /// scale is not positive and finite: the caller validates these, so this is a bug.
    pub fn new(n_samples: usize, dt: Seconds, omega0: f64, scales: &[Seconds]) -> Self {
        assert!(
            n_samples >= 2,
            "WaveletPlan: need at least 2 samples, got {n_samples}"
        );
        assert!(
            dt.is_finite() && dt > 0.0,
            "WaveletPlan: dt must be positive, got {dt}"
        );
        assert!(
            omega0.is_finite() && omega0 > 0.0,
            "WaveletPlan: omega0 must be positive, got {omega0}"
        );
        assert!(
            scales.iter().all(|s| s.is_finite() && *s > 0.0),
            "WaveletPlan: scales must be positive and finite, got {scales:?}"
        );
        let padded = padded_len_for(n_samples, dt, scales);
        let mut planner = FftPlanner::<f64>::new();
        let forward = planner.plan_fft_forward(padded);
        let inverse = planner.plan_fft_inverse(padded);
        let fft_scratch = forward
            .get_inplace_scratch_len()
            .max(inverse.get_inplace_scratch_len());
        let norm = std::f64::consts::PI.powf(-0.25);
        let bank = scales
            .iter()
            .map(|&s| {
                let amp = (2.0 * std::f64::consts::PI * s / dt).sqrt() * norm / padded as f64;
                // Positive frequencies only: k = 1..=N/2 (k = 0 has H(0) = 0).
                let gains: Vec<f64> = (1..=padded / 2)
                    .map(|k| {
                        let omega = 2.0 * std::f64::consts::PI * k as f64 / (padded as f64 * dt);
                        let x = s * omega - omega0;
                        amp * (-0.5 * x * x).exp()
                    })
                    .collect();
                let first = gains.iter().position(|g| *g != 0.0).unwrap_or(0);
                let last = gains.iter().rposition(|g| *g != 0.0).map_or(0, |p| p + 1);
                Filter {
                    first_bin: first + 1,
                    gain: gains[first..last.max(first)].to_vec(),
                }
            })
            .collect();
        WaveletPlan {
            n: n_samples,
            padded,
            forward,
            inverse,
            fft_scratch,
            bank,
        }
    }

    pub fn n_samples(&self) -> usize {
        self.n
    }

    pub fn n_scales(&self) -> usize {
        self.bank.len()
    }

    /// FFT length after zero padding (rule in the module docs).
    pub fn padded_len(&self) -> usize {
        self.padded
    }

    /// Complex scratch `transform_into` needs: spectrum, work row and FFT workspace.
    pub fn scratch_len(&self) -> usize {
        2 * self.padded + self.fft_scratch
    }

    /// Workspace the forward FFT of [`Self::spectrum_into`] needs.
    pub fn fft_scratch_len(&self) -> usize {
        self.fft_scratch
    }

    /// Step 1–2 of the module docs: the mean-removed, zero-padded segment's DFT (unscaled;
    /// the `1/N` lives in the filter gains). Shared with the coarse-grid evaluation, which
    /// reads the transform only at a subset of instants.
    pub fn spectrum_into(
        &self,
        signal: &[f64],
        spectrum: &mut [Complex64],
        fft_scratch: &mut [Complex64],
    ) {
        let n = self.n;
        check_len("wavelet input signal", n, signal.len());
        check_len("wavelet spectrum", self.padded, spectrum.len());
        let mean = signal.iter().sum::<f64>() / n as f64;
        for (z, &x) in spectrum.iter_mut().zip(signal) {
            *z = Complex64::new(x - mean, 0.0);
        }
        spectrum[n..].fill(Complex64::new(0.0, 0.0));
        self.forward
            .process_with_scratch(spectrum, &mut fft_scratch[..self.fft_scratch]);
    }

    /// Scale `j`'s filter: the first nonzero bin and the gains `ψ̂(s ω_k)/N` from there on.
    pub fn filter(&self, j: usize) -> (usize, &[f64]) {
        let f = &self.bank[j];
        (f.first_bin, &f.gain)
    }

    /// `out[j*n + t] = W_t(s_j)`. The scratch content on entry does not matter and nothing is
    /// allocated, so one scratch per thread serves every call.
    pub fn transform_into(&self, signal: &[f64], out: &mut [Complex64], scratch: &mut [Complex64]) {
        let n = self.n;
        check_len("wavelet input signal", n, signal.len());
        check_len("wavelet output", self.bank.len() * n, out.len());
        check_len("wavelet scratch", self.scratch_len(), scratch.len());
        let (spectrum, rest) = scratch.split_at_mut(self.padded);
        let (work, fft_scratch) = rest.split_at_mut(self.padded);
        self.spectrum_into(signal, spectrum, fft_scratch);
        for (filter, row) in self.bank.iter().zip(out.chunks_exact_mut(n)) {
            work.fill(Complex64::new(0.0, 0.0));
            let bins = filter.first_bin..filter.first_bin + filter.gain.len();
            for ((w, z), g) in work[bins.clone()]
                .iter_mut()
                .zip(&spectrum[bins])
                .zip(&filter.gain)
            {
                *w = z * g;
            }
            self.inverse.process_with_scratch(work, fft_scratch);
            row.copy_from_slice(&work[..n]);
        }
    }

    /// Allocating convenience for tests and one-off use.
    pub fn transform(&self, signal: &[f64]) -> Vec<Complex64> {
        let mut out = vec![Complex64::new(0.0, 0.0); self.bank.len() * self.n];
        let mut scratch = vec![Complex64::new(0.0, 0.0); self.scratch_len()];
        self.transform_into(signal, &mut out, &mut scratch);
        out
    }
}

#[cfg(test)]
pub(crate) mod tests {
    use super::super::{band_scale_grid, smoothing::outside_coi};
    use super::*;
    use rand::{RngExt, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    /// Standard normal deviates by the Box–Muller transform (Box & Muller 1958).
    pub(crate) fn normal_series(seed: u64, n: usize) -> Vec<f64> {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        (0..n)
            .map(|_| {
                let u1: f64 = 1.0 - rng.random::<f64>();
                let u2: f64 = rng.random::<f64>();
                (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
            })
            .collect()
    }

    #[test]
    fn plan_is_send_and_sync() {
        fn check<T: Send + Sync>() {}
        check::<WaveletPlan>();
    }

    /// Padding rule from the module docs, worked by hand: n = 1500, s_max small → p = n,
    /// N = 4096; a huge scale is capped by the cone so N stays bounded.
    #[test]
    fn padding_rule_by_hand() {
        assert_eq!(padded_len_for(1500, 0.1, &[1.0, 2.0]), 4096);
        // s_eff = 1499·0.1/(2√2) = 52.998; 6·s_eff/dt = 3179.9 → p = 3180, n + p = 4680.
        assert_eq!(padded_len_for(1500, 0.1, &[1000.0]), 8192);
    }

    /// Torrence & Compo (1998) §3f: with the Fourier factor of Table 1, the Morlet power
    /// `|W|²` of a sinusoid peaks at the scale whose Fourier period is the sinusoid's period
    /// (that is how the factor is derived). Checked within one grid step.
    #[test]
    fn sine_power_peaks_at_its_period() {
        let dt = 0.25;
        let n = 2048;
        for period in [6.0, 13.0, 27.5] {
            let grid = band_scale_grid(period / 2.0, period * 2.0, 6.0, 24);
            let plan = WaveletPlan::new(n, dt, 6.0, &grid.scales);
            let x: Vec<f64> = (0..n)
                .map(|t| (2.0 * std::f64::consts::PI * t as f64 * dt / period).sin())
                .collect();
            let w = plan.transform(&x);
            let power: Vec<f64> = (0..grid.scales.len())
                .map(|j| {
                    let s = grid.scales[j];
                    let pts: Vec<f64> = (0..n)
                        .filter(|&t| outside_coi(t, n, dt, s))
                        .map(|t| w[j * n + t].norm_sqr())
                        .collect();
                    pts.iter().sum::<f64>() / pts.len() as f64
                })
                .collect();
            let best = (0..power.len())
                .max_by(|&a, &b| power[a].total_cmp(&power[b]))
                .unwrap();
            let steps = (grid.periods[best] / period).log2() * 24.0;
            assert!(
                steps.abs() <= 1.0,
                "period {period}: peak at {} ({steps} steps)",
                grid.periods[best]
            );
            // Away from the ends the transform of sin(ωt) is the positive-frequency half
            // (amplitude 1/2) times the filter of eq. 6 with Table 1's ψ̂0, evaluated by hand:
            // |W|² = (1/4)·(2πs/dt)·π^(−1/2)·exp(−(sω − ω0)²).
            let s = grid.scales[best];
            let omega = 2.0 * std::f64::consts::PI / period;
            let expect = 0.25 * 2.0 * std::f64::consts::PI * s / dt / std::f64::consts::PI.sqrt()
                * (-(s * omega - 6.0).powi(2)).exp();
            let mid = w[best * n + n / 2].norm_sqr();
            assert!(
                (mid / expect - 1.0).abs() < 1e-3,
                "period {period}: |W|² {mid} vs {expect}"
            );
        }
    }

    /// Torrence & Compo (1998) §3f, eq. 6: the normalisation makes the expected power of white
    /// noise of variance σ² equal σ² at every scale. Averaged over seeds and the samples at
    /// least 3·s from both ends (edge loss < 10⁻⁴ there). Tolerance 10% per scale, about three
    /// standard errors at the largest scale; 3% for the mean over scales.
    #[test]
    fn white_noise_power_is_flat() {
        let dt = 1.0;
        let n = 4096;
        let grid = band_scale_grid(4.0, 64.0, 6.0, 4);
        let plan = WaveletPlan::new(n, dt, 6.0, &grid.scales);
        let seeds = 32;
        let mut mean_power = vec![0.0; grid.scales.len()];
        for seed in 0..seeds {
            let x = normal_series(1000 + seed, n);
            let w = plan.transform(&x);
            for (j, acc) in mean_power.iter_mut().enumerate() {
                let edge = (3.0 * grid.scales[j] / dt).ceil() as usize;
                let pts = &w[j * n + edge..(j + 1) * n - edge];
                *acc +=
                    pts.iter().map(|z| z.norm_sqr()).sum::<f64>() / pts.len() as f64 / seeds as f64;
            }
        }
        for (p, m) in grid.periods.iter().zip(&mean_power) {
            assert!((m - 1.0).abs() < 0.10, "period {p}: mean power {m}");
        }
        let overall = mean_power.iter().sum::<f64>() / mean_power.len() as f64;
        assert!((overall - 1.0).abs() < 0.03, "mean over scales {overall}");
    }

    /// Scratch content must not leak into results: same input, garbage scratch, same bits.
    #[test]
    fn transform_ignores_scratch_content() {
        let n = 300;
        let grid = band_scale_grid(3.0, 20.0, 6.0, 8);
        let plan = WaveletPlan::new(n, 0.5, 6.0, &grid.scales);
        let x = normal_series(7, n);
        let mut out_a = vec![Complex64::new(0.0, 0.0); plan.n_scales() * n];
        let mut out_b = vec![Complex64::new(9.0, 9.0); plan.n_scales() * n];
        let mut scratch = vec![Complex64::new(0.0, 0.0); plan.scratch_len()];
        plan.transform_into(&x, &mut out_a, &mut scratch);
        scratch.fill(Complex64::new(f64::NAN, 1e300));
        plan.transform_into(&x, &mut out_b, &mut scratch);
        assert!(out_a.iter().zip(&out_b).all(|(a, b)| a == b));
    }

    /// The transform of a constant is zero (the mean is removed first, module docs step 1).
    #[test]
    fn constant_signal_transforms_to_zero() {
        let plan = WaveletPlan::new(64, 1.0, 6.0, &[2.0, 4.0]);
        let w = plan.transform(&[3.5; 64]);
        assert!(w.iter().all(|z| z.norm() < 1e-12));
    }

    #[test]
    #[should_panic(expected = "wavelet input signal has length 10, expected 64")]
    fn wrong_signal_length_panics() {
        let plan = WaveletPlan::new(64, 1.0, 6.0, &[2.0]);
        let _ = plan.transform(&[0.0; 10]);
    }
}
