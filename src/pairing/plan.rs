//! The pair plan: candidate grid, the status of every candidate, strata and the
//! per-member checks that must pass before any counting or sampling.
//!
//! Owns the layout (rows, columns, real pairs) that all other pairing code indexes
//! into. It must not count re-pairings or draw them; it only says who may meet whom.

use std::collections::BTreeMap;

use super::bits::BitMatrix;
use super::error::PairingProblem;
use super::rules::{Reason, RuleSet, Status, stratum_label};
use super::{Mode, PairingMember, Rules};
use crate::vocab::{Col, MemberIx, PairGrid, Row};

/// Tallies over all candidates. `candidates = real + admissible + excluded`. Real pairs
/// are not counted under any rule (they are the observed pairs, not excluded
/// pseudo-pairs), so `same-dyad` never appears here; an excluded candidate counts once
/// for every rule that excludes it.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct PlanCounts {
    pub candidates: usize,
    pub real: usize,
    pub admissible: usize,
    pub excluded: usize,
    /// Every configured or built-in rule that can exclude a pseudo-pair, zero included.
    pub excluded_by_rule: BTreeMap<String, usize>,
}

/// Members whose pair_within values are all equal: a re-pairing never leaves a stratum.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(super) struct Stratum {
    pub(super) label: String,
    /// Row positions (peers: member positions).
    pub(super) rows: Vec<usize>,
    /// Column positions (peers: the same as `rows`).
    pub(super) cols: Vec<usize>,
}

/// Who may be paired with whom, for one study and one set of rules.
///
/// Roles mode: row `i` and column `i` are the two members of dyad `i`, so the real
/// pairs are the diagonal. Peers mode: rows and columns are all members in member
/// order, the grid is symmetric, and a member against itself has status
/// `Excluded([SameDyad])` (it is no candidate and is left out of [`PairPlan::candidates`]
/// and [`PairPlan::counts`]).
///
/// The counting and sampling code works on plain row and column positions (`usize`): they are
/// the indices of its bit matrices and permutations, and every value it hands out goes back
/// through [`PairGrid`].
#[derive(Debug, Clone)]
pub struct PairPlan {
    /// Who stands on each row and column.
    pub grid: PairGrid,
    /// Per dyad, the cell of its real pair; peers: row < column.
    pub real: Vec<(Row, Col)>,
    pub(super) status: Vec<Status>,
    pub(super) adm: BitMatrix,
    pub(super) ids: Vec<String>,
    pub(super) strata: Vec<Stratum>,
    rule_names: Vec<String>,
    /// Counting can take up to a second; the samplers and the caller share one result.
    pub(super) count_cache: std::sync::OnceLock<super::RepairingCount>,
}

fn check_rules(rules: &Rules, problems: &mut Vec<PairingProblem>) {
    for (list, attrs) in [
        ("keep_apart", &rules.keep_apart),
        ("pair_within", &rules.pair_within),
    ] {
        let mut seen = std::collections::BTreeSet::new();
        for a in attrs {
            if a.trim().is_empty() {
                problems.push(PairingProblem::EmptyAttribute { list });
            } else if !seen.insert(a.as_str()) {
                problems.push(PairingProblem::RepeatedAttribute {
                    list,
                    attribute: a.clone(),
                });
            }
        }
    }
    let mut reported = std::collections::BTreeSet::new();
    for a in &rules.keep_apart {
        if rules.pair_within.contains(a) && reported.insert(a.as_str()) {
            problems.push(PairingProblem::ConflictingRules {
                attribute: a.clone(),
            });
        }
    }
}

/// Roles mode: the row and column member of every dyad.
fn roles_layout(
    members: &[PairingMember],
    by_dyad: &[Vec<usize>],
    row_role: &str,
    col_role: &str,
    problems: &mut Vec<PairingProblem>,
) -> (Vec<usize>, Vec<usize>) {
    for m in members {
        let r = m.role.as_deref();
        if r != Some(row_role) && r != Some(col_role) {
            problems.push(PairingProblem::UnknownRole {
                member: m.id.clone(),
                role: m.role.clone(),
                row_role: row_role.to_owned(),
                col_role: col_role.to_owned(),
            });
        }
    }
    let mut rows = Vec::with_capacity(by_dyad.len());
    let mut cols = Vec::with_capacity(by_dyad.len());
    for (d, ms) in by_dyad.iter().enumerate() {
        let ids: Vec<String> = ms.iter().map(|&i| members[i].id.clone()).collect();
        for (role, out) in [(row_role, &mut rows), (col_role, &mut cols)] {
            let with: Vec<usize> = ms
                .iter()
                .copied()
                .filter(|&i| members[i].role.as_deref() == Some(role))
                .collect();
            match with.len() {
                0 => problems.push(PairingProblem::MissingRole {
                    dyad: d,
                    role: role.to_owned(),
                    members: ids.clone(),
                }),
                1 => out.push(with[0]),
                _ => problems.push(PairingProblem::RepeatedRole {
                    dyad: d,
                    role: role.to_owned(),
                    members: with.iter().map(|&i| members[i].id.clone()).collect(),
                }),
            }
        }
    }
    (rows, cols)
}

impl PairPlan {
    /// Checks the study layout and the rules, evaluates every candidate and makes sure
    /// every member keeps at least one admissible pseudo-partner. All problems are
    /// returned together so that a user can fix them in one pass.
    pub fn build(
        members: &[PairingMember],
        n_dyads: usize,
        mode: &Mode,
        rules: &Rules,
    ) -> Result<PairPlan, Vec<PairingProblem>> {
        let mut problems = Vec::new();
        if n_dyads == 0 {
            problems.push(PairingProblem::NoDyads);
        }
        check_rules(rules, &mut problems);
        if let Mode::Roles { row_role, col_role } = mode
            && row_role == col_role
        {
            problems.push(PairingProblem::SameRoles {
                role: row_role.clone(),
            });
        }
        let mut by_dyad: Vec<Vec<usize>> = vec![Vec::new(); n_dyads];
        for (i, m) in members.iter().enumerate() {
            match by_dyad.get_mut(m.dyad) {
                Some(v) => v.push(i),
                None => problems.push(PairingProblem::DyadOutOfRange {
                    member: m.id.clone(),
                    dyad: m.dyad,
                    n_dyads,
                }),
            }
        }
        let peers = matches!(mode, Mode::Peers);
        let (rows, cols, real_members) = match mode {
            Mode::Roles { row_role, col_role } => {
                let (rows, cols) =
                    roles_layout(members, &by_dyad, row_role, col_role, &mut problems);
                let real: Vec<(usize, usize)> =
                    rows.iter().copied().zip(cols.iter().copied()).collect();
                (rows, cols, real)
            }
            Mode::Peers => {
                let mut real = Vec::with_capacity(n_dyads);
                for (d, ms) in by_dyad.iter().enumerate() {
                    if ms.len() == 2 {
                        real.push((ms[0], ms[1]));
                    } else {
                        problems.push(PairingProblem::DyadSize {
                            dyad: d,
                            members: ms.iter().map(|&i| members[i].id.clone()).collect(),
                        });
                    }
                }
                let all: Vec<usize> = (0..members.len()).collect();
                (all.clone(), all, real)
            }
        };
        if !problems.is_empty() {
            return Err(problems);
        }

        let rule_set = RuleSet::new(rules, members, &real_members);
        let (nr, nc) = (rows.len(), cols.len());
        let mut status = Vec::with_capacity(nr * nc);
        let mut adm = BitMatrix::new(nr, nc);
        for (r, &a) in rows.iter().enumerate() {
            for (c, &b) in cols.iter().enumerate() {
                let s = if peers && r == c {
                    Status::Excluded(vec![Reason::SameDyad])
                } else if members[a].dyad == members[b].dyad {
                    Status::Real
                } else {
                    let reasons = rule_set.reasons(&members[a], &members[b]);
                    if reasons.is_empty() {
                        adm.set(r, c);
                        Status::Admissible
                    } else {
                        Status::Excluded(reasons)
                    }
                };
                status.push(s);
            }
        }
        let real = if peers {
            real_members
                .iter()
                .map(|&(a, b)| (Row(a), Col(b)))
                .collect()
        } else {
            (0..n_dyads).map(|d| (Row(d), Col(d))).collect()
        };
        let strata = strata(members, rules, &rows, &cols, peers);
        let grid = if peers {
            PairGrid::peers(members.len())
        } else {
            PairGrid::roles(
                rows.into_iter().map(MemberIx).collect(),
                cols.into_iter().map(MemberIx).collect(),
            )
        };
        let plan = PairPlan {
            grid,
            real,
            status,
            adm,
            ids: members.iter().map(|m| m.id.clone()).collect(),
            strata,
            rule_names: rule_set.names(),
            count_cache: std::sync::OnceLock::new(),
        };
        let problems = plan.members_without_partner();
        if problems.is_empty() {
            Ok(plan)
        } else {
            Err(problems)
        }
    }

    /// Grid line of every member: (is a row, position).
    fn lines(&self) -> Vec<(usize, bool, usize)> {
        let mut v: Vec<(usize, bool, usize)> = self
            .grid
            .rows()
            .iter()
            .enumerate()
            .map(|(p, &m)| (m.0, true, p))
            .collect();
        if !self.peers() {
            v.extend(
                self.grid
                    .cols()
                    .iter()
                    .enumerate()
                    .map(|(p, &m)| (m.0, false, p)),
            );
        }
        v.sort();
        v
    }

    fn line_statuses(&self, is_row: bool, p: usize) -> Vec<&Status> {
        if is_row {
            (0..self.n_cols())
                .filter(|&c| !(self.peers() && c == p))
                .map(|c| self.status(p, c))
                .collect()
        } else {
            (0..self.n_rows()).map(|r| self.status(r, p)).collect()
        }
    }

    fn members_without_partner(&self) -> Vec<PairingProblem> {
        let mut out = Vec::new();
        for (m, is_row, p) in self.lines() {
            let sts = self.line_statuses(is_row, p);
            if sts.iter().any(|s| s.is_admissible()) {
                continue;
            }
            let mut tally: BTreeMap<String, usize> = BTreeMap::new();
            let mut candidates = 0;
            for s in sts {
                if let Status::Excluded(rs) = s {
                    candidates += 1;
                    for r in rs {
                        *tally.entry(r.to_string()).or_default() += 1;
                    }
                }
            }
            let excluded_by = self
                .rule_names
                .iter()
                .filter_map(|n| tally.get(n).map(|&k| (n.clone(), k)))
                .collect();
            out.push(PairingProblem::NoAdmissiblePartner {
                member: self.ids[m].clone(),
                candidates,
                excluded_by,
            });
        }
        out
    }

    pub fn n_rows(&self) -> usize {
        self.grid.n_rows()
    }

    pub fn n_cols(&self) -> usize {
        self.grid.n_cols()
    }

    pub fn peers(&self) -> bool {
        self.grid.is_peers()
    }

    pub fn n_dyads(&self) -> usize {
        self.real.len()
    }

    /// Member id of a member index.
    pub fn member_id(&self, member: usize) -> &str {
        &self.ids[member]
    }

    /// Status of row `r` with column `c`. Peers: symmetric; `(r, r)` is
    /// `Excluded([SameDyad])`.
    pub fn status(&self, r: usize, c: usize) -> &Status {
        &self.status[self.grid.cell(Row(r), Col(c)).0]
    }

    pub fn is_admissible(&self, r: usize, c: usize) -> bool {
        self.adm.get(r, c)
    }

    /// The plan re-pairings are drawn from when they may keep real pairs: every admissible
    /// pseudo-pair and every real pair. Its re-pairings include the observed pairing itself,
    /// which is what makes the re-pairing null exact when the observed pairing is one uniform
    /// draw from that set. Counts and draws of the returned plan refer to this larger set;
    /// statuses are unchanged.
    pub fn with_real_pairs_in_repairings(&self) -> PairPlan {
        let mut plan = self.clone();
        for &(r, c) in &self.real {
            plan.adm.set(r.0, c.0);
            if self.peers() {
                plan.adm.set(c.0, r.0);
            }
        }
        plan.count_cache = std::sync::OnceLock::new();
        plan
    }

    /// Roles: every row × column, row-major. Peers: every `r < c`.
    pub fn candidates(&self) -> impl Iterator<Item = (Row, Col, &Status)> {
        self.grid
            .candidates()
            .map(|(r, c)| (r, c, &self.status[self.grid.cell(r, c).0]))
    }

    pub fn counts(&self) -> PlanCounts {
        let mut by: BTreeMap<String, usize> =
            self.rule_names.iter().map(|n| (n.clone(), 0)).collect();
        let (mut candidates, mut real, mut admissible, mut excluded) = (0, 0, 0, 0);
        for (_, _, s) in self.candidates() {
            candidates += 1;
            match s {
                Status::Real => real += 1,
                Status::Admissible => admissible += 1,
                Status::Excluded(rs) => {
                    excluded += 1;
                    for r in rs {
                        *by.entry(r.to_string()).or_default() += 1;
                    }
                }
            }
        }
        PlanCounts {
            candidates,
            real,
            admissible,
            excluded,
            excluded_by_rule: by,
        }
    }

    /// Every member with its number of admissible pseudo-partners, by member index.
    pub fn admissible_partners(&self) -> Vec<(usize, usize)> {
        self.lines()
            .into_iter()
            .map(|(m, is_row, p)| {
                let n = if is_row {
                    self.adm.row_count(p)
                } else {
                    (0..self.n_rows()).filter(|&r| self.adm.get(r, p)).count()
                };
                (m, n)
            })
            .collect()
    }

    /// Admissible `(r, c)` involving either member of dyad `d`, each once, sorted;
    /// peers: `r < c`.
    pub fn pseudo_pairs_of_dyad(&self, d: usize) -> Vec<(Row, Col)> {
        let (Row(a), Col(b)) = self.real[d];
        let mut out = Vec::new();
        if self.peers() {
            for x in [a, b] {
                for y in self.adm.ones(x) {
                    out.push((x.min(y), x.max(y)));
                }
            }
        } else {
            out.extend(self.adm.ones(a).map(|c| (a, c)));
            out.extend(
                (0..self.n_rows())
                    .filter(|&r| self.adm.get(r, b))
                    .map(|r| (r, b)),
            );
        }
        out.sort_unstable();
        out.dedup();
        out.into_iter().map(|(r, c)| (Row(r), Col(c))).collect()
    }

    pub fn count_repairings(&self) -> super::RepairingCount {
        super::count::count_repairings(self)
    }

    /// Member id of a row / column position.
    pub(super) fn row_id(&self, r: usize) -> &str {
        &self.ids[self.grid.row_member(Row(r)).0]
    }

    pub(super) fn col_id(&self, c: usize) -> &str {
        &self.ids[self.grid.col_member(Col(c)).0]
    }
}

fn strata(
    members: &[PairingMember],
    rules: &Rules,
    rows: &[usize],
    cols: &[usize],
    peers: bool,
) -> Vec<Stratum> {
    let label = |m: usize| stratum_label(&members[m], rules).unwrap_or_else(|| "(blank)".into());
    let mut map: BTreeMap<String, (Vec<usize>, Vec<usize>)> = BTreeMap::new();
    for (p, &m) in rows.iter().enumerate() {
        map.entry(label(m)).or_default().0.push(p);
    }
    if !peers {
        for (p, &m) in cols.iter().enumerate() {
            map.entry(label(m)).or_default().1.push(p);
        }
    }
    map.into_iter()
        .map(|(label, (rows, cols))| {
            let cols = if peers { rows.clone() } else { cols };
            Stratum { label, rows, cols }
        })
        .collect()
}

#[cfg(test)]
pub(super) mod tests {
    use super::*;

    /// A member for hand-built scenarios: `attrs` as (name, value) pairs.
    pub(crate) fn m(
        dyad: usize,
        p: &str,
        role: Option<&str>,
        attrs: &[(&str, &str)],
    ) -> PairingMember {
        PairingMember {
            id: format!("{dyad}:{p}"),
            dyad,
            participant: p.to_owned(),
            role: role.map(str::to_owned),
            attrs: attrs
                .iter()
                .map(|(k, v)| (k.to_string(), v.to_string()))
                .collect(),
        }
    }

    pub(crate) fn roles() -> Mode {
        Mode::Roles {
            row_role: "adult".into(),
            col_role: "child".into(),
        }
    }

    /// Hall's condition fails by hand: within `pair_within = ["site"]`, site N has the adults
    /// A0, A1 but the children C0, C2, C3, so no complete re-pairing exists.
    pub(crate) fn unbalanced_site_plan() -> PairPlan {
        let (a, c) = (Some("adult"), Some("child"));
        let ms = vec![
            m(0, "A0", a, &[("site", "N")]),
            m(0, "C0", c, &[("site", "N")]),
            m(1, "A1", a, &[("site", "N")]),
            m(1, "C1", c, &[("site", "S")]),
            m(2, "A2", a, &[("site", "S")]),
            m(2, "C2", c, &[("site", "N")]),
            m(3, "A3", a, &[("site", "S")]),
            m(3, "C3", c, &[("site", "N")]),
        ];
        let rules = Rules {
            keep_apart: vec![],
            pair_within: vec!["site".into()],
        };
        PairPlan::build(&ms, 4, &roles(), &rules).unwrap()
    }

    /// Roles-mode study of `n` unrelated dyads, adult listed before child.
    pub(crate) fn unrelated_roles(n: usize) -> Vec<PairingMember> {
        (0..n)
            .flat_map(|d| {
                [
                    m(d, &format!("A{d}"), Some("adult"), &[]),
                    m(d, &format!("C{d}"), Some("child"), &[]),
                ]
            })
            .collect()
    }

    /// Peers-mode study of `n` unrelated dyads.
    pub(crate) fn unrelated_peers(n: usize) -> Vec<PairingMember> {
        (0..n)
            .flat_map(|d| {
                [
                    m(d, &format!("P{d}a"), None, &[]),
                    m(d, &format!("P{d}b"), None, &[]),
                ]
            })
            .collect()
    }

    /// The family scenario, roles adult × child, keep_apart family, pair_within site.
    ///
    /// ```text
    /// dyad adult (family, site)   child (family, site)
    ///  0   P  (F1, N)             S1 (F1, N)   P is one adult recorded with her
    ///  1   P  (F1, N)             S2 (F1, N)   three children S1, S2, S3 (siblings)
    ///  2   P  (F1, N)             S3 (F1, N)
    ///  3   M  (F2, N)             T1 (F2, N)   twins T1, T2 with different adults:
    ///  4   Q  (-,  N)             T2 (F2, N)   mother M, carer Q (family not recorded)
    ///  5   U  (F1, N)             K  (F1, N)   U: aunt of S1..S3, adult of dyad 5
    ///  6   V  (F4, S)             R  (F4, S)   site S has only two dyads
    ///  7   W  (F5, S)             Y  (F5, S)
    ///  8   A8 (F6, N)             B8 (F6, N)   two unrelated dyads at site N
    ///  9   A9 (F7, N)             B9 (F7, N)
    /// ```
    pub(crate) fn family_scenario() -> (Vec<PairingMember>, Rules) {
        let a = Some("adult");
        let c = Some("child");
        let members = vec![
            m(0, "P", a, &[("family", "F1"), ("site", "N")]),
            m(0, "S1", c, &[("family", "F1"), ("site", "N")]),
            m(1, "P", a, &[("family", "F1"), ("site", "N")]),
            m(1, "S2", c, &[("family", "F1"), ("site", "N")]),
            m(2, "S3", c, &[("family", "F1"), ("site", "N")]),
            m(2, "P", a, &[("family", "F1"), ("site", "N")]),
            m(3, "M", a, &[("family", "F2"), ("site", "N")]),
            m(3, "T1", c, &[("family", "F2"), ("site", "N")]),
            m(4, "Q", a, &[("site", "N")]),
            m(4, "T2", c, &[("family", "F2"), ("site", "N")]),
            m(5, "U", a, &[("family", "F1"), ("site", "N")]),
            m(5, "K", c, &[("family", "F1"), ("site", "N")]),
            m(6, "V", a, &[("family", "F4"), ("site", "S")]),
            m(6, "R", c, &[("family", "F4"), ("site", "S")]),
            m(7, "W", a, &[("family", "F5"), ("site", "S")]),
            m(7, "Y", c, &[("family", "F5"), ("site", "S")]),
            m(8, "A8", a, &[("family", "F6"), ("site", "N")]),
            m(8, "B8", c, &[("family", "F6"), ("site", "N")]),
            m(9, "A9", a, &[("family", "F7"), ("site", "N")]),
            m(9, "B9", c, &[("family", "F7"), ("site", "N")]),
        ];
        let rules = Rules {
            keep_apart: vec!["family".into()],
            pair_within: vec!["site".into()],
        };
        (members, rules)
    }

    fn names(s: &Status) -> String {
        match s {
            Status::Real => "real".into(),
            Status::Admissible => "ok".into(),
            Status::Excluded(r) => r
                .iter()
                .map(|x| x.to_string())
                .collect::<Vec<_>>()
                .join("+"),
        }
    }

    // Source: hand computation from the rule definitions (the grid below was worked out
    // on paper; EP = ever-partners, KA = keep_apart:family, PW = pair_within:site).
    #[test]
    fn family_scenario_statuses_and_counts() {
        let (members, rules) = family_scenario();
        let plan = PairPlan::build(&members, 10, &roles(), &rules).unwrap();
        // Rows are ordered by dyad even though dyad 2 lists its child first.
        let ix = |v: Vec<usize>| v.into_iter().map(MemberIx).collect::<Vec<_>>();
        assert_eq!(
            plan.grid.rows(),
            ix(vec![0, 2, 5, 6, 8, 10, 12, 14, 16, 18])
        );
        assert_eq!(
            plan.grid.cols(),
            ix(vec![1, 3, 4, 7, 9, 11, 13, 15, 17, 19])
        );
        // rows: P P P M Q U V W A8 A9 ; cols: S1 S2 S3 T1 T2 K R Y B8 B9
        //        c0   c1   c2   c3  c4  c5  c6  c7  c8  c9
        // r0 P   real EK   EK   ok  ok  K   W   W   ok  ok   (EK = EP+KA: P was
        // r1 P   EK   real EK   ok  ok  K   W   W   ok  ok    recorded with S1..S3)
        // r2 P   EK   EK   real ok  ok  K   W   W   ok  ok
        // r3 M   ok   ok   ok   real K  ok  W   W   ok  ok   (M, T2 both F2)
        // r4 Q   ok   ok   ok   ok  real ok W   W   ok  ok   (Q has no family value)
        // r5 U   K    K    K    ok  ok  real W  W   ok  ok   (aunt U is F1)
        // r6 V   W    W    W    W   W   W   real ok W   W
        // r7 W   W    W    W    W   W   W   ok  real W  W
        // r8 A8  ok   ok   ok   ok  ok  ok  W   W   real ok
        // r9 A9  ok   ok   ok   ok  ok  ok  W   W   ok  real
        let grid = [
            "real EK EK ok ok K W W ok ok",
            "EK real EK ok ok K W W ok ok",
            "EK EK real ok ok K W W ok ok",
            "ok ok ok real K ok W W ok ok",
            "ok ok ok ok real ok W W ok ok",
            "K K K ok ok real W W ok ok",
            "W W W W W W real ok W W",
            "W W W W W W ok real W W",
            "ok ok ok ok ok ok W W real ok",
            "ok ok ok ok ok ok W W ok real",
        ];
        for (r, line) in grid.iter().enumerate() {
            for (c, code) in line.split(' ').enumerate() {
                let want = match code {
                    "EK" => "ever-partners+keep_apart:family",
                    "K" => "keep_apart:family",
                    "W" => "pair_within:site",
                    other => other,
                };
                assert_eq!(names(plan.status(r, c)), want, "cell ({r},{c})");
            }
        }
        // Admissible per row: 4 4 4 6 7 4 1 1 7 7 = 45; real 10; excluded 100-10-45 = 45
        // = 6 (EP+KA) + 7 (KA only: 3 in column 5, 1 at (3,4), 3 in row 5) + 32 (PW:
        // 8 site-N rows × 2 site-S cols + 2 site-S rows × 8 site-N cols).
        let counts = plan.counts();
        assert_eq!(counts.candidates, 100);
        assert_eq!(counts.real, 10);
        assert_eq!(counts.admissible, 45);
        assert_eq!(counts.excluded, 45);
        let by: Vec<(&str, usize)> = counts
            .excluded_by_rule
            .iter()
            .map(|(k, &v)| (k.as_str(), v))
            .collect();
        assert_eq!(
            by,
            vec![
                ("ever-partners", 6),
                ("keep_apart:family", 13),
                ("pair_within:site", 32),
                ("same-participant", 0)
            ]
        );
        // Partners by member index: adults (rows) 4 4 4 6 7 4 1 1 7 7; children (cols)
        // S1 S2 S3 → rows {3,4,8,9} = 4 each; T1 → 7; T2 → 6; K → 4; R, Y → 1; B8, B9 → 7.
        let want: Vec<(usize, usize)> = vec![
            (0, 4),
            (1, 4),
            (2, 4),
            (3, 4),
            (4, 4),
            (5, 4),
            (6, 6),
            (7, 7),
            (8, 7),
            (9, 6),
            (10, 4),
            (11, 4),
            (12, 1),
            (13, 1),
            (14, 1),
            (15, 1),
            (16, 7),
            (17, 7),
            (18, 7),
            (19, 7),
        ];
        assert_eq!(plan.admissible_partners(), want);
        // Dyad 6 (site S, two dyads): only V–Y (6,7) and W–R (7,6).
        let plain = |d: usize| -> Vec<(usize, usize)> {
            plan.pseudo_pairs_of_dyad(d)
                .into_iter()
                .map(|(r, c)| (r.0, c.0))
                .collect()
        };
        assert_eq!(plain(6), vec![(6, 7), (7, 6)]);
        // Dyad 0: row 0 → cols 3,4,8,9; col 0 → rows 3,4,8,9.
        assert_eq!(
            plain(0),
            vec![
                (0, 3),
                (0, 4),
                (0, 8),
                (0, 9),
                (3, 0),
                (4, 0),
                (8, 0),
                (9, 0)
            ]
        );
    }

    // Source: rule definitions; with only built-in rules each of the 140 adults may meet
    // every other dyad's child: 140 × 139 = 19,460 pseudo-pairs (common practice of the
    // field, all cross-dyad adult–child combinations).
    #[test]
    fn unrelated_140_dyads() {
        let members = unrelated_roles(140);
        let plan = PairPlan::build(&members, 140, &roles(), &Rules::default()).unwrap();
        let c = plan.counts();
        assert_eq!(c.candidates, 140 * 140);
        assert_eq!(c.real, 140);
        assert_eq!(c.admissible, 19_460);
        assert_eq!(c.excluded, 0);
        assert!(plan.admissible_partners().iter().all(|&(_, n)| n == 139));
        assert_eq!(plan.admissible_partners().len(), 280);
        assert_eq!(plan.pseudo_pairs_of_dyad(17).len(), 2 * 139);
        // Peers: 280 members, C(280,2) - 140 real = 38,920 pseudo-pairs, 278 partners each.
        let peers = unrelated_peers(140);
        let plan = PairPlan::build(&peers, 140, &Mode::Peers, &Rules::default()).unwrap();
        let c = plan.counts();
        assert_eq!(c.candidates, 280 * 279 / 2);
        assert_eq!(c.admissible, 38_920);
        assert!(plan.admissible_partners().iter().all(|&(_, n)| n == 278));
        assert_eq!(plan.candidates().count(), 280 * 279 / 2);
    }

    // Source: rule definitions — a person recorded in two dyads (peers mode) and the
    // ever-partners rule across recordings.
    #[test]
    fn peers_same_participant_and_ever_partners() {
        // Dyad 0: X–Y; dyad 1: X–Z; dyad 2: Y–W; dyad 3: V–U.
        let ms = vec![
            m(0, "X", None, &[]),
            m(0, "Y", None, &[]),
            m(1, "X", None, &[]),
            m(1, "Z", None, &[]),
            m(2, "Y", None, &[]),
            m(2, "W", None, &[]),
            m(3, "V", None, &[]),
            m(3, "U", None, &[]),
        ];
        let plan = PairPlan::build(&ms, 4, &Mode::Peers, &Rules::default()).unwrap();
        let real: Vec<(usize, usize)> = plan.real.iter().map(|(r, c)| (r.0, c.0)).collect();
        assert_eq!(real, vec![(0, 1), (2, 3), (4, 5), (6, 7)]);
        assert_eq!(names(plan.status(0, 0)), "same-dyad");
        assert_eq!(names(plan.status(0, 1)), "real");
        assert_eq!(names(plan.status(0, 2)), "same-participant"); // X and X
        assert_eq!(names(plan.status(0, 3)), "ever-partners"); // X(0) with Z(1)
        assert_eq!(names(plan.status(3, 0)), "ever-partners"); // symmetric
        assert_eq!(names(plan.status(2, 1)), "ever-partners"); // X(1) with Y(0)
        assert_eq!(names(plan.status(2, 4)), "ever-partners"); // X(1) with Y(2)
        assert_eq!(names(plan.status(1, 4)), "same-participant"); // Y and Y
        assert_eq!(names(plan.status(0, 5)), "ok"); // X with W never met
        assert_eq!(names(plan.status(3, 5)), "ok");
        let c = plan.counts();
        // 28 candidates, 4 real; excluded: (0,2) (1,4) same-participant; ever-partners:
        // {X,Y}: (0,4) (1,2) (2,4); {X,Z}: (0,3); {Y,W}: (1,5); total 5 → 24 - 7 = 17.
        assert_eq!(c.candidates, 28);
        assert_eq!(c.excluded_by_rule["same-participant"], 2);
        assert_eq!(c.excluded_by_rule["ever-partners"], 5);
        assert_eq!(c.admissible, 17);
    }

    // Source: rule definitions — a member whose every candidate is excluded must be
    // named with the excluding rules and their counts.
    #[test]
    fn member_without_partner_is_named() {
        let a = Some("adult");
        let c = Some("child");
        // adult (family, site) / child (family, site):
        // dyad 0: A0 (F, N) / C0 (G, N); dyad 1: A1 (H, N) / C1 (F, N);
        // dyad 2: A2 (K, S) / C2 (F, N).
        // A0: C1, C2 both family F → keep_apart ×2, no partner.
        // A1: C0 admissible.  A2 (site S): C0, C1 at site N → pair_within ×2, no partner.
        // C0: A1 admissible.  C1: A0 family F (keep_apart), A2 site S (pair_within) →
        // no partner.  C2: A1 admissible.
        let ms = vec![
            m(0, "A0", a, &[("family", "F"), ("site", "N")]),
            m(0, "C0", c, &[("family", "G"), ("site", "N")]),
            m(1, "A1", a, &[("family", "H"), ("site", "N")]),
            m(1, "C1", c, &[("family", "F"), ("site", "N")]),
            m(2, "A2", a, &[("family", "K"), ("site", "S")]),
            m(2, "C2", c, &[("family", "F"), ("site", "N")]),
        ];
        let rules = Rules {
            keep_apart: vec!["family".into()],
            pair_within: vec!["site".into()],
        };
        let err = PairPlan::build(&ms, 3, &roles(), &rules).unwrap_err();
        assert_eq!(
            err,
            vec![
                PairingProblem::NoAdmissiblePartner {
                    member: "0:A0".into(),
                    candidates: 2,
                    excluded_by: vec![("keep_apart:family".into(), 2)],
                },
                PairingProblem::NoAdmissiblePartner {
                    member: "1:C1".into(),
                    candidates: 2,
                    excluded_by: vec![
                        ("keep_apart:family".into(), 1),
                        ("pair_within:site".into(), 1)
                    ],
                },
                PairingProblem::NoAdmissiblePartner {
                    member: "2:A2".into(),
                    candidates: 2,
                    excluded_by: vec![("pair_within:site".into(), 2)],
                },
            ]
        );
        assert!(
            err[2]
                .to_string()
                .contains("member 2:A2 has no admissible pseudo-partner")
        );
    }

    // Source: layout contract of the loader (one member per role per dyad).
    #[test]
    fn layout_problems_are_all_reported() {
        let ms = vec![
            m(0, "A0", Some("adult"), &[]),
            m(0, "B0", Some("adult"), &[]),
            m(1, "C1", Some("child"), &[]),
            m(1, "D1", Some("teacher"), &[]),
            m(5, "E5", Some("child"), &[]),
        ];
        let rules = Rules {
            keep_apart: vec!["site".into(), "site".into()],
            pair_within: vec!["site".into()],
        };
        let err = PairPlan::build(&ms, 2, &roles(), &rules).unwrap_err();
        let text: Vec<String> = err.iter().map(|e| e.to_string()).collect();
        assert!(
            matches!(err[0], PairingProblem::RepeatedAttribute { .. }),
            "{text:?}"
        );
        assert!(
            err.iter()
                .any(|e| matches!(e, PairingProblem::ConflictingRules { .. }))
        );
        assert!(
            err.iter()
                .any(|e| matches!(e, PairingProblem::DyadOutOfRange { dyad: 5, .. }))
        );
        assert!(
            err.iter().any(
                |e| matches!(e, PairingProblem::UnknownRole { member, .. } if member == "1:D1")
            )
        );
        assert!(
            err.iter()
                .any(|e| matches!(e, PairingProblem::RepeatedRole { dyad: 0, .. }))
        );
        assert!(err.iter().any(
            |e| matches!(e, PairingProblem::MissingRole { dyad: 0, role, .. } if role == "child")
        ));
        assert!(err.iter().any(
            |e| matches!(e, PairingProblem::MissingRole { dyad: 1, role, .. } if role == "adult")
        ));
        let peers = PairPlan::build(&ms[..3], 2, &Mode::Peers, &Rules::default()).unwrap_err();
        assert!(
            peers
                .iter()
                .any(|e| matches!(e, PairingProblem::DyadSize { dyad: 1, .. }))
        );
    }
}
