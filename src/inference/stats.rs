//! Numeric helpers shared by the inference procedures: mean and spread, percentile, tie-tolerant
//! comparison and the seeded random streams. Owns no test logic of its own.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

/// Random-stream domains: each consumer of randomness owns one, so that adding a consumer
/// never shifts another's numbers.
pub(crate) const STREAM_BOOTSTRAP: u64 = 1;
pub(crate) const STREAM_SIGN_FLIPS: u64 = 2;

/// A generator that is a pure function of (seed, domain, index), never of thread order.
pub(crate) fn stream(seed: u64, domain: u64, index: u64) -> ChaCha8Rng {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream((domain << 48) ^ index);
    rng
}

/// Relative width within which two statistics count as tied. Sums of the same values in a
/// different order differ by rounding only; counting such near-ties as "at least as
/// extreme" keeps permutation p-values conservative instead of arbitrarily small.
pub(crate) const TIE_REL: f64 = 1e-10;

/// `x >= threshold`, counting values within `TIE_REL * scale` below as ties. NaN is never
/// at least anything.
pub(crate) fn at_least(x: f64, threshold: f64, scale: f64) -> bool {
    x >= threshold - TIE_REL * scale
}

pub(crate) fn mean(xs: &[f64]) -> f64 {
    if xs.is_empty() {
        return f64::NAN;
    }
    xs.iter().sum::<f64>() / xs.len() as f64
}

/// Sample standard deviation (denominator n − 1), two-pass for accuracy.
pub(crate) fn sample_sd(xs: &[f64], mean: f64) -> f64 {
    if xs.len() < 2 {
        return f64::NAN;
    }
    let ss: f64 = xs.iter().map(|x| (x - mean) * (x - mean)).sum();
    (ss / (xs.len() - 1) as f64).sqrt()
}

/// Quantile of sorted data by linear interpolation between order statistics
/// (Hyndman & Fan 1996, definition 7), the default of general-purpose numeric libraries.
pub(crate) fn quantile_sorted(sorted: &[f64], q: f64) -> f64 {
    match sorted.len() {
        0 => f64::NAN,
        1 => sorted[0],
        n => {
            let h = (n - 1) as f64 * q.clamp(0.0, 1.0);
            let lo = h.floor() as usize;
            let hi = (lo + 1).min(n - 1);
            sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::RngExt;

    #[test]
    fn quantile_matches_hand_computed_definition_7() {
        // Definition 7: h = (n-1)q; for [1,2,3,4] and q = 0.25, h = 0.75 -> 1.75.
        let x = [1.0, 2.0, 3.0, 4.0];
        assert_eq!(quantile_sorted(&x, 0.25), 1.75);
        assert_eq!(quantile_sorted(&x, 0.0), 1.0);
        assert_eq!(quantile_sorted(&x, 1.0), 4.0);
        assert_eq!(quantile_sorted(&x, 0.5), 2.5);
        assert!(quantile_sorted(&[], 0.5).is_nan());
    }

    #[test]
    fn sd_matches_textbook_example() {
        // 2,4,4,4,5,5,7,9: mean 5, sum of squares 32, sample variance 32/7.
        let x = [2.0, 4.0, 4.0, 4.0, 5.0, 5.0, 7.0, 9.0];
        let m = mean(&x);
        assert_eq!(m, 5.0);
        assert!((sample_sd(&x, m) - (32.0f64 / 7.0).sqrt()).abs() < 1e-15);
    }

    #[test]
    fn streams_differ_by_domain_and_index_and_repeat_by_seed() {
        let a: u64 = stream(7, STREAM_BOOTSTRAP, 3).random();
        let b: u64 = stream(7, STREAM_BOOTSTRAP, 3).random();
        let c: u64 = stream(7, STREAM_BOOTSTRAP, 4).random();
        let d: u64 = stream(7, STREAM_SIGN_FLIPS, 3).random();
        assert_eq!(a, b);
        assert_ne!(a, c);
        assert_ne!(a, d);
    }

    #[test]
    fn ties_are_counted_within_tolerance_only() {
        assert!(at_least(1.0 - 1e-14, 1.0, 1.0));
        assert!(!at_least(1.0 - 1e-6, 1.0, 1.0));
        assert!(!at_least(f64::NAN, 0.0, 1.0));
    }
}
