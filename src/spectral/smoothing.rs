//! The definition of the WTC smoothing operator `S` and of the cone of influence, in one
//! place so that the FFT path and the direct oracle smooth exactly the same thing.
//!
//! `S = scale smoothing ∘ time smoothing` (Torrence & Webster 1999; Grinsted et al. 2004):
//!
//! * time smoothing at scale `s`: weights `g(k) ∝ exp(−(k·dt)²/(2s²))` over lags
//!   `|k| ≤ m = min(n − 1, ⌈9·s/dt⌉)`, normalised to unit sum over those lags; the series is
//!   taken as zero outside the segment `[0, n)` and the weights are *not* renormalised near the
//!   segment ends. (Lags past `9s` carry less than 3·10⁻¹⁸ of the peak weight, so that cut
//!   changes nothing at double precision. Lags past `n − 1` never meet a sample, but the unit
//!   sum is taken over the lags kept: when a segment is shorter than about 9 of its largest
//!   scale on each side, the weights are those of the whole Gaussian divided by the mass within
//!   `n − 1` lags, e.g. 0.99 for a 128 s segment at a 50 s scale. The coarse grid keeps the same
//!   normalisation, so both grids and real and pseudo pairs agree.)
//! * scale smoothing: a boxcar 0.6 octave wide (the Morlet decorrelation length δj0 = 0.60,
//!   Torrence & Compo 1998, Table 2) centred on the scale index. Each grid scale stands for a
//!   cell one grid step wide centred on it; its weight is the length of that cell's overlap
//!   with `[−h, h]`, `h = 0.3·spo` grid steps, and the weights are normalised to unit sum. At 12
//!   scales per octave this gives weights `0.1, 1, 1, 1, 1, 1, 1, 1, 0.1` (÷ 7.2).
//!
//! This file must not do any FFT work or allocation beyond building small kernels.

use super::{COI_EFOLD, Seconds};
use std::ops::Range;

/// Width of the scale boxcar in octaves (Torrence & Compo 1998, Table 2, δj0 for Morlet).
pub const SCALE_BOXCAR_OCTAVES: f64 = 0.6;

/// Time-smoothing Gaussian cut-off in units of the scale (see the module docs).
pub const GAUSS_CUTOFF_SCALES: f64 = 9.0;

/// Boxcar weights for scale offsets `−h..=h` (length `2h + 1`), unit sum.
pub fn scale_boxcar(scales_per_octave: usize) -> Vec<f64> {
    assert!(
        scales_per_octave > 0,
        "scale_boxcar: scales_per_octave must be >= 1"
    );
    // 0.3·spo written as 3·spo/10 so the common band widths are exact in binary.
    let half = (3 * scales_per_octave) as f64 / 10.0;
    let overlap = |k: f64| ((k + 0.5).min(half) - (k - 0.5).max(-half)).max(0.0);
    let mut reach = 0usize;
    while overlap((reach + 1) as f64) > 0.0 {
        reach += 1;
    }
    let raw: Vec<f64> = (-(reach as i64)..=reach as i64)
        .map(|k| overlap(k as f64))
        .collect();
    let total: f64 = raw.iter().sum();
    raw.iter().map(|w| w / total).collect()
}

/// Half-support of the scale boxcar in grid steps: the halo a band needs on each side.
pub fn scale_halo(scales_per_octave: usize) -> usize {
    (scale_boxcar(scales_per_octave).len() - 1) / 2
}

/// Largest time-smoothing lag (samples) at `scale` for a segment of `n` samples.
pub fn gauss_half_width(scale: Seconds, dt: Seconds, n: usize) -> usize {
    let cut = (GAUSS_CUTOFF_SCALES * scale / dt).ceil();
    let cut = if cut.is_finite() && cut >= 0.0 {
        cut as usize
    } else {
        usize::MAX
    };
    cut.min(n.saturating_sub(1))
}

/// One-sided time-smoothing weights `g(0..=m)` at `scale`, normalised so that
/// `g(0) + 2·Σ_{k≥1} g(k) = 1`.
pub fn gauss_kernel(scale: Seconds, dt: Seconds, n: usize) -> Vec<f64> {
    let m = gauss_half_width(scale, dt, n);
    let raw: Vec<f64> = (0..=m)
        .map(|k| {
            let x = k as f64 * dt / scale;
            (-0.5 * x * x).exp()
        })
        .collect();
    let total = raw[0] + 2.0 * raw[1..].iter().sum::<f64>();
    raw.iter().map(|g| g / total).collect()
}

/// Whether sample `t` of an `n`-sample segment lies outside the cone of influence at `scale`:
/// at least one e-folding time (`sqrt(2)·s`, Torrence & Compo 1998 §3g) from both segment
/// ends, measured between sample instants: `t·dt ≥ √2·s` and `(n−1−t)·dt ≥ √2·s`.
pub fn outside_coi(t: usize, n: usize, dt: Seconds, scale: Seconds) -> bool {
    let reach = COI_EFOLD * scale;
    t < n && (t as f64) * dt >= reach && ((n - 1 - t) as f64) * dt >= reach
}

/// The samples of `window` outside the cone of influence at `scale` (a contiguous range,
/// empty when none).
pub fn coi_range(window: &Range<usize>, n: usize, dt: Seconds, scale: Seconds) -> Range<usize> {
    let mut valid = window.clone().filter(|&t| outside_coi(t, n, dt, scale));
    match valid.next() {
        None => 0..0,
        Some(first) => {
            let last = valid.next_back().unwrap_or(first);
            first..last + 1
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Boxcar of 0.6 octave at 12 per octave: 7.2 grid steps, cells at ±4 overlap by 0.1
    /// (worked by hand from the rule in the module docs).
    #[test]
    fn boxcar_weights_by_hand() {
        let w = scale_boxcar(12);
        assert_eq!(w.len(), 9);
        let expect = [0.1, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 0.1].map(|v| v / 7.2);
        for (a, b) in w.iter().zip(expect) {
            assert!((a - b).abs() < 1e-15, "{w:?}");
        }
        // 5 per octave: half-width 1.5 steps falls exactly on a cell edge, so 3 full cells.
        let w5 = scale_boxcar(5);
        assert_eq!(w5.len(), 3);
        assert!(w5.iter().all(|v| (v - 1.0 / 3.0).abs() < 1e-15));
        // 1 per octave: the boxcar is narrower than one step, no neighbours.
        assert_eq!(scale_boxcar(1), vec![1.0]);
        assert_eq!(scale_halo(10), 3); // half 3.0: cells ±3 overlap by 0.5
    }

    /// Unit-sum Gaussian and the cut at 9 scales or the segment length.
    #[test]
    fn gauss_kernel_unit_sum_and_cut() {
        let g = gauss_kernel(2.0, 0.5, 1000);
        assert_eq!(g.len(), 37); // ⌈9·2/0.5⌉ = 36 lags
        let total = g[0] + 2.0 * g[1..].iter().sum::<f64>();
        assert!((total - 1.0).abs() < 1e-15);
        // Ratio of neighbouring weights is exp(−(2k+1)·dt²/(2s²)) (from the Gaussian).
        assert!((g[1] / g[0] - (-0.5f64 * 0.25 * 0.25).exp()).abs() < 1e-15);
        assert_eq!(gauss_kernel(100.0, 0.1, 50).len(), 50);
    }

    /// COI rule: √2·s from both ends (Torrence & Compo 1998, Table 1 e-folding time).
    #[test]
    fn coi_range_by_hand() {
        // s = 1 s, dt = 0.5 s: need t·0.5 ≥ 1.414 → t ≥ 3; (n−1−t)·0.5 ≥ 1.414 → t ≤ n − 4.
        assert_eq!(coi_range(&(0..20), 20, 0.5, 1.0), 3..17);
        assert_eq!(coi_range(&(5..10), 20, 0.5, 1.0), 5..10);
        assert_eq!(coi_range(&(0..5), 6, 0.5, 1.0), 0..0);
    }
}
