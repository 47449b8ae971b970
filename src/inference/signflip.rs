//! Sign-flip permutation of per-dyad differences: under H0 each dyad's difference is
//! symmetric about zero, so flipping its sign gives an equally likely sample (Fisher 1935;
//! Nichols & Holmes 2002, one-sample case). The flips are shared by all cells of a family
//! so that the max-statistic adjustment can use them. Owns the flip sets and the t of a
//! flipped sample; the adjustment itself lives in `correction`.

use rand::RngExt;

use super::stats::{STREAM_SIGN_FLIPS, stream};

/// A set of sign patterns over the dyads (bit set = sign negated).
#[derive(Debug, Clone)]
pub(crate) struct FlipSet {
    words: usize,
    bits: Vec<u64>,
    len: usize,
    /// The set is the full enumeration over its dyads, identity included.
    pub exact: bool,
}

impl FlipSet {
    /// `count` patterns with every sign drawn independently, from the stream of (seed,
    /// sign flips, `index`).
    pub fn random(n_dyads: usize, count: usize, seed: u64, index: u64) -> Self {
        let words = n_dyads.div_ceil(64).max(1);
        let mut rng = stream(seed, STREAM_SIGN_FLIPS, index);
        let bits = (0..count * words).map(|_| rng.random::<u64>()).collect();
        FlipSet {
            words,
            bits,
            len: count,
            exact: false,
        }
    }

    /// All 2^|universe| patterns over the listed dyads (the others never flipped).
    pub fn enumerate(n_dyads: usize, universe: &[usize]) -> Self {
        assert!(universe.len() < 32, "exact sign-flip enumeration is capped");
        let words = n_dyads.div_ceil(64).max(1);
        let len = 1usize << universe.len();
        let mut bits = vec![0u64; len * words];
        for k in 0..len {
            for (j, &dyad) in universe.iter().enumerate() {
                if (k >> j) & 1 == 1 {
                    bits[k * words + dyad / 64] |= 1 << (dyad % 64);
                }
            }
        }
        FlipSet {
            words,
            bits,
            len,
            exact: true,
        }
    }

    pub fn len(&self) -> usize {
        self.len
    }

    fn negated(&self, k: usize, dyad: usize) -> bool {
        (self.bits[k * self.words + dyad / 64] >> (dyad % 64)) & 1 == 1
    }
}

/// One cell's per-dyad differences, ready for flipping.
#[derive(Debug, Clone)]
pub(crate) struct FlipSample {
    dyads: Vec<usize>,
    values: Vec<f64>,
    sum_sq: f64,
}

impl FlipSample {
    /// From (dyad index, difference) pairs.
    pub fn new(items: &[(usize, f64)]) -> Self {
        FlipSample {
            dyads: items.iter().map(|x| x.0).collect(),
            values: items.iter().map(|x| x.1).collect(),
            sum_sq: items.iter().map(|x| x.1 * x.1).sum(),
        }
    }

    /// t of a sample with signed sum `s`: the spread follows from Σ d², which no flip
    /// changes, so each flip costs one pass of additions.
    fn t_from_sum(&self, s: f64) -> f64 {
        let n = self.values.len() as f64;
        let m = s / n;
        let var = (self.sum_sq - s * m) / (n - 1.0);
        if var > 1e-14 * self.sum_sq / n {
            m / (var / n).sqrt()
        } else if m == 0.0 {
            f64::NAN
        } else {
            m.signum() * f64::INFINITY
        }
    }

    /// Unflipped t, computed the way the flipped ones are so that the identity flip ties
    /// with it exactly.
    pub fn observed_t(&self) -> f64 {
        self.t_from_sum(self.values.iter().sum())
    }

    /// t for every pattern of the set, in set order.
    pub fn null_t(&self, set: &FlipSet) -> Vec<f64> {
        (0..set.len())
            .map(|k| {
                let s: f64 = self
                    .dyads
                    .iter()
                    .zip(&self.values)
                    .map(|(&dy, &v)| if set.negated(k, dy) { -v } else { v })
                    .sum();
                self.t_from_sum(s)
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::super::correction::permutation_p;
    use super::*;

    #[test]
    fn exact_enumeration_gives_the_textbook_count() {
        // Three positive differences: of the 2^3 patterns only the identity reaches the
        // observed t, so the exact one-sided p is 1/8.
        let sample = FlipSample::new(&[(0, 1.0), (2, 2.0), (3, 3.5)]);
        let set = FlipSet::enumerate(4, &[0, 2, 3]);
        assert_eq!(set.len(), 8);
        let null = sample.null_t(&set);
        let t = sample.observed_t();
        assert_eq!(permutation_p(t, &null, true, 1.0 + t.abs()), 1.0 / 8.0);
    }

    #[test]
    fn flipped_t_matches_direct_formula() {
        let items = [(0, 0.4), (1, -0.1), (2, 0.25), (3, 0.3)];
        let sample = FlipSample::new(&items);
        let set = FlipSet::random(4, 16, 5, 0);
        let null = sample.null_t(&set);
        for (k, t) in null.iter().enumerate() {
            let x: Vec<f64> = items
                .iter()
                .map(|&(d, v)| if set.negated(k, d) { -v } else { v })
                .collect();
            let m = x.iter().sum::<f64>() / 4.0;
            let sd = (x.iter().map(|v| (v - m) * (v - m)).sum::<f64>() / 3.0).sqrt();
            assert!((t - m / (sd / 2.0)).abs() < 1e-9, "{t}");
        }
    }

    #[test]
    fn random_sets_repeat_by_seed_and_differ_by_index() {
        let a = FlipSet::random(70, 3, 9, 0);
        let b = FlipSet::random(70, 3, 9, 0);
        let c = FlipSet::random(70, 3, 9, 1);
        assert_eq!(a.bits, b.bits);
        assert_ne!(a.bits, c.bits);
        assert_eq!(a.words, 2);
    }
}
