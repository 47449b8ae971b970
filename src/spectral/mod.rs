//! Pure-numeric spectral core: the Morlet continuous wavelet transform, wavelet transform
//! coherence (WTC) over a period band, and Pearson correlation with its Fisher z transform.
//!
//! This module owns numbers only. It must not read or write files, print, look at
//! configuration, or know about dyads, channels, blocks or permutations; callers hand it
//! sample slices and receive sums that they can add up across blocks.
//!
//! Sources: Torrence & Compo (1998), "A practical guide to wavelet analysis", BAMS 79:61–78
//! (transform, normalisation, Fourier factor, cone of influence); Torrence & Webster (1999),
//! J. Climate 12:2679–2690 (smoothing for coherence); Grinsted, Moore & Jevrejeva (2004),
//! Nonlin. Processes Geophys. 11:561–566 (WTC definition).

pub mod coarse;
pub mod coherence;
pub mod correlation;
pub mod morlet;
pub mod smoothing;

pub use rustfft::num_complex::Complex64;

/// Time in seconds; scales and Fourier periods are both expressed in seconds.
pub type Seconds = f64;

/// E-folding time of the Morlet wavelet's power per unit scale, `sqrt(2)`, which sets the
/// cone of influence (Torrence & Compo 1998, Table 1).
pub const COI_EFOLD: f64 = std::f64::consts::SQRT_2;

/// Relative slack when deciding whether a grid period still lies inside `max_period`, so that
/// a band edge given as an exact octave multiple of `min_period` is not lost to rounding.
pub const BAND_EDGE_SLACK: f64 = 1e-12;

/// Ratio of Fourier period to scale for the Morlet wavelet, `4π / (ω0 + sqrt(2 + ω0²))`
/// (Torrence & Compo 1998, Table 1; 1.033 for ω0 = 6). Periods are what users think in,
/// scales are what the transform needs.
pub fn fourier_factor(omega0: f64) -> f64 {
    4.0 * std::f64::consts::PI / (omega0 + (2.0 + omega0 * omega0).sqrt())
}

/// The scales a band analysis needs: the band itself plus a halo on each side so that the
/// scale smoothing of every band scale sees its full boxcar.
#[derive(Clone, Debug, PartialEq)]
pub struct ScaleGrid {
    /// Wavelet scales in seconds, ascending.
    pub scales: Vec<Seconds>,
    /// Fourier periods of `scales`, seconds.
    pub periods: Vec<Seconds>,
    /// Indices (into `scales`) of the scales whose period lies in the requested band.
    pub band: std::ops::Range<usize>,
    /// Grid density; also fixes the width of the scale boxcar in grid steps.
    pub scales_per_octave: usize,
}

impl ScaleGrid {
    /// Number of grid scales on each side of the band that exist only to feed the smoothing.
    pub fn halo(&self) -> usize {
        self.band.start
    }

    /// Panics unless the band has `halo` smoothing scales on both sides, as grids from
    /// [`band_scale_grid`] do; `who` names the caller in the message.
    #[track_caller]
    pub(crate) fn assert_halo(&self, halo: usize, who: &str) {
        check_len("grid periods", self.scales.len(), self.periods.len());
        assert!(
            self.band.start >= halo
                && self.band.start < self.band.end
                && self.band.end + halo <= self.scales.len(),
            "{who}: band {:?} of {} scales lacks the {halo}-scale halo",
            self.band,
            self.scales.len()
        );
    }
}

/// Build the grid for the period band `[min_period, max_period]`.
///
/// Periods are `min_period · 2^((i − h)/spo)` for `i = 0..n_band + 2h`, so the first band
/// scale has period exactly `min_period`; band scales are those with period
/// `≤ max_period · (1 + BAND_EDGE_SLACK)`; `h = smoothing::scale_halo(spo)` is the boxcar's
/// half-support in grid steps (0.6 octave boxcar, Torrence & Webster 1999). Scales are
/// `period / fourier_factor(omega0)`. `2^x` is evaluated with `powf` so that other
/// implementations using the C library `pow` land on the same grid.
///
/// # Panics
/// On non-finite or non-positive periods, `max_period < min_period`, non-positive `omega0`
/// or `scales_per_octave == 0`: these are validated upstream, so reaching here is a bug.
pub fn band_scale_grid(
    min_period: Seconds,
    max_period: Seconds,
    omega0: f64,
    scales_per_octave: usize,
) -> ScaleGrid {
    assert!(
        min_period.is_finite() && min_period > 0.0,
        "band_scale_grid: min_period must be positive and finite, got {min_period}"
    );
    assert!(
        max_period.is_finite() && max_period >= min_period,
        "band_scale_grid: max_period must be finite and >= min_period ({min_period}), got {max_period}"
    );
    assert!(
        omega0.is_finite() && omega0 > 0.0,
        "band_scale_grid: omega0 must be positive and finite, got {omega0}"
    );
    assert!(
        scales_per_octave > 0,
        "band_scale_grid: scales_per_octave must be at least 1"
    );
    let spo = scales_per_octave as f64;
    let period_at = |steps: f64| min_period * 2f64.powf(steps / spo);
    let limit = max_period * (1.0 + BAND_EDGE_SLACK);
    let mut n_band = 1usize;
    while period_at(n_band as f64) <= limit {
        n_band += 1;
    }
    let halo = smoothing::scale_halo(scales_per_octave);
    let factor = fourier_factor(omega0);
    let periods: Vec<Seconds> = (0..n_band + 2 * halo)
        .map(|i| period_at(i as f64 - halo as f64))
        .collect();
    let scales = periods.iter().map(|p| p / factor).collect();
    ScaleGrid {
        scales,
        periods,
        band: halo..halo + n_band,
        scales_per_octave,
    }
}

/// Panic for a slice of the wrong length. Kept out of line so the checks cost nothing in the
/// hot loops; a wrong length is always a caller bug, never a data condition.
#[cold]
#[inline(never)]
#[track_caller]
pub(crate) fn length_mismatch(what: &str, expected: usize, actual: usize) -> ! {
    panic!("spectral: {what} has length {actual}, expected {expected}");
}

#[inline]
#[track_caller]
pub(crate) fn check_len(what: &str, expected: usize, actual: usize) {
    if expected != actual {
        length_mismatch(what, expected, actual);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Torrence & Compo (1998), Table 1: Fourier period = 1.033 s for ω0 = 6.
    #[test]
    fn fourier_factor_matches_published_table() {
        let f = fourier_factor(6.0);
        assert!((f - 1.033).abs() < 5e-4, "fourier factor {f}");
        // Closed form from the same table, evaluated by hand: 4π/(6+sqrt(38)).
        let by_hand = 4.0 * std::f64::consts::PI / (6.0 + 38f64.sqrt());
        assert_eq!(f, by_hand);
    }

    /// Torrence & Compo (1998), Table 1: e-folding time of the Morlet wavelet is sqrt(2)·s.
    #[test]
    fn efolding_is_sqrt_two() {
        assert!((COI_EFOLD * COI_EFOLD - 2.0).abs() < 1e-15);
    }

    /// The grid is anchored at min_period, spaced 1/spo octave, covers the band inclusive of
    /// an exact octave end, and carries the boxcar halo on each side (0.6 octave boxcar,
    /// Torrence & Webster 1999: half-support 4 steps at 12 per octave, by hand).
    #[test]
    fn grid_anchoring_and_band() {
        let g = band_scale_grid(2.0, 32.0, 6.0, 12);
        assert_eq!(g.halo(), 4);
        assert_eq!(g.periods[g.band.start], 2.0);
        // 2 s .. 32 s is four octaves: 4·12 + 1 band scales.
        assert_eq!(g.band.len(), 49);
        assert_eq!(g.scales.len(), 49 + 8);
        assert!((g.periods[g.band.end - 1] - 32.0).abs() < 1e-12);
        for w in g.periods.windows(2) {
            assert!((w[1] / w[0] - 2f64.powf(1.0 / 12.0)).abs() < 1e-14);
        }
        for (s, p) in g.scales.iter().zip(&g.periods) {
            assert!((p / s - fourier_factor(6.0)).abs() < 1e-14);
        }
        // A band narrower than one step still holds its lower edge.
        let narrow = band_scale_grid(5.0, 5.1, 6.0, 12);
        assert_eq!(narrow.band.len(), 1);
    }

    #[test]
    #[should_panic(expected = "expected 4")]
    fn length_check_names_both_lengths() {
        check_len("test slice", 4, 3);
    }
}
