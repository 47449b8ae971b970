//! Multiple-comparison adjustment of the p-values of one family: the p-value procedures
//! (Bonferroni; Holm 1979; Benjamini & Hochberg 1995; Benjamini & Yekutieli 2001) and the
//! single-step max-statistic adjustment over shared permutations (Westfall & Young 1993;
//! Nichols & Holmes 2002). Knows nothing of cells; the caller forms the families.

use super::stats::at_least;
use super::types::Correction;

/// Adjusts a family of p-values by a p-value procedure. NaN entries are left out of the
/// family (their adjusted value is NaN) so that an untestable member does not inflate m.
/// Returns `None` for `MaxStat`, which needs the permutation nulls (see [`maxstat`]).
pub fn adjust(p: &[f64], method: Correction) -> Option<Vec<f64>> {
    match method {
        Correction::MaxStat => None,
        Correction::None => Some(p.to_vec()),
        Correction::Bonferroni => Some(bonferroni(p)),
        Correction::Holm => Some(holm(p)),
        Correction::Bh => Some(bh(p)),
        Correction::By => Some(by(p)),
    }
}

/// Indices of the non-NaN entries, sorted by ascending p (ties in index order: every
/// procedure here gives tied p-values the same adjusted value, so the tie order is moot).
fn sorted_present(p: &[f64]) -> Vec<usize> {
    let mut idx: Vec<usize> = (0..p.len()).filter(|&i| !p[i].is_nan()).collect();
    idx.sort_by(|&a, &b| p[a].total_cmp(&p[b]).then(a.cmp(&b)));
    idx
}

/// Bonferroni: p · m, capped at 1.
pub fn bonferroni(p: &[f64]) -> Vec<f64> {
    let m = p.iter().filter(|x| !x.is_nan()).count() as f64;
    // `f64::min` would turn NaN into 1, so NaN is passed through explicitly.
    p.iter()
        .map(|&x| if x.is_nan() { x } else { (x * m).min(1.0) })
        .collect()
}

/// Holm (1979) step-down: p_(i) · (m − i + 1), made monotone non-decreasing in i by a
/// running maximum, capped at 1.
pub fn holm(p: &[f64]) -> Vec<f64> {
    let idx = sorted_present(p);
    let m = idx.len();
    let mut out = vec![f64::NAN; p.len()];
    let mut running = f64::NEG_INFINITY;
    for (rank, &i) in idx.iter().enumerate() {
        running = running.max(p[i] * (m - rank) as f64);
        out[i] = running.min(1.0);
    }
    out
}

/// Step-up adjustment p_(i) · m / (i · c), made monotone by a running minimum from the
/// largest p downwards, capped at 1. c = 1 is Benjamini & Hochberg (1995); c = Σ 1/j is
/// Benjamini & Yekutieli (2001).
fn step_up(p: &[f64], c: f64) -> Vec<f64> {
    let idx = sorted_present(p);
    let m = idx.len();
    let mut out = vec![f64::NAN; p.len()];
    let mut running = f64::INFINITY;
    for (rank, &i) in idx.iter().enumerate().rev() {
        let factor = (rank + 1) as f64 / m as f64 / c;
        running = running.min(p[i] / factor);
        out[i] = running.min(1.0);
    }
    out
}

/// Benjamini & Hochberg (1995) false discovery rate adjustment.
pub fn bh(p: &[f64]) -> Vec<f64> {
    step_up(p, 1.0)
}

/// Benjamini & Yekutieli (2001) adjustment, valid under arbitrary dependence.
pub fn by(p: &[f64]) -> Vec<f64> {
    let m = p.iter().filter(|x| !x.is_nan()).count();
    let c: f64 = (1..=m).map(|j| 1.0 / j as f64).sum();
    step_up(p, c)
}

/// Single-step max-statistic adjusted p-values (Westfall & Young 1993;
/// Nichols & Holmes 2002): p_adj_c = (offset + #{k : max_c' null[c'][k] ≥ observed[c]}) /
/// (K_valid + offset).
///
/// `observed[c]` and `null[c][k]` must already be on a common scale (standardised, or
/// absolute values for a two-sided test). A NaN null entry is left out of that draw's
/// maximum; a draw with no finite entry is left out of K_valid. `observed_in_null` says
/// whether the observed labelling is itself one of the draws (exact sign-flip enumeration:
/// offset 0); otherwise it is added as one more member (offset 1, Phipson & Smyth 2010).
/// `scale` sets the tie tolerance (see [`at_least`]).
pub fn maxstat(observed: &[f64], null: &[&[f64]], observed_in_null: bool, scale: f64) -> Vec<f64> {
    assert_eq!(
        observed.len(),
        null.len(),
        "one null per observed statistic"
    );
    let k = null.first().map_or(0, |n| n.len());
    assert!(
        null.iter().all(|n| n.len() == k),
        "all members of a max-statistic family share the same draws"
    );
    let mut maxima: Vec<f64> = (0..k)
        .filter_map(|j| {
            null.iter()
                .map(|n| n[j])
                .filter(|x| !x.is_nan())
                .reduce(f64::max)
        })
        .collect();
    maxima.sort_by(f64::total_cmp);
    let offset = if observed_in_null { 0.0 } else { 1.0 };
    let denom = maxima.len() as f64 + offset;
    observed
        .iter()
        .map(|&z| {
            if z.is_nan() || denom == 0.0 {
                return f64::NAN;
            }
            let below = maxima.partition_point(|&m| !at_least(m, z, scale));
            let count = (maxima.len() - below) as f64;
            ((count + offset) / denom).min(1.0)
        })
        .collect()
}

/// Permutation p of one statistic against its own null, on the same conventions as
/// [`maxstat`] (a family of one), counted directly.
pub fn permutation_p(observed: f64, null: &[f64], observed_in_null: bool, scale: f64) -> f64 {
    let offset = if observed_in_null { 0.0 } else { 1.0 };
    let valid = null.iter().filter(|x| !x.is_nan()).count() as f64;
    if observed.is_nan() || valid + offset == 0.0 {
        return f64::NAN;
    }
    let count = null
        .iter()
        .filter(|&&x| at_least(x, observed, scale))
        .count() as f64;
    ((count + offset) / (valid + offset)).min(1.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Benjamini & Hochberg (1995), section 4 worked example (15 p-values from a
    /// myocardial-infarction trial). Values from memory of the paper; the paper reports
    /// that the FDR procedure at q = 0.05 rejects the four smallest, while the Bonferroni
    /// procedure rejects three.
    const BH_EXAMPLE: [f64; 15] = [
        0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.3240, 0.4262,
        0.5719, 0.6528, 0.7590, 1.000,
    ];

    fn rejections(adj: &[f64], q: f64) -> Vec<usize> {
        (0..adj.len()).filter(|&i| adj[i] < q).collect()
    }

    #[test]
    fn bh_worked_example_rejects_four() {
        assert_eq!(rejections(&bh(&BH_EXAMPLE), 0.05), vec![0, 1, 2, 3]);
    }

    #[test]
    fn bonferroni_on_worked_example_rejects_three() {
        assert_eq!(rejections(&bonferroni(&BH_EXAMPLE), 0.05), vec![0, 1, 2]);
    }

    #[test]
    fn holm_hand_computed() {
        // Holm (1979): sorted p 0.01, 0.02, 0.03, 0.04 with m = 4 -> 0.04, 0.06, 0.06, 0.06.
        let adj = holm(&[0.03, 0.01, 0.04, 0.02]);
        let want = [0.06, 0.04, 0.06, 0.06];
        for (a, w) in adj.iter().zip(want) {
            assert!((a - w).abs() < 1e-15, "{adj:?}");
        }
    }

    #[test]
    fn by_is_bh_times_harmonic_number_before_capping() {
        // Benjamini & Yekutieli (2001): the constant is c(m) = Σ 1/i; for m = 3, 11/6.
        let p = [0.001, 0.01, 0.02];
        let b = bh(&p);
        let y = by(&p);
        for (bb, yy) in b.iter().zip(&y) {
            assert!((yy - bb * 11.0 / 6.0).abs() < 1e-15);
        }
    }

    #[test]
    fn nan_members_stay_out_of_the_family() {
        let adj = bonferroni(&[0.01, f64::NAN, 0.02]);
        assert!((adj[0] - 0.02).abs() < 1e-15 && adj[1].is_nan());
        let adj = holm(&[f64::NAN, 0.5]);
        assert!(adj[0].is_nan() && adj[1] == 0.5);
    }

    #[test]
    fn maxstat_counts_draws_whose_maximum_reaches_the_observed() {
        // Two members, four draws; maxima per draw: 2, 3, 1, 5.
        let a = [2.0, 0.0, 1.0, 5.0];
        let b = [1.0, 3.0, 0.5, 0.0];
        let adj = maxstat(&[2.5, 4.0], &[&a, &b], false, 1.0);
        assert_eq!(adj, vec![(1.0 + 2.0) / 5.0, (1.0 + 1.0) / 5.0]);
        let exact = maxstat(&[2.5, 4.0], &[&a, &b], true, 1.0);
        assert_eq!(exact, vec![2.0 / 4.0, 1.0 / 4.0]);
    }

    #[test]
    fn permutation_p_agrees_with_a_family_of_one() {
        let a = [2.0, f64::NAN, 1.0, 5.0, 2.0];
        for z in [0.0, 1.0, 2.0, 4.0, 6.0] {
            assert_eq!(
                permutation_p(z, &a, false, 1.0),
                maxstat(&[z], &[&a], false, 1.0)[0]
            );
            assert_eq!(
                permutation_p(z, &a, true, 1.0),
                maxstat(&[z], &[&a], true, 1.0)[0]
            );
        }
    }

    #[test]
    fn maxstat_is_never_below_the_single_member_permutation_p() {
        let a = [2.0, 0.0, 1.0, 5.0];
        let b = [1.0, 3.0, 0.5, 0.0];
        let adj = maxstat(&[1.5, 1.5], &[&a, &b], false, 1.0);
        assert!(adj[0] >= permutation_p(1.5, &a, false, 1.0));
        assert!(adj[1] >= permutation_p(1.5, &b, false, 1.0));
    }
}
