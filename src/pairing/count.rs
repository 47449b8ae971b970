//! How many admissible re-pairings a plan has: exact where it can be done fast, an
//! estimate with its method stated otherwise.
//!
//! Roles mode counts bipartite perfect matchings (the permanent of the 0/1
//! admissibility matrix); peers mode counts perfect matchings of the admissibility
//! graph. The grid is first split into independent blocks (strata and, within them,
//! connected components) whose counts multiply. Per block, in order of preference:
//! inclusion–exclusion over the excluded cells when those form small clusters (exact for
//! any size, e.g. 140 dyads with only the built-in rules), Ryser's formula / a subset DP
//! for small blocks, sequential importance sampling otherwise. This file must not
//! sample re-pairings; the samplers only read its result.

use num_bigint::BigUint;

use super::bits::BitMatrix;
use super::estimate::{Estimate, sis_estimate, sis_peers_sample, sis_roles_sample};
use super::exclusion::{
    CLUSTER_MAX, SMALL_CLUSTER, matchings_by_exclusions, perfect_matchings_dp,
    permanent_by_exclusions,
};
use super::permanent::{RYSER_MAX, permanent_ryser};
use super::plan::PairPlan;

/// Number of admissible re-pairings.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct RepairingCount {
    /// The count (or estimate); `inf` when beyond the double range, see `log10`.
    pub value: f64,
    pub exact: bool,
    /// The exact count in decimal, when exact.
    pub exact_text: Option<String>,
    /// How the number was obtained.
    pub method: String,
    /// `log10(value)`, finite even when `value` overflows; `-inf` for zero.
    pub log10: f64,
}

impl RepairingCount {
    fn zero(method: String) -> Self {
        RepairingCount {
            value: 0.0,
            exact: true,
            exact_text: Some("0".into()),
            method,
            log10: f64::NEG_INFINITY,
        }
    }

    /// Whether the count is known exactly and is at most `n`.
    pub(super) fn exact_at_most(&self, n: usize) -> Option<usize> {
        let v: u128 = self.exact_text.as_ref()?.parse().ok()?;
        (v <= n as u128).then_some(v as usize)
    }
}

/// The count of one independent block.
enum Part {
    Exact(BigUint, &'static str),
    Estimate(Estimate),
}

pub(super) fn count_repairings(plan: &PairPlan) -> RepairingCount {
    plan.count_cache.get_or_init(|| compute(plan)).clone()
}

fn compute(plan: &PairPlan) -> RepairingCount {
    for s in &plan.strata {
        if !plan.peers() && s.rows.len() != s.cols.len() {
            return RepairingCount::zero(format!(
                "zero: stratum {} has {} row and {} column members",
                s.label,
                s.rows.len(),
                s.cols.len()
            ));
        }
        if plan.peers() && s.rows.len() % 2 == 1 {
            return RepairingCount::zero(format!(
                "zero: stratum {} has an odd number of members ({})",
                s.label,
                s.rows.len()
            ));
        }
    }
    let blocks = components(plan);
    let mut parts = Vec::with_capacity(blocks.len());
    for (rows, cols) in &blocks {
        if plan.peers() && rows.len() % 2 == 1 {
            return RepairingCount::zero(format!(
                "zero: a group of {} members who can only be paired among themselves is odd-sized",
                rows.len()
            ));
        }
        if !plan.peers() && rows.len() != cols.len() {
            return RepairingCount::zero(format!(
                "zero: a group of {} row members can only be paired with {} column members",
                rows.len(),
                cols.len()
            ));
        }
        let part = if plan.peers() {
            peers_block(plan, rows)
        } else {
            roles_block(plan, rows, cols)
        };
        if let Part::Exact(v, m) = &part
            && *v == BigUint::ZERO
        {
            return RepairingCount::zero(format!("zero: {m}"));
        }
        parts.push(part);
    }
    combine(parts)
}

fn combine(parts: Vec<Part>) -> RepairingCount {
    let n_blocks = parts.len();
    let mut methods: Vec<String> = Vec::new();
    let mut exact = BigUint::from(1u32);
    let mut est_log10 = 0.0;
    let mut est_rel_var = 0.0;
    let mut any_estimate = false;
    let mut samples = 0;
    for p in parts {
        match p {
            Part::Exact(v, m) => {
                exact *= v;
                if !methods.iter().any(|x| x == m) {
                    methods.push(m.to_owned());
                }
            }
            Part::Estimate(Estimate {
                log10,
                rel_se,
                samples: s,
            }) => {
                any_estimate = true;
                est_log10 += log10;
                est_rel_var += rel_se * rel_se;
                samples = s;
            }
        }
    }
    if any_estimate {
        methods.insert(
            0,
            format!(
                "estimate: sequential importance sampling (Rasmussen 1994), {samples} samples per block, relative s.e. {:.1}%",
                100.0 * est_rel_var.sqrt()
            ),
        );
    }
    let mut method = methods.join(" + ");
    if n_blocks > 1 {
        method = format!("product over {n_blocks} independent blocks: {method}");
    }
    let log10 = log10_of(&exact) + est_log10;
    if any_estimate {
        RepairingCount {
            value: 10f64.powf(log10),
            exact: false,
            exact_text: None,
            method,
            log10,
        }
    } else {
        RepairingCount {
            value: to_f64(&exact),
            exact: true,
            exact_text: Some(exact.to_string()),
            method,
            log10,
        }
    }
}

/// Connected components of the admissibility graph: (row positions, column positions);
/// peers: (member positions, empty).
fn components(plan: &PairPlan) -> Vec<(Vec<usize>, Vec<usize>)> {
    let nr = plan.n_rows();
    let n = if plan.peers() { nr } else { nr + plan.n_cols() };
    let mut parent: Vec<usize> = (0..n).collect();
    fn find(p: &mut [usize], mut x: usize) -> usize {
        while p[x] != x {
            p[x] = p[p[x]];
            x = p[x];
        }
        x
    }
    for r in 0..nr {
        for c in plan.adm.ones(r) {
            let other = if plan.peers() { c } else { nr + c };
            let (a, b) = (find(&mut parent, r), find(&mut parent, other));
            if a != b {
                parent[a.max(b)] = a.min(b);
            }
        }
    }
    let mut groups: std::collections::BTreeMap<usize, (Vec<usize>, Vec<usize>)> =
        Default::default();
    for x in 0..n {
        let root = find(&mut parent, x);
        let g = groups.entry(root).or_default();
        if x < nr {
            g.0.push(x);
        } else {
            g.1.push(x - nr);
        }
    }
    groups.into_values().collect()
}

fn roles_block(plan: &PairPlan, rows: &[usize], cols: &[usize]) -> Part {
    let n = rows.len();
    let a: Vec<Vec<bool>> = rows
        .iter()
        .map(|&r| cols.iter().map(|&c| plan.adm.get(r, c)).collect())
        .collect();
    const IE: &str = "permanent (inclusion–exclusion over excluded cells)";
    if n > 12
        && let Some(v) = permanent_by_exclusions(&a, SMALL_CLUSTER)
    {
        return Part::Exact(v, IE);
    }
    if n <= RYSER_MAX {
        return Part::Exact(permanent_ryser(&a), "permanent (Ryser)");
    }
    if let Some(v) = permanent_by_exclusions(&a, CLUSTER_MAX) {
        return Part::Exact(v, IE);
    }
    let local = to_bits(&a);
    Part::Estimate(sis_estimate(n, |rng| sis_roles_sample(&local, n, rng)))
}

fn peers_block(plan: &PairPlan, members: &[usize]) -> Part {
    let n = members.len();
    let a: Vec<Vec<bool>> = members
        .iter()
        .map(|&x| members.iter().map(|&y| plan.adm.get(x, y)).collect())
        .collect();
    const IE: &str = "perfect matchings (inclusion–exclusion over excluded pairs)";
    if n > 16
        && let Some(v) = matchings_by_exclusions(&a, SMALL_CLUSTER)
    {
        return Part::Exact(v, IE);
    }
    if let Some(v) = perfect_matchings_dp(&a) {
        return Part::Exact(BigUint::from(v), "perfect matchings (subset DP)");
    }
    if let Some(v) = matchings_by_exclusions(&a, CLUSTER_MAX) {
        return Part::Exact(v, IE);
    }
    let local = to_bits(&a);
    Part::Estimate(sis_estimate(n, |rng| sis_peers_sample(&local, n, rng)))
}

pub(super) fn to_bits(a: &[Vec<bool>]) -> BitMatrix {
    let n = a.len();
    let mut m = BitMatrix::new(n, n);
    for (i, row) in a.iter().enumerate() {
        for (j, &x) in row.iter().enumerate() {
            if x {
                m.set(i, j);
            }
        }
    }
    m
}

/// The nearest double of a count, folded from the top 64-bit digit down. num-bigint's own
/// `to_f64` rounds correctly and can differ from this fold in the last bit beyond 2^53; the
/// fold is kept so that `plan.json` and the manifest stay byte-identical to those of earlier
/// runs, which `replay` compares. `inf` beyond the double range.
pub(super) fn to_f64(v: &BigUint) -> f64 {
    let digits: Vec<u64> = v.iter_u64_digits().collect();
    digits
        .iter()
        .rev()
        .fold(0.0, |acc, &l| acc * 18_446_744_073_709_551_616.0 + l as f64)
}

/// `log10` of a count, finite for any size (from its two top 64-bit digits); `-inf` for
/// zero. Computed as it always was, for the same reason as [`to_f64`].
pub(super) fn log10_of(v: &BigUint) -> f64 {
    let d: Vec<u64> = v.iter_u64_digits().collect();
    let n = d.len();
    if n <= 2 {
        return to_f64(v).log10();
    }
    let top = d[n - 1] as f64 * 18_446_744_073_709_551_616.0 + d[n - 2] as f64;
    top.log10() + (64 * (n - 2)) as f64 * std::f64::consts::LOG10_2
}

/// `log10(n!)`.
pub(super) fn log10_factorial(n: usize) -> f64 {
    (2..=n).map(|k| (k as f64).log10()).sum()
}

/// `log10((2m-1)!!)`.
pub(super) fn log10_odd_double_factorial(m: usize) -> f64 {
    (1..=m).map(|k| ((2 * k - 1) as f64).log10()).sum()
}

#[cfg(test)]
pub(super) mod tests {
    use super::super::plan::tests::{
        family_scenario, roles, unbalanced_site_plan, unrelated_peers, unrelated_roles,
    };
    use super::super::{Mode, PairPlan, Rules};
    use super::*;

    /// The count as a native integer when it fits (the expected values below are native).
    trait ToU128 {
        fn to_u128(&self) -> Option<u128>;
    }

    impl ToU128 for BigUint {
        fn to_u128(&self) -> Option<u128> {
            u128::try_from(self).ok()
        }
    }

    // Source: 40! = 815915283247897734345611269596115894272000000000 (OEIS A000142), whose
    // log10 is 47.91164506815587; (2^100)^2 = 2^200 from the power-of-two table.
    #[test]
    fn doubles_and_logarithms_of_counts_match_tables() {
        let f40 = (1..=40u32).fold(BigUint::from(1u32), |a, k| a * k);
        assert_eq!(
            f40.to_string(),
            "815915283247897734345611269596115894272000000000"
        );
        assert!((log10_of(&f40) - 47.911_645_068_155_87).abs() < 1e-9);
        assert!((to_f64(&f40) / 8.159_152_832_478_977e47 - 1.0).abs() < 1e-12);
        let p200 = BigUint::from(1u128 << 100).pow(2);
        assert_eq!(to_f64(&p200), 2f64.powi(200));
        assert!((log10_of(&p200) - 200.0 * std::f64::consts::LOG10_2).abs() < 1e-12);
        assert_eq!(log10_of(&BigUint::ZERO), f64::NEG_INFINITY);
        assert_eq!(to_f64(&BigUint::from(u64::MAX)), u64::MAX as f64);
    }

    pub(crate) fn j_minus_i(n: usize) -> Vec<Vec<bool>> {
        (0..n).map(|i| (0..n).map(|j| i != j).collect()).collect()
    }

    /// Brute force: all n! permutations by Heap's algorithm.
    pub(crate) fn permanent_brute(a: &[Vec<bool>]) -> u64 {
        let n = a.len();
        let mut p: Vec<usize> = (0..n).collect();
        let mut c = vec![0usize; n];
        let ok = |p: &[usize]| p.iter().enumerate().all(|(i, &j)| a[i][j]);
        let mut count = ok(&p) as u64;
        let mut i = 0;
        while i < n {
            if c[i] < i {
                if i % 2 == 0 {
                    p.swap(0, i);
                } else {
                    p.swap(c[i], i);
                }
                count += ok(&p) as u64;
                c[i] += 1;
                i = 0;
            } else {
                c[i] = 0;
                i += 1;
            }
        }
        count
    }

    /// Brute force: all perfect matchings by recursion on the lowest free vertex.
    pub(crate) fn matchings_brute(a: &[Vec<bool>], free: &mut Vec<bool>) -> u64 {
        let Some(i) = free.iter().position(|&f| f) else {
            return 1;
        };
        free[i] = false;
        let mut total = 0;
        for j in i + 1..a.len() {
            if free[j] && a[i][j] {
                free[j] = false;
                total += matchings_brute(a, free);
                free[j] = true;
            }
        }
        free[i] = true;
        total
    }

    /// Small deterministic generator for test matrices (not used for sampling).
    pub(crate) fn lcg(state: &mut u64) -> u64 {
        *state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        *state >> 33
    }

    // Source: OEIS A000166 (derangements): perm(J - I) for n = 0..9.
    #[test]
    fn ryser_derangements_a000166() {
        let want = [1u128, 0, 1, 2, 9, 44, 265, 1854, 14833, 133496];
        for (n, &w) in want.iter().enumerate() {
            assert_eq!(permanent_ryser(&j_minus_i(n)).to_u128(), Some(w), "n = {n}");
            if n > 0 {
                assert_eq!(
                    permanent_by_exclusions(&j_minus_i(n), CLUSTER_MAX)
                        .unwrap()
                        .to_u128(),
                    Some(w)
                );
            }
        }
        for (n, &w) in want.iter().enumerate().skip(2) {
            let plan =
                PairPlan::build(&unrelated_roles(n), n, &roles(), &Rules::default()).unwrap();
            let c = plan.count_repairings();
            assert!(c.exact);
            assert_eq!(c.exact_text, Some(w.to_string()));
            // Two dyads split into two independent swaps; from three on, one block.
            if n >= 3 {
                assert_eq!(c.method, "permanent (Ryser)");
            }
        }
    }

    // Source: exact enumeration of all n! permutations on random 0/1 matrices.
    #[test]
    fn ryser_and_exclusions_agree_with_brute_force() {
        let mut s = 42u64;
        for n in 1..=8 {
            for density in [3u64, 6, 9] {
                let a: Vec<Vec<bool>> = (0..n)
                    .map(|_| (0..n).map(|_| lcg(&mut s) % 10 < density).collect())
                    .collect();
                let want = permanent_brute(&a) as u128;
                assert_eq!(permanent_ryser(&a).to_u128(), Some(want), "n={n} {a:?}");
                assert_eq!(
                    permanent_by_exclusions(&a, CLUSTER_MAX).unwrap().to_u128(),
                    Some(want)
                );
            }
        }
    }

    // Source: OEIS A000166 recurrence !n = (n-1)(!(n-1) + !(n-2)) evaluated in u128
    // here, and !20 = 895014631192902121 from the OEIS table; for n = 140 the count must
    // be round(140!/e), whose log10 is Σ log10 k - log10 e, and has 241 digits.
    #[test]
    fn large_derangement_counts_are_exact() {
        let mut d = vec![1u128, 0];
        for n in 2..=34u128 {
            d.push((n - 1) * (d[n as usize - 1] + d[n as usize - 2]));
        }
        assert_eq!(d[20], 895_014_631_192_902_121);
        for n in [20usize, 30, 34] {
            assert_eq!(
                permanent_by_exclusions(&j_minus_i(n), CLUSTER_MAX)
                    .unwrap()
                    .to_u128(),
                Some(d[n]),
                "n = {n}"
            );
        }
        let plan =
            PairPlan::build(&unrelated_roles(140), 140, &roles(), &Rules::default()).unwrap();
        let c = plan.count_repairings();
        assert!(c.exact, "{c:?}");
        let text = c.exact_text.unwrap();
        assert_eq!(text.len(), 241);
        let want = (1..=140).map(|k| (k as f64).log10()).sum::<f64>() - std::f64::consts::E.log10();
        assert!((c.log10 - want).abs() < 1e-9, "{} vs {want}", c.log10);
        assert!(c.method.contains("inclusion–exclusion"), "{}", c.method);
    }

    // Source: OEIS A053871 (perfect matchings of 2n people avoiding n fixed pairs):
    // 0, 2, 8, 60, 544, 6040 for n = 1..6; checked by the DP, by inclusion–exclusion, by
    // brute-force enumeration and through a peers plan.
    #[test]
    fn peers_a053871() {
        let want = [0u128, 2, 8, 60, 544, 6040];
        for n in 1..=6 {
            let a: Vec<Vec<bool>> = (0..2 * n)
                .map(|i| (0..2 * n).map(|j| i != j && i / 2 != j / 2).collect())
                .collect();
            assert_eq!(perfect_matchings_dp(&a), Some(want[n - 1]));
            assert_eq!(
                matchings_by_exclusions(&a, CLUSTER_MAX).unwrap().to_u128(),
                Some(want[n - 1])
            );
            assert_eq!(
                matchings_brute(&a, &mut vec![true; 2 * n]) as u128,
                want[n - 1]
            );
            if n >= 2 {
                let plan = PairPlan::build(&unrelated_peers(n), n, &Mode::Peers, &Rules::default())
                    .unwrap();
                let c = plan.count_repairings();
                assert_eq!(c.exact_text, Some(want[n - 1].to_string()));
                assert_eq!(c.method, "perfect matchings (subset DP)");
            }
        }
    }

    // Source: the family scenario of the plan tests, counted by hand: at site N the four
    // adults P, P, P, U may only meet T1, T2, B8, B9 (4! ways) and then M, Q, A8, A9 must
    // take S1, S2, S3, K, all of which they admit (4! ways); site S has one swap, whose
    // two pairs V–Y and W–R are separate blocks. 24 × 24 × 1 = 576, three blocks.
    #[test]
    fn family_scenario_count_by_hand() {
        let (members, rules) = family_scenario();
        let plan = PairPlan::build(&members, 10, &roles(), &rules).unwrap();
        let c = plan.count_repairings();
        assert_eq!(c.exact_text.as_deref(), Some("576"));
        assert!(
            c.method.starts_with("product over 3 independent blocks"),
            "{}",
            c.method
        );
    }

    // Source: Hall's condition — a stratum with unequal row and column counts has no
    // re-pairing. Worked by hand: site N has adults A0, A1 but children C0, C2, C3.
    #[test]
    fn unbalanced_stratum_counts_zero() {
        let plan = unbalanced_site_plan();
        let cnt = plan.count_repairings();
        assert_eq!(cnt.exact_text.as_deref(), Some("0"));
        assert_eq!(
            cnt.method,
            "zero: stratum site=N has 2 row and 3 column members"
        );
    }
}
