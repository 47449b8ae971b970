//! One admissible re-pairing found deterministically (the chain's start state), or a
//! named obstruction when none exists.
//!
//! Roles mode: bipartite matching by augmenting paths (Kuhn's method); when it fails,
//! the rows reached form a set with too few admissible columns (Hall's condition).
//! Peers mode: Edmonds' blossom algorithm (Edmonds 1965) for general graphs. Must not
//! sample: the result depends on the plan alone.

use std::collections::VecDeque;

use super::bits::BitMatrix;
use super::error::PairingError;
use super::plan::PairPlan;

const NONE: usize = usize::MAX;

/// Column position of every row position.
pub(super) fn bipartite_start(plan: &PairPlan) -> Result<Vec<u32>, PairingError> {
    let n = plan.n_rows();
    let mut col_owner = vec![NONE; plan.n_cols()];
    let mut seen = vec![false; plan.n_cols()];
    for r in 0..n {
        seen.fill(false);
        if !augment(&plan.adm, r, &mut col_owner, &mut seen) {
            let cols: Vec<usize> = (0..seen.len()).filter(|&c| seen[c]).collect();
            let mut rows: Vec<usize> = cols.iter().map(|&c| col_owner[c]).collect();
            rows.push(r);
            rows.sort_unstable();
            return Err(PairingError::NoRepairing {
                stuck: rows.iter().map(|&x| plan.row_id(x).to_owned()).collect(),
                partners: cols.iter().map(|&c| plan.col_id(c).to_owned()).collect(),
            });
        }
    }
    let mut out = vec![0u32; n];
    for (c, &r) in col_owner.iter().enumerate() {
        if r != NONE {
            out[r] = c as u32;
        }
    }
    Ok(out)
}

fn augment(adm: &BitMatrix, r: usize, owner: &mut [usize], seen: &mut [bool]) -> bool {
    for c in adm.ones(r) {
        if !seen[c] {
            seen[c] = true;
            if owner[c] == NONE || augment(adm, owner[c], owner, seen) {
                owner[c] = r;
                return true;
            }
        }
    }
    false
}

/// Partner position of every member position.
pub(super) fn general_start(plan: &PairPlan) -> Result<Vec<u32>, PairingError> {
    let n = plan.n_rows();
    let mut b = Blossom {
        adj: &plan.adm,
        mate: vec![NONE; n],
        p: vec![NONE; n],
        base: (0..n).collect(),
        used: vec![false; n],
        blossom: vec![false; n],
        queue: VecDeque::new(),
    };
    // A greedy start leaves few members for the augmenting searches.
    for v in 0..n {
        if b.mate[v] == NONE
            && let Some(w) = plan.adm.ones(v).find(|&w| b.mate[w] == NONE)
        {
            b.mate[v] = w;
            b.mate[w] = v;
        }
    }
    for v in 0..n {
        if b.mate[v] != NONE {
            continue;
        }
        match b.find_path(v) {
            Some(end) => b.flip(end),
            None => {
                // Outer vertices of the failed search can only be matched to its inner
                // vertices (or inside odd blossoms): a Tutte-type obstruction.
                let stuck: Vec<usize> = (0..n).filter(|&i| b.used[i]).collect();
                let partners: Vec<usize> =
                    (0..n).filter(|&i| !b.used[i] && b.p[i] != NONE).collect();
                return Err(PairingError::NoRepairing {
                    stuck: stuck.iter().map(|&x| plan.row_id(x).to_owned()).collect(),
                    partners: partners
                        .iter()
                        .map(|&x| plan.row_id(x).to_owned())
                        .collect(),
                });
            }
        }
    }
    Ok(b.mate.iter().map(|&m| m as u32).collect())
}

struct Blossom<'a> {
    adj: &'a BitMatrix,
    mate: Vec<usize>,
    p: Vec<usize>,
    base: Vec<usize>,
    used: Vec<bool>,
    blossom: Vec<bool>,
    queue: VecDeque<usize>,
}

impl Blossom<'_> {
    fn lca(&self, mut a: usize, mut b: usize) -> usize {
        let mut seen = vec![false; self.mate.len()];
        loop {
            a = self.base[a];
            seen[a] = true;
            if self.mate[a] == NONE {
                break;
            }
            a = self.p[self.mate[a]];
        }
        loop {
            b = self.base[b];
            if seen[b] {
                return b;
            }
            b = self.p[self.mate[b]];
        }
    }

    fn mark_path(&mut self, mut v: usize, b: usize, mut child: usize) {
        while self.base[v] != b {
            self.blossom[self.base[v]] = true;
            self.blossom[self.base[self.mate[v]]] = true;
            self.p[v] = child;
            child = self.mate[v];
            v = self.p[self.mate[v]];
        }
    }

    fn find_path(&mut self, root: usize) -> Option<usize> {
        let n = self.mate.len();
        self.used.fill(false);
        self.p.fill(NONE);
        for (i, b) in self.base.iter_mut().enumerate() {
            *b = i;
        }
        self.used[root] = true;
        self.queue.clear();
        self.queue.push_back(root);
        let adj = self.adj;
        while let Some(v) = self.queue.pop_front() {
            for to in adj.ones(v) {
                if self.base[v] == self.base[to] || self.mate[v] == to {
                    continue;
                }
                if to == root || (self.mate[to] != NONE && self.p[self.mate[to]] != NONE) {
                    let cur = self.lca(v, to);
                    self.blossom.fill(false);
                    self.mark_path(v, cur, to);
                    self.mark_path(to, cur, v);
                    for i in 0..n {
                        if self.blossom[self.base[i]] {
                            self.base[i] = cur;
                            if !self.used[i] {
                                self.used[i] = true;
                                self.queue.push_back(i);
                            }
                        }
                    }
                } else if self.p[to] == NONE {
                    self.p[to] = v;
                    if self.mate[to] == NONE {
                        return Some(to);
                    }
                    let next = self.mate[to];
                    self.used[next] = true;
                    self.queue.push_back(next);
                }
            }
        }
        None
    }

    fn flip(&mut self, mut v: usize) {
        while v != NONE {
            let pv = self.p[v];
            let ppv = self.mate[pv];
            self.mate[v] = pv;
            self.mate[pv] = v;
            v = ppv;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::super::plan::tests::{family_scenario, m, roles, unrelated_peers};
    use super::super::{Mode, PairPlan, Rules};
    use super::*;

    // Source: definition of a re-pairing — every pair admissible, every member once.
    #[test]
    fn starts_are_admissible_re_pairings() {
        let (members, rules) = family_scenario();
        let plan = PairPlan::build(&members, 10, &roles(), &rules).unwrap();
        let s = bipartite_start(&plan).unwrap();
        let mut used = [false; 10];
        for (r, &c) in s.iter().enumerate() {
            assert!(plan.is_admissible(r, c as usize));
            assert!(!used[c as usize]);
            used[c as usize] = true;
        }
        for n in 2..12 {
            let plan =
                PairPlan::build(&unrelated_peers(n), n, &Mode::Peers, &Rules::default()).unwrap();
            let mate = general_start(&plan).unwrap();
            for (v, &w) in mate.iter().enumerate() {
                assert_eq!(mate[w as usize] as usize, v);
                assert!(plan.is_admissible(v, w as usize));
            }
        }
    }

    // Source: Hall's condition, worked by hand. Adults A0, A1, A2 and children C0, C1,
    // C2 are all family F; A3 and C3 are family G. Under keep_apart family the adults
    // A0..A2 can only meet C3: three rows, one column. Augmenting paths fail on the
    // second of them, naming the two rows reached and their single column.
    #[test]
    fn hall_violation_is_named() {
        let a = Some("adult");
        let c = Some("child");
        let f = [("family", "F")];
        let g = [("family", "G")];
        let ms = vec![
            m(0, "A0", a, &f),
            m(0, "C0", c, &f),
            m(1, "A1", a, &f),
            m(1, "C1", c, &f),
            m(2, "A2", a, &f),
            m(2, "C2", c, &f),
            m(3, "A3", a, &g),
            m(3, "C3", c, &g),
        ];
        let rules = Rules {
            keep_apart: vec!["family".into()],
            pair_within: vec![],
        };
        let plan = PairPlan::build(&ms, 4, &roles(), &rules).unwrap();
        assert_eq!(plan.count_repairings().exact_text.as_deref(), Some("0"));
        let err = bipartite_start(&plan).unwrap_err();
        match &err {
            PairingError::NoRepairing { stuck, partners } => {
                assert_eq!(partners, &vec!["3:C3".to_string()]);
                assert_eq!(stuck.len(), 2, "{err}");
                assert!(
                    stuck
                        .iter()
                        .all(|s| ["0:A0", "1:A1", "2:A2"].contains(&s.as_str()))
                );
            }
            other => panic!("{other:?}"),
        }
        // Peers: four members of family F in two dyads and one dyad of family G: the
        // four F members can only meet the two G members (Tutte's condition fails).
        let ms = vec![
            m(0, "F0", None, &f),
            m(0, "F1", None, &f),
            m(1, "F2", None, &f),
            m(1, "F3", None, &f),
            m(2, "G0", None, &g),
            m(2, "G1", None, &g),
        ];
        let plan = PairPlan::build(&ms, 3, &Mode::Peers, &rules).unwrap();
        assert_eq!(plan.count_repairings().exact_text.as_deref(), Some("0"));
        let err = general_start(&plan).unwrap_err();
        assert!(matches!(err, PairingError::NoRepairing { .. }), "{err}");
    }
}
