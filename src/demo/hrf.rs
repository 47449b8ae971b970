//! The canonical double-gamma haemodynamic response and the block-locked response it makes.
//!
//! Owns the response shape and its convolution with a block design; it knows nothing about
//! members, channels or files.
//!
//! The shape is the usual canonical difference of two gamma densities (Friston et al. 1998,
//! NeuroImage 7:30–40; the gamma-variate modelling of Glover 1999, NeuroImage 9:416–429):
//! h(t) = g(t; 6, 1) − g(t; 16, 1) / 6, with g(t; k, θ) = t^(k−1) e^(−t/θ) / (Γ(k) θ^k).
//! Its positive lobe peaks near the mode of the first gamma, (k−1)θ = 5 s, and its undershoot
//! bottoms out a little after the mode of the second, 15 s.

/// Shape, scale and weight of the two gamma lobes.
const PEAK_SHAPE: i32 = 6;
const UNDERSHOOT_SHAPE: i32 = 16;
const UNDERSHOOT_RATIO: f64 = 1.0 / 6.0;

/// Length of the sampled response; the canonical response is negligible (< 2e-4) beyond 32 s.
pub const HRF_LENGTH_S: f64 = 32.0;

/// Γ(k) = (k − 1)! for a positive integer shape, exact in f64 for the shapes used here.
fn gamma_of_integer(k: i32) -> f64 {
    (1..k).map(f64::from).product()
}

/// The gamma density with integer shape `k` and unit scale.
fn gamma_density(t: f64, k: i32) -> f64 {
    if t <= 0.0 {
        return 0.0;
    }
    t.powi(k - 1) * (-t).exp() / gamma_of_integer(k)
}

/// The canonical response at `t` seconds after a unit impulse; its integral over t ≥ 0 is
/// 1 − 1/6 = 5/6.
pub fn canonical(t: f64) -> f64 {
    gamma_density(t, PEAK_SHAPE) - UNDERSHOOT_RATIO * gamma_density(t, UNDERSHOOT_SHAPE)
}

/// The response sampled at `sampling_hz`, scaled so that a sustained unit input settles at 1:
/// a block's plateau then equals the amplitude given to its condition.
pub fn sampled_kernel(sampling_hz: f64) -> Vec<f64> {
    let n = (HRF_LENGTH_S * sampling_hz).ceil() as usize + 1;
    let raw: Vec<f64> = (0..n).map(|i| canonical(i as f64 / sampling_hz)).collect();
    let sum: f64 = raw.iter().sum();
    raw.into_iter().map(|v| v / sum).collect()
}

/// Causal convolution of `input` with `kernel`, truncated to the input length.
pub fn convolve(input: &[f64], kernel: &[f64]) -> Vec<f64> {
    let mut out = vec![0.0; input.len()];
    for (i, &x) in input.iter().enumerate() {
        if x == 0.0 {
            continue;
        }
        for (j, &k) in kernel.iter().enumerate() {
            match out.get_mut(i + j) {
                Some(o) => *o += x * k,
                None => break,
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use statrs::distribution::{Continuous, Gamma};

    #[test]
    fn matches_the_gamma_densities_of_a_reference_library() {
        // statrs' Gamma(shape, rate) density; with rate 1 it is the unit-scale density.
        let first = Gamma::new(6.0, 1.0).unwrap();
        let second = Gamma::new(16.0, 1.0).unwrap();
        for t in [0.5, 1.0, 2.5, 5.0, 7.5, 10.0, 15.0, 20.0, 30.0] {
            let reference = first.pdf(t) - second.pdf(t) / 6.0;
            assert!((canonical(t) - reference).abs() < 1e-12, "t = {t}");
        }
    }

    #[test]
    fn matches_values_computed_with_scipy() {
        // scipy.stats.gamma.pdf(t, 6) - scipy.stats.gamma.pdf(t, 16) / 6 (scipy 1.17).
        let reference = [
            (1.0, 0.0030656620097151326),
            (5.0, 0.17544116219546385),
            (10.0, 0.03204692986362342),
            (15.0, -0.015136856322163364),
            (20.0, -0.008553178158694663),
        ];
        for (t, value) in reference {
            assert!((canonical(t) - value).abs() < 1e-14, "t = {t}");
        }
    }

    #[test]
    fn peaks_near_five_seconds_and_undershoots_near_fifteen() {
        // Reference extrema found with scipy.optimize.minimize_scalar on the same expression:
        // peak at 4.99851 s, undershoot minimum at 15.74879 s. The gamma modes (k−1)θ give the
        // round figures of 5 s and 15 s that the canonical form is known by.
        let step = 0.001;
        let grid: Vec<(f64, f64)> = (0..=30_000)
            .map(|i| {
                let t = i as f64 * step;
                (t, canonical(t))
            })
            .collect();
        let peak = grid
            .iter()
            .copied()
            .fold((0.0, f64::MIN), |a, b| if b.1 > a.1 { b } else { a });
        let dip = grid
            .iter()
            .copied()
            .fold((0.0, f64::MAX), |a, b| if b.1 < a.1 { b } else { a });
        assert!((peak.0 - 4.99851).abs() <= step, "peak at {}", peak.0);
        assert!((dip.0 - 15.74879).abs() <= step, "undershoot at {}", dip.0);
        assert!((peak.0 - 5.0).abs() < 0.1 && (dip.0 - 15.0).abs() < 1.0);
    }

    #[test]
    fn a_sustained_input_settles_at_its_amplitude() {
        for hz in [1.0, 4.0, 10.0] {
            let kernel = sampled_kernel(hz);
            let n = (100.0 * hz) as usize;
            let out = convolve(&vec![0.7; n], &kernel);
            assert!((out[n - 1] - 0.7).abs() < 1e-12, "{hz} Hz: {}", out[n - 1]);
            // Half a second after the onset almost nothing has happened yet.
            assert!(out[(0.5 * hz) as usize] < 0.01);
        }
    }

    #[test]
    fn convolution_of_an_impulse_returns_the_kernel() {
        let kernel = [0.5, 0.25, 0.125];
        let out = convolve(&[0.0, 2.0, 0.0, 0.0, 0.0], &kernel);
        assert_eq!(out, vec![0.0, 1.0, 0.5, 0.25, 0.0]);
    }
}
