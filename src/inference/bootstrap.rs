//! Percentile bootstrap interval (Efron & Tibshirani 1993, ch. 13) for the excess of one
//! cell, real mean minus pseudo mean, resampling dyads with replacement. Owns only the
//! resampling; the caller supplies the values and the seeded stream.
//!
//! Weighting rule: a resample gives dyad d the multiplicity w_d (how often it was drawn,
//! Σ w_d = D). The resampled real mean is Σ w_d real_d / Σ w_d over dyads with a real
//! value; a pseudo-pair (r, c) whose members belong to dyads d(r) ≠ d(c) enters the
//! resampled pseudo mean with weight w_d(r) · w_d(c), i.e. once for every pair of
//! drawn copies of the two dyads. A resample in which either mean has zero total weight is
//! discarded; the interval uses the remaining ones.

use rand::RngExt;
use rand_chacha::ChaCha8Rng;

use super::stats::quantile_sorted;

/// Sum and count of the pseudo values per ordered (row dyad, column dyad), kept sparse.
fn aggregate(pseudo: &[(usize, usize, f64)], n_dyads: usize) -> Vec<(usize, usize, f64, f64)> {
    let mut sum = vec![0.0; n_dyads * n_dyads];
    let mut count = vec![0.0; n_dyads * n_dyads];
    for &(a, b, v) in pseudo {
        sum[a * n_dyads + b] += v;
        count[a * n_dyads + b] += 1.0;
    }
    (0..n_dyads * n_dyads)
        .filter(|&i| count[i] > 0.0)
        .map(|i| (i / n_dyads, i % n_dyads, sum[i], count[i]))
        .collect()
}

/// Two-sided (1 − alpha) percentile interval of the excess. `real` holds each dyad's real
/// value (NaN where missing); `pseudo` holds (row dyad, column dyad, value) for every
/// pseudo-pair with a value. Returns NaNs when `resamples` is 0 or fewer than two
/// resamples are usable.
pub(crate) fn excess_interval(
    real: &[f64],
    pseudo: &[(usize, usize, f64)],
    resamples: usize,
    alpha: f64,
    rng: &mut ChaCha8Rng,
) -> (f64, f64) {
    let d = real.len();
    if resamples == 0 || d == 0 {
        return (f64::NAN, f64::NAN);
    }
    let agg = aggregate(pseudo, d);
    let mut w = vec![0.0f64; d];
    let mut stats = Vec::with_capacity(resamples);
    for _ in 0..resamples {
        w.iter_mut().for_each(|x| *x = 0.0);
        for _ in 0..d {
            w[rng.random_range(0..d)] += 1.0;
        }
        let (mut rs, mut rw) = (0.0, 0.0);
        for (wd, &r) in w.iter().zip(real) {
            if !r.is_nan() {
                rs += wd * r;
                rw += wd;
            }
        }
        let (mut ps, mut pw) = (0.0, 0.0);
        for &(a, b, s, n) in &agg {
            let ww = w[a] * w[b];
            ps += ww * s;
            pw += ww * n;
        }
        if rw > 0.0 && pw > 0.0 {
            stats.push(rs / rw - ps / pw);
        }
    }
    if stats.len() < 2 {
        return (f64::NAN, f64::NAN);
    }
    stats.sort_by(f64::total_cmp);
    (
        quantile_sorted(&stats, alpha / 2.0),
        quantile_sorted(&stats, 1.0 - alpha / 2.0),
    )
}

#[cfg(test)]
mod tests {
    use super::super::stats::{STREAM_BOOTSTRAP, stream};
    use super::*;

    /// Excess of one ordered resample built explicitly: copies j, l of the drawn dyads,
    /// real values of every copy, pseudo values of every pair of copies of distinct dyads.
    fn explicit_excess(
        sample: &[usize],
        real: &[f64],
        pseudo: &[(usize, usize, f64)],
    ) -> Option<f64> {
        let reals: Vec<f64> = sample
            .iter()
            .map(|&s| real[s])
            .filter(|v| !v.is_nan())
            .collect();
        let mut surr = Vec::new();
        for &sj in sample {
            for &sl in sample {
                if sj == sl {
                    continue;
                }
                surr.extend(
                    pseudo
                        .iter()
                        .filter(|p| p.0 == sj && p.1 == sl)
                        .map(|p| p.2),
                );
            }
        }
        if reals.is_empty() || surr.is_empty() {
            return None;
        }
        Some(
            reals.iter().sum::<f64>() / reals.len() as f64
                - surr.iter().sum::<f64>() / surr.len() as f64,
        )
    }

    /// Lower quantile (inverse distribution function) of equally weighted atoms.
    fn inverse_cdf(sorted: &[f64], q: f64) -> f64 {
        let k = ((q * sorted.len() as f64).ceil() as usize).clamp(1, sorted.len());
        sorted[k - 1]
    }

    #[test]
    fn interval_matches_exhaustive_enumeration_of_resamples() {
        // Four dyads, roles mode, every off-diagonal pair a pseudo-pair; one value missing.
        let real = [0.81, 0.62, f64::NAN, 0.74];
        let mut pseudo = Vec::new();
        for a in 0..4 {
            for b in 0..4 {
                if a != b && !(a == 1 && b == 3) {
                    pseudo.push((
                        a,
                        b,
                        0.3 + 0.05 * a as f64 - 0.04 * b as f64 + 0.01 * ((a * b) % 3) as f64,
                    ));
                }
            }
        }
        // All 4^4 ordered resamples are equally likely under resampling with replacement.
        let mut atoms = Vec::new();
        for code in 0..256usize {
            let sample = [code % 4, (code / 4) % 4, (code / 16) % 4, code / 64];
            if let Some(x) = explicit_excess(&sample, &real, &pseudo) {
                atoms.push(x);
            }
        }
        atoms.sort_by(f64::total_cmp);
        let mut rng = stream(11, STREAM_BOOTSTRAP, 0);
        let (lo, hi) = excess_interval(&real, &pseudo, 40_000, 0.1, &mut rng);
        let tol = 1e-12;
        assert!(
            lo >= inverse_cdf(&atoms, 0.04) - tol && lo <= inverse_cdf(&atoms, 0.06) + tol,
            "{lo}"
        );
        assert!(
            hi >= inverse_cdf(&atoms, 0.94) - tol && hi <= inverse_cdf(&atoms, 0.96) + tol,
            "{hi}"
        );
    }

    #[test]
    fn no_resamples_no_interval() {
        let mut rng = stream(1, STREAM_BOOTSTRAP, 0);
        let (lo, hi) = excess_interval(&[0.5, 0.6, 0.7], &[(0, 1, 0.2)], 0, 0.05, &mut rng);
        assert!(lo.is_nan() && hi.is_nan());
    }
}
