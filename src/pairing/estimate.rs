//! Estimated counts by sequential importance sampling, for blocks too large for any
//! exact method. Owns the estimator only; it must not be used for drawing re-pairings.

use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

use super::bits::{BitMatrix, count_common, nth_common};

/// Seed of the importance-sampling estimate: a count must not depend on the user seed.
const ESTIMATE_SEED: u64 = 0x5eed_c0de_0000_0001;

/// An estimated count: log10 of the mean importance weight and its relative standard
/// error.
pub(super) struct Estimate {
    pub(super) log10: f64,
    pub(super) rel_se: f64,
    pub(super) samples: usize,
}

/// Sequential importance sampling (Rasmussen 1994): build a matching row by row, each
/// time choosing uniformly among the still-free admissible partners; the product of the
/// numbers of choices is an unbiased estimate of the count. Returns ln(weight).
pub(super) fn sis_roles_sample(a: &BitMatrix, n: usize, rng: &mut ChaCha8Rng) -> f64 {
    let mut free = full_row(n, a.words());
    let mut lw = 0.0;
    for i in 0..n {
        let c = count_common(a.row(i), &free);
        if c == 0 {
            return f64::NEG_INFINITY;
        }
        let j = nth_common(a.row(i), &free, rng.random_range(0..c)).expect("c > 0");
        free[j / 64] &= !(1 << (j % 64));
        lw += (c as f64).ln();
    }
    lw
}

/// The same for perfect matchings of a graph: the lowest unmatched member picks
/// uniformly among its free admissible partners.
pub(super) fn sis_peers_sample(a: &BitMatrix, n: usize, rng: &mut ChaCha8Rng) -> f64 {
    let mut free = full_row(n, a.words());
    let mut lw = 0.0;
    for i in 0..n {
        if free[i / 64] >> (i % 64) & 1 == 0 {
            continue;
        }
        free[i / 64] &= !(1 << (i % 64));
        let c = count_common(a.row(i), &free);
        if c == 0 {
            return f64::NEG_INFINITY;
        }
        let j = nth_common(a.row(i), &free, rng.random_range(0..c)).expect("c > 0");
        free[j / 64] &= !(1 << (j % 64));
        lw += (c as f64).ln();
    }
    lw
}

fn full_row(n: usize, words: usize) -> Vec<u64> {
    let mut v = vec![0u64; words];
    for i in 0..n {
        v[i / 64] |= 1 << (i % 64);
    }
    v
}

/// Mean of the importance weights, in log space, with its relative standard error.
/// The number of samples shrinks for very large blocks to bound the time.
pub(super) fn sis_estimate(n: usize, sample: impl Fn(&mut ChaCha8Rng) -> f64 + Sync) -> Estimate {
    let samples = (20_000_000 / (n * n.div_ceil(64)).max(1)).clamp(2_000, 20_000);
    const BATCH: usize = 500;
    let lws: Vec<f64> = (0..samples.div_ceil(BATCH))
        .into_par_iter()
        .flat_map_iter(|b| {
            let mut rng = ChaCha8Rng::seed_from_u64(ESTIMATE_SEED);
            rng.set_stream(b as u64);
            let k = BATCH.min(samples - b * BATCH);
            (0..k).map(|_| sample(&mut rng)).collect::<Vec<_>>()
        })
        .collect();
    let max = lws.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if max == f64::NEG_INFINITY {
        return Estimate {
            log10: f64::NEG_INFINITY,
            rel_se: f64::INFINITY,
            samples,
        };
    }
    let s1: f64 = lws.iter().map(|&l| (l - max).exp()).sum::<f64>() / samples as f64;
    let s2: f64 = lws.iter().map(|&l| (2.0 * (l - max)).exp()).sum::<f64>() / samples as f64;
    let rel_var = ((s2 - s1 * s1) / (s1 * s1)).max(0.0) / samples as f64;
    Estimate {
        log10: (max + s1.ln()) / std::f64::consts::LN_10,
        rel_se: rel_var.sqrt(),
        samples,
    }
}

#[cfg(test)]
mod tests {
    use super::super::count::tests::j_minus_i;
    use super::super::count::to_bits;
    use super::super::exclusion::{CLUSTER_MAX, matchings_by_exclusions};
    use super::*;

    // Source: sequential importance sampling is unbiased; on J - I with n = 30 (exact
    // !30 from the A000166 recurrence) the estimate must lie within 5 standard errors.
    #[test]
    fn sis_estimate_brackets_exact_value() {
        let n = 30;
        let bits = to_bits(&j_minus_i(n));
        let Estimate { log10, rel_se, .. } = sis_estimate(n, |rng| sis_roles_sample(&bits, n, rng));
        let exact = 97_581_073_836_835_777_732_377_428_235_481f64;
        let ratio = 10f64.powf(log10) / exact;
        assert!(
            (ratio - 1.0).abs() < 5.0 * rel_se + 1e-12,
            "{ratio} ± {rel_se}"
        );
        let a: Vec<Vec<bool>> = (0..2 * n)
            .map(|i| (0..2 * n).map(|j| i != j && i / 2 != j / 2).collect())
            .collect();
        let bits = to_bits(&a);
        let Estimate { log10, rel_se, .. } =
            sis_estimate(2 * n, |rng| sis_peers_sample(&bits, 2 * n, rng));
        let exact = super::super::count::to_f64(&matchings_by_exclusions(&a, CLUSTER_MAX).unwrap());
        let ratio = 10f64.powf(log10) / exact;
        assert!(
            (ratio - 1.0).abs() < 5.0 * rel_se + 1e-12,
            "{ratio} ± {rel_se}"
        );
    }
}
