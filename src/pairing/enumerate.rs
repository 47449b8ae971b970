//! Complete enumeration of the admissible re-pairings in canonical order, used when
//! there are no more of them than permutations requested (the exact permutation
//! distribution). Roles: rows in order, each taking the free admissible columns in
//! ascending order. Peers: the lowest unpaired member takes its free admissible
//! partners in ascending order. Must not be used for large counts: the caller checks.

use super::plan::PairPlan;

/// All admissible re-pairings, each as `n_dyads` (row, column) pairs sorted by row
/// (peers: row < column), concatenated.
pub(super) fn enumerate_all(plan: &PairPlan) -> Vec<(u32, u32)> {
    let mut out = Vec::new();
    if plan.peers() {
        let mut free = vec![true; plan.n_rows()];
        let mut cur = Vec::with_capacity(plan.n_dyads());
        peers(plan, &mut free, &mut cur, &mut out);
    } else {
        let mut free = vec![true; plan.n_cols()];
        let mut cur = Vec::with_capacity(plan.n_dyads());
        roles(plan, 0, &mut free, &mut cur, &mut out);
    }
    out
}

/// Whether every row from `r` on still has a free admissible column; prunes dead ends.
fn rows_feasible(plan: &PairPlan, r: usize, free: &[bool]) -> bool {
    (r..plan.n_rows()).all(|x| plan.adm.ones(x).any(|c| free[c]))
}

fn roles(
    plan: &PairPlan,
    r: usize,
    free: &mut [bool],
    cur: &mut Vec<(u32, u32)>,
    out: &mut Vec<(u32, u32)>,
) {
    if r == plan.n_rows() {
        out.extend_from_slice(cur);
        return;
    }
    let options: Vec<usize> = plan.adm.ones(r).filter(|&c| free[c]).collect();
    for c in options {
        free[c] = false;
        if rows_feasible(plan, r + 1, free) {
            cur.push((r as u32, c as u32));
            roles(plan, r + 1, free, cur, out);
            cur.pop();
        }
        free[c] = true;
    }
}

fn peers(plan: &PairPlan, free: &mut [bool], cur: &mut Vec<(u32, u32)>, out: &mut Vec<(u32, u32)>) {
    let Some(a) = free.iter().position(|&f| f) else {
        out.extend_from_slice(cur);
        return;
    };
    free[a] = false;
    let options: Vec<usize> = plan.adm.ones(a).filter(|&b| free[b]).collect();
    for b in options {
        free[b] = false;
        let feasible = (0..free.len())
            .filter(|&x| free[x])
            .all(|x| plan.adm.ones(x).any(|y| free[y]));
        if feasible {
            cur.push((a as u32, b as u32));
            peers(plan, free, cur, out);
            cur.pop();
        }
        free[b] = true;
    }
    free[a] = true;
}

#[cfg(test)]
mod tests {
    use super::super::plan::tests::{family_scenario, roles, unrelated_peers, unrelated_roles};
    use super::super::{Mode, PairPlan, Rules};
    use super::*;

    // Source: OEIS A000166 (derangements, n = 2..7) and A053871 (n = 2..6) as counts
    // of the enumeration, plus the hand count 576 of the family scenario; every listed
    // re-pairing is checked against the definition and all are distinct.
    #[test]
    fn enumeration_counts_match_tables() {
        for (n, want) in [(2, 1), (3, 2), (4, 9), (5, 44), (6, 265), (7, 1854)] {
            let plan =
                PairPlan::build(&unrelated_roles(n), n, &roles(), &Rules::default()).unwrap();
            assert_eq!(enumerate_all(&plan).len(), want * n, "n = {n}");
        }
        for (n, want) in [(2, 2), (3, 8), (4, 60), (5, 544), (6, 6040)] {
            let plan =
                PairPlan::build(&unrelated_peers(n), n, &Mode::Peers, &Rules::default()).unwrap();
            let all = enumerate_all(&plan);
            assert_eq!(all.len(), want * n, "n = {n}");
            let mut draws: Vec<&[(u32, u32)]> = all.chunks(n).collect();
            for d in &draws {
                let mut seen = vec![false; 2 * n];
                for &(a, b) in d.iter() {
                    assert!(a < b && plan.is_admissible(a as usize, b as usize));
                    assert!(!seen[a as usize] && !seen[b as usize]);
                    seen[a as usize] = true;
                    seen[b as usize] = true;
                }
                assert!(d.windows(2).all(|w| w[0].0 < w[1].0));
            }
            let before = draws.len();
            draws.sort();
            draws.dedup();
            assert_eq!(draws.len(), before);
        }
        let (members, rules) = family_scenario();
        let plan = PairPlan::build(&members, 10, &roles(), &rules).unwrap();
        let all = enumerate_all(&plan);
        assert_eq!(all.len(), 576 * 10);
        for d in all.chunks(10) {
            let mut cols: Vec<u32> = d.iter().map(|p| p.1).collect();
            assert!(d.iter().enumerate().all(|(r, p)| p.0 as usize == r));
            assert!(
                d.iter()
                    .all(|&(r, c)| plan.is_admissible(r as usize, c as usize))
            );
            cols.sort_unstable();
            assert_eq!(cols, (0..10).collect::<Vec<u32>>());
        }
    }
}
