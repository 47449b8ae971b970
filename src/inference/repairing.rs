//! The re-pairing group test of one cell: the observed mean real-pair synchrony T against
//! its null T*_k over the shared re-pairings, the Monte Carlo (or exact) permutation p, the
//! standardised effect and the pseudo mean over all pseudo-pairs. Owns no correction
//! and no resampling (see `correction` and `bootstrap`).
//!
//! Missing values (NaN or any non-finite value) drop out everywhere:
//! * T is the mean over the dyads whose real pair has a value (`n_dyads` of them);
//! * T*_k is the mean over the pairs of re-pairing k that have a value, whatever their
//!   number; a re-pairing none of whose pairs has a value yields NaN and is left out, so K
//!   in the p-value counts only re-pairings with at least one value;
//! * the pseudo mean is over the pseudo-pairs that have a value (`n_pseudo`).
//!
//! p-value (Phipson & Smyth 2010): p = (1 + #{k : T*_k ≥ T}) / (K + 1). When the draws are
//! the full enumeration of the reference set without the real pairing itself, the same
//! formula is the exact p: the rank of the real pairing within the set made of itself and
//! the K re-pairings, which under H0 are exchangeable with it. Two-sided:
//! |T*_k − mean T*| ≥ |T − mean T*|. "Exact" means free of Monte Carlo error; the size of
//! the test still rests on that exchangeability. The default reference set (re-pairings
//! that may keep real pairs) contains the real pairing; re-pairings that never re-use a real
//! pair do not, so there it holds only approximately: when pair values carry member effects
//! plus independent noise, T*_k centres on the pseudo-pair values and spreads less than T
//! does, and the test is liberal for few dyads (this module's tests/calibration.rs: about
//! 0.058 at 16 dyads and α = 0.05 on simulated matrices, nominal when fixed points are
//! allowed; the integration test tests/calibration.rs measures whole studies).

use super::correction::permutation_p;
use super::layout::Prepared;
use super::stats::{mean, sample_sd};
use super::types::Alternative;

/// Fewest dyads with a real value for which a cell is tested.
pub(crate) const MIN_DYADS: usize = 3;

pub(crate) fn present(v: f64) -> bool {
    v.is_finite()
}

/// The real-pair value of every dyad (NaN where missing).
pub(crate) fn real_values(values: &[f64], prep: &Prepared) -> Vec<f64> {
    prep.real_idx
        .iter()
        .map(|&i| {
            let v = values[i];
            if present(v) { v } else { f64::NAN }
        })
        .collect()
}

/// T*_k for every draw, in draw order: the mean over the pairs of the draw that have a
/// value. Summation order is the pair order of the draw, so the result is the same on any
/// thread.
pub(crate) fn null_means(values: &[f64], prep: &Prepared) -> Vec<f64> {
    if prep.n_dyads == 0 {
        return Vec::new();
    }
    prep.draw_idx
        .chunks_exact(prep.n_dyads)
        .map(|block| {
            let mut sum = 0.0;
            let mut n = 0u32;
            for &i in block {
                let v = values[i as usize];
                if present(v) {
                    sum += v;
                    n += 1;
                }
            }
            if n > 0 { sum / n as f64 } else { f64::NAN }
        })
        .collect()
}

/// Outcome of the group test of one cell.
#[derive(Debug, Clone)]
pub(crate) struct GroupTest {
    pub real: Vec<f64>,
    pub n_dyads: usize,
    /// Mean of the real values present, reported even for an untestable cell.
    pub real_mean: f64,
    /// T; NaN for an untestable cell.
    pub observed: f64,
    pub null: Vec<f64>,
    pub null_mean: f64,
    pub null_sd: f64,
    pub p: f64,
    pub effect_size: f64,
    pub pseudo_mean: f64,
    pub n_pseudo: usize,
    /// Why the cell is not tested, if it is not.
    pub untestable: Option<String>,
}

impl GroupTest {
    /// Magnitude used by the tie tolerance of this cell's comparisons.
    pub fn scale(&self) -> f64 {
        [self.observed, self.null_mean, self.null_sd]
            .iter()
            .filter(|x| x.is_finite())
            .map(|x| x.abs())
            .sum::<f64>()
            .max(f64::MIN_POSITIVE)
    }

    /// Puts a statistic on the common max-statistic scale: z = (x − mean T*) / sd T*,
    /// its absolute value for a two-sided test. A null without spread maps every draw to
    /// 0 and the observed value to ±∞ (or 0 when it equals the null).
    pub fn standardise(&self, x: f64, alternative: Alternative) -> f64 {
        if x.is_nan() {
            return f64::NAN;
        }
        let dev = x - self.null_mean;
        let z = if self.null_sd > 0.0 {
            dev / self.null_sd
        } else if dev.abs() <= super::stats::TIE_REL * self.scale() {
            0.0
        } else {
            dev.signum() * f64::INFINITY
        };
        match alternative {
            Alternative::Greater => z,
            Alternative::TwoSided => z.abs(),
        }
    }
}

/// Runs the group test on one cell's matrix.
pub(crate) fn group_test(values: &[f64], prep: &Prepared, alternative: Alternative) -> GroupTest {
    let real = real_values(values, prep);
    let present_real: Vec<f64> = real.iter().copied().filter(|v| !v.is_nan()).collect();
    let n_dyads = present_real.len();
    let null = null_means(values, prep);
    let valid_null: Vec<f64> = null.iter().copied().filter(|v| !v.is_nan()).collect();
    let null_mean = mean(&valid_null);
    let null_sd = sample_sd(&valid_null, null_mean);

    let mut surr_sum = 0.0;
    let mut n_pseudo = 0usize;
    for &(i, _, _) in &prep.pseudo {
        let v = values[i];
        if present(v) {
            surr_sum += v;
            n_pseudo += 1;
        }
    }
    let pseudo_mean = if n_pseudo > 0 {
        surr_sum / n_pseudo as f64
    } else {
        f64::NAN
    };

    let untestable = if n_dyads < MIN_DYADS {
        Some(format!(
            "only {n_dyads} dyads have a real value (at least {MIN_DYADS} needed)"
        ))
    } else if valid_null.is_empty() {
        Some("no re-pairing has a value".to_owned())
    } else {
        None
    };

    let mut out = GroupTest {
        real,
        n_dyads,
        real_mean: mean(&present_real),
        observed: f64::NAN,
        null,
        null_mean,
        null_sd,
        p: f64::NAN,
        effect_size: f64::NAN,
        pseudo_mean,
        n_pseudo,
        untestable,
    };
    if out.untestable.is_some() {
        return out;
    }
    out.observed = out.real_mean;
    let scale = out.scale();
    out.p = match alternative {
        Alternative::Greater => permutation_p(out.observed, &out.null, false, scale),
        Alternative::TwoSided => {
            let dev: Vec<f64> = out.null.iter().map(|t| (t - null_mean).abs()).collect();
            permutation_p((out.observed - null_mean).abs(), &dev, false, scale)
        }
    };
    out.effect_size = (out.observed - null_mean) / null_sd;
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Three dyads in roles mode; the two derangements of three are the only re-pairings.
    fn prep3() -> Prepared {
        let draws: Vec<u32> = vec![1, 5, 6, 2, 3, 7]; // (0,1)(1,2)(2,0) and (0,2)(1,0)(2,1)
        Prepared {
            n_dyads: 3,
            real_idx: vec![0, 4, 8],
            pseudo: vec![
                (1, 0, 1),
                (2, 0, 2),
                (3, 1, 0),
                (5, 1, 2),
                (6, 2, 0),
                (7, 2, 1),
            ],
            dyad_pseudo: vec![vec![]; 3],
            dyad_pseudo_canonical: vec![vec![]; 3],
            draw_idx: draws,
            n_draws: 2,
            unowned: 0,
        }
    }

    #[test]
    fn hand_computed_three_dyads() {
        #[rustfmt::skip]
        let v = [
            0.9, 0.1, 0.2,
            0.3, 0.8, 0.4,
            0.5, 0.6, 0.7,
        ];
        let g = group_test(&v, &prep3(), Alternative::Greater);
        // T = (0.9+0.8+0.7)/3 = 0.8; T*_1 = (0.1+0.4+0.5)/3, T*_2 = (0.2+0.3+0.6)/3.
        assert!((g.observed - 0.8).abs() < 1e-15);
        assert!((g.null[0] - 1.0 / 3.0).abs() < 1e-15);
        assert!((g.null[1] - 1.1 / 3.0).abs() < 1e-15);
        // Neither re-pairing reaches T: p = 1 / 3.
        assert_eq!(g.p, 1.0 / 3.0);
        // Surrogate mean over the six off-diagonal values = 2.1 / 6.
        assert!((g.pseudo_mean - 0.35).abs() < 1e-15);
        assert_eq!(g.n_pseudo, 6);
    }

    #[test]
    fn missing_pairs_drop_out_of_both_sides() {
        #[rustfmt::skip]
        let v = [
            0.9, f64::NAN, 0.2,
            0.3, f64::NAN, 0.4,
            0.5, 0.6, 0.7,
        ];
        let g = group_test(&v, &prep3(), Alternative::Greater);
        // Dyad 1's real value is missing: too few dyads remain.
        assert_eq!(g.n_dyads, 2);
        assert!(g.untestable.is_some() && g.p.is_nan());
        // T*_1 = mean(0.4, 0.5) (pair (0,1) missing), T*_2 = mean(0.2, 0.3, 0.6).
        assert!((g.null[0] - 0.45).abs() < 1e-15);
        assert!((g.null[1] - 1.1 / 3.0).abs() < 1e-15);
        assert_eq!(g.n_pseudo, 5);
    }

    #[test]
    fn two_sided_compares_distances_from_the_null_mean() {
        #[rustfmt::skip]
        let v = [
            0.0, 0.1, 0.2,
            0.3, 0.0, 0.4,
            0.5, 0.6, 0.0,
        ];
        let g = group_test(&v, &prep3(), Alternative::TwoSided);
        // T = 0 lies far below both T*; one-sided it would give p = 1, two-sided 1/3.
        assert_eq!(g.p, 1.0 / 3.0);
        let one = group_test(&v, &prep3(), Alternative::Greater);
        assert_eq!(one.p, 1.0);
    }
}
