//! Dyad-level tests: the dyad contrast of one cell (each dyad's real value minus the mean
//! of its own pseudo-pairs, tested by a one-sample t-test and by sign flips) and the
//! condition contrasts (the per-dyad difference of two conditions' dyad contrasts, a
//! paired test). Owns the per-dyad differences and the flip p-values of a family (with
//! their max-statistic adjustment, computed by `correction`); the family grouping and the
//! p-value procedures are the caller's.

use super::correction::{maxstat, permutation_p};
use super::layout::Prepared;
use super::repairing::{MIN_DYADS, present, real_values};
use super::signflip::{FlipSample, FlipSet};
use super::stats::mean;
use super::ttest::{TTest, one_sample};
use super::types::Alternative;

/// Dyad contrast of one cell.
#[derive(Debug, Clone)]
pub(crate) struct DyadCell {
    pub real: Vec<f64>,
    /// Per dyad, mean of its listed pseudo pairs that have a value (NaN if none).
    pub pseudo: Vec<f64>,
    pub n_pseudo: Vec<usize>,
    /// Per dyad, d_i = real_i − pseudo_i (NaN unless both exist).
    pub diff: Vec<f64>,
    /// Distinct pseudo pairs behind the pseudo means of the dyads with a d_i.
    pub n_pseudo_used: usize,
    pub real_mean: f64,
    pub pseudo_mean: f64,
    /// Mean of the d_i.
    pub excess: f64,
    pub test: TTest,
    pub untestable: Option<String>,
}

impl DyadCell {
    /// (dyad index, d_i) for the dyads that have a difference.
    pub fn items(&self) -> Vec<(usize, f64)> {
        self.diff
            .iter()
            .enumerate()
            .filter(|(_, d)| !d.is_nan())
            .map(|(i, &d)| (i, d))
            .collect()
    }
}

pub(crate) fn dyad_cell(
    values: &[f64],
    prep: &Prepared,
    alternative: Alternative,
    alpha: f64,
) -> DyadCell {
    let real = real_values(values, prep);
    let mut pseudo = Vec::with_capacity(prep.n_dyads);
    let mut n_pseudo = Vec::with_capacity(prep.n_dyads);
    for list in &prep.dyad_pseudo {
        let vals: Vec<f64> = list
            .iter()
            .map(|&i| values[i])
            .filter(|v| present(*v))
            .collect();
        n_pseudo.push(vals.len());
        pseudo.push(mean(&vals));
    }
    let diff: Vec<f64> = real.iter().zip(&pseudo).map(|(r, s)| r - s).collect();

    let mut used = vec![false; values.len()];
    let mut reals = Vec::new();
    let mut surrs = Vec::new();
    let mut ds = Vec::new();
    for (i, &d) in diff.iter().enumerate() {
        if d.is_nan() {
            continue;
        }
        ds.push(d);
        reals.push(real[i]);
        surrs.push(pseudo[i]);
        for &c in &prep.dyad_pseudo_canonical[i] {
            if present(values[c]) {
                used[c] = true;
            }
        }
    }
    let n_pseudo_used = used.iter().filter(|&&u| u).count();
    let untestable = (ds.len() < MIN_DYADS).then(|| {
        format!(
            "only {} dyads have both a real value and a pseudo value (at least {MIN_DYADS} needed)",
            ds.len()
        )
    });
    let test = if untestable.is_none() {
        one_sample(&ds, alternative, alpha)
    } else {
        one_sample(&[], alternative, alpha)
    };
    DyadCell {
        real,
        pseudo,
        n_pseudo,
        diff,
        n_pseudo_used,
        real_mean: mean(&reals),
        pseudo_mean: mean(&surrs),
        excess: mean(&ds),
        test: TTest {
            n: ds.len(),
            ..test
        },
        untestable,
    }
}

/// Condition contrast of one (chromophore, band, roi): per-dyad d_i(A) − d_i(B) over the
/// dyads that have both, tested two-sided.
#[derive(Debug, Clone)]
pub(crate) struct ContrastCell {
    pub items: Vec<(usize, f64)>,
    pub test: TTest,
    pub untestable: Option<String>,
}

pub(crate) fn contrast_cell(a: &DyadCell, b: &DyadCell, alpha: f64) -> ContrastCell {
    let items: Vec<(usize, f64)> = a
        .diff
        .iter()
        .zip(&b.diff)
        .enumerate()
        .filter(|(_, (x, y))| !x.is_nan() && !y.is_nan())
        .map(|(i, (x, y))| (i, x - y))
        .collect();
    let untestable = (items.len() < MIN_DYADS).then(|| {
        format!(
            "only {} dyads have a dyad contrast in both conditions (at least {MIN_DYADS} needed)",
            items.len()
        )
    });
    let diffs: Vec<f64> = items.iter().map(|x| x.1).collect();
    let test = if untestable.is_none() {
        one_sample(&diffs, Alternative::TwoSided, alpha)
    } else {
        TTest {
            n: items.len(),
            ..one_sample(&[], Alternative::TwoSided, alpha)
        }
    };
    ContrastCell {
        items,
        test,
        untestable,
    }
}

/// Sign-flip p-values of one family of samples, and their max-statistic adjustment (NaN
/// unless asked for).
#[derive(Debug, Clone)]
pub(crate) struct FlipOutcome {
    pub p: Vec<f64>,
    pub p_maxstat: Vec<f64>,
}

/// Flips shared by every member of a family. The full enumeration over the dyads present
/// in any member is used when it has at most `sign_flips` patterns (exact p, identity
/// included); otherwise the shared Monte Carlo set `random` (identity added as one more
/// member, Phipson & Smyth 2010). Each member's exact p stays exact: a dyad it lacks only
/// repeats every pattern equally often.
pub(crate) fn flip_family(
    members: &[Vec<(usize, f64)>],
    n_dyads: usize,
    sign_flips: usize,
    alternative: Alternative,
    want_maxstat: bool,
    random: &dyn Fn() -> FlipSet,
) -> FlipOutcome {
    use rayon::prelude::*;
    if sign_flips == 0 || members.is_empty() {
        let nan = vec![f64::NAN; members.len()];
        return FlipOutcome {
            p: nan.clone(),
            p_maxstat: nan,
        };
    }
    let mut universe: Vec<usize> = members.iter().flatten().map(|x| x.0).collect();
    universe.sort_unstable();
    universe.dedup();
    let exact = universe.len() < 31 && (1usize << universe.len()) <= sign_flips;
    let set = if exact {
        FlipSet::enumerate(n_dyads, &universe)
    } else {
        random()
    };
    let orient = |t: f64| match alternative {
        Alternative::Greater => t,
        Alternative::TwoSided => t.abs(),
    };
    let (observed, nulls): (Vec<f64>, Vec<Vec<f64>>) = members
        .par_iter()
        .map(|items| {
            let sample = FlipSample::new(items);
            let null: Vec<f64> = sample.null_t(&set).into_iter().map(orient).collect();
            (orient(sample.observed_t()), null)
        })
        .unzip();
    let scale = 1.0
        + observed
            .iter()
            .filter(|x| x.is_finite())
            .fold(0.0f64, |m, x| m.max(x.abs()));
    let p = observed
        .iter()
        .zip(&nulls)
        .map(|(&t, null)| permutation_p(t, null, set.exact, scale))
        .collect();
    let p_maxstat = if want_maxstat {
        let refs: Vec<&[f64]> = nulls.iter().map(|n| n.as_slice()).collect();
        maxstat(&observed, &refs, set.exact, scale)
    } else {
        vec![f64::NAN; observed.len()]
    };
    FlipOutcome { p, p_maxstat }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn prep2x() -> Prepared {
        // Three dyads, roles mode, 3 x 3; each dyad lists the four off-diagonal pairs in its
        // row and column.
        let lists: Vec<Vec<usize>> = (0..3)
            .map(|i| {
                (0..3)
                    .filter(|&j| j != i)
                    .flat_map(|j| [i * 3 + j, j * 3 + i])
                    .collect()
            })
            .collect();
        Prepared {
            n_dyads: 3,
            real_idx: vec![0, 4, 8],
            pseudo: vec![],
            dyad_pseudo: lists.clone(),
            dyad_pseudo_canonical: lists,
            draw_idx: vec![],
            n_draws: 0,
            unowned: 0,
        }
    }

    #[test]
    fn dyad_differences_by_hand() {
        #[rustfmt::skip]
        let v = [
            0.9, 0.1, 0.2,
            0.3, 0.8, 0.4,
            0.5, 0.6, f64::NAN,
        ];
        let c = dyad_cell(&v, &prep2x(), Alternative::Greater, 0.05);
        // Dyad 0: row 0.1, 0.2; column 0.3, 0.5 -> mean 0.275, d = 0.625.
        assert!((c.diff[0] - 0.625).abs() < 1e-15);
        // Dyad 1: 0.3, 0.4, 0.1, 0.6 -> 0.35, d = 0.45.
        assert!((c.diff[1] - 0.45).abs() < 1e-15);
        // Dyad 2 has no real value.
        assert!(c.diff[2].is_nan());
        assert_eq!(c.n_pseudo[2], 4);
        assert!(c.untestable.is_some());
        assert_eq!(c.test.n, 2);
        // Distinct pairs used by dyads 0 and 1: all six off-diagonal pairs.
        assert_eq!(c.n_pseudo_used, 6);
    }

    #[test]
    fn contrast_pairs_dyads_present_in_both() {
        let mut a = dyad_cell(&[0.0; 9], &prep2x(), Alternative::Greater, 0.05);
        let mut b = a.clone();
        a.diff = vec![0.5, 0.2, f64::NAN];
        b.diff = vec![0.1, 0.3, 0.4];
        let c = contrast_cell(&a, &b, 0.05);
        assert_eq!(c.items, vec![(0, 0.4), (1, 0.2 - 0.3)]);
        assert!(c.untestable.is_some());
    }

    #[test]
    fn flip_family_exact_when_small() {
        let members = vec![vec![(0, 1.0), (1, 2.0), (2, 3.0)]];
        let out = flip_family(&members, 3, 8, Alternative::Greater, true, &|| {
            unreachable!("an exact set is used for three dyads and eight flips")
        });
        assert_eq!(out.p, vec![1.0 / 8.0]);
        let two = flip_family(&members, 3, 8, Alternative::TwoSided, true, &|| {
            unreachable!("an exact set is used for three dyads and eight flips")
        });
        assert_eq!(two.p_maxstat, vec![2.0 / 8.0]);
        assert_eq!(two.p, vec![2.0 / 8.0]);
    }
}
