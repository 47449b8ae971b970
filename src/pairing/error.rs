//! Errors of the pairing module: problems found while building a plan (all reported at
//! once) and errors while drawing re-pairings. Owns the wording only; each message names
//! the member, dyad or stratum concerned and says what to change.

fn list(ids: &[String]) -> String {
    const SHOWN: usize = 12;
    let mut s = ids
        .iter()
        .take(SHOWN)
        .cloned()
        .collect::<Vec<_>>()
        .join(", ");
    if ids.len() > SHOWN {
        s.push_str(&format!(" and {} more", ids.len() - SHOWN));
    }
    s
}

fn tallies(t: &[(String, usize)]) -> String {
    t.iter()
        .map(|(name, n)| format!("{name} ({n})"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// A problem that stops a plan from being built.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum PairingProblem {
    #[error("the study has no dyads; at least two dyads are needed to form pseudo-pairs")]
    NoDyads,
    #[error(
        "roles mode names `{role}` as both the row role and the column role; give two different roles"
    )]
    SameRoles { role: String },
    #[error("{list} names an empty attribute; remove the empty entry")]
    EmptyAttribute { list: &'static str },
    #[error("{list} names `{attribute}` more than once; list each attribute once")]
    RepeatedAttribute {
        list: &'static str,
        attribute: String,
    },
    #[error(
        "`{attribute}` is in both keep_apart and pair_within, so no pair could ever be admissible; keep it in one list"
    )]
    ConflictingRules { attribute: String },
    #[error(
        "member {member} belongs to dyad {dyad}, but the study has only {n_dyads} dyads (0..{n_dyads}); fix the member list"
    )]
    DyadOutOfRange {
        member: String,
        dyad: usize,
        n_dyads: usize,
    },
    #[error(
        "dyad {dyad} has {} member(s) [{}]; peers mode needs exactly two members per dyad", members.len(), list(members)
    )]
    DyadSize { dyad: usize, members: Vec<String> },
    #[error(
        "dyad {dyad} has no member with role `{role}` (members: [{}]); every dyad needs one member of each role",
        list(members)
    )]
    MissingRole {
        dyad: usize,
        role: String,
        members: Vec<String>,
    },
    #[error(
        "dyad {dyad} has more than one member with role `{role}` ([{}]); every dyad needs exactly one member of each role",
        list(members)
    )]
    RepeatedRole {
        dyad: usize,
        role: String,
        members: Vec<String>,
    },
    #[error(
        "member {member} has role {}, which is neither `{row_role}` nor `{col_role}`; fix its role or the configured roles",
        role.as_deref().map(|r| format!("`{r}`")).unwrap_or_else(|| "none".to_owned())
    )]
    UnknownRole {
        member: String,
        role: Option<String>,
        row_role: String,
        col_role: String,
    },
    #[error(
        "member {member} has no admissible pseudo-partner: all {candidates} of its candidates are excluded by {}; drop this member's dyad or relax the keep_apart/pair_within rules that exclude it",
        tallies(excluded_by)
    )]
    NoAdmissiblePartner {
        member: String,
        candidates: usize,
        /// Each excluding rule with the number of this member's candidates it excludes.
        excluded_by: Vec<(String, usize)>,
    },
}

/// An error while counting or drawing re-pairings.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PairingError {
    #[error(
        "stratum {stratum} has {rows} row member(s) but {cols} column member(s), so its members cannot all be re-paired within it; balance the stratum or drop it from pair_within"
    )]
    UnbalancedStratum {
        stratum: String,
        rows: usize,
        cols: usize,
    },
    #[error(
        "stratum {stratum} has an odd number of members ({size}), so its members cannot all be re-paired within it; balance the stratum or drop it from pair_within"
    )]
    OddStratum { stratum: String, size: usize },
    #[error(
        "no admissible re-pairing exists: the members [{}] can only be paired among the {} members [{}]; drop one of these dyads or relax the rules that exclude their other candidates",
        list(stuck), partners.len(), list(partners)
    )]
    NoRepairing {
        /// Members that cannot all be placed at once.
        stuck: Vec<String>,
        /// All the partners those members have between them (fewer than needed).
        partners: Vec<String>,
    },
    #[error(
        "draw {draw}: {proposals} proposals were all rejected although acceptance was estimated at {acceptance:.3e}; the estimate was wrong, use the chain sampler"
    )]
    RejectionExhausted {
        draw: usize,
        proposals: u64,
        acceptance: f64,
    },
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: the wording contract — messages must name the member and the remedy.
    #[test]
    fn messages_name_member_and_remedy() {
        let e = PairingProblem::NoAdmissiblePartner {
            member: "4:P9".into(),
            candidates: 3,
            excluded_by: vec![("ever-partners".into(), 1), ("keep_apart:family".into(), 3)],
        };
        let s = e.to_string();
        assert!(s.contains("4:P9"), "{s}");
        assert!(
            s.contains("ever-partners (1), keep_apart:family (3)"),
            "{s}"
        );
        assert!(s.contains("relax"), "{s}");
        let many: Vec<String> = (0..20).map(|i| format!("{i}:X")).collect();
        let e = PairingError::NoRepairing {
            stuck: many.clone(),
            partners: many[..3].to_vec(),
        };
        assert!(e.to_string().contains("and 8 more"), "{e}");
    }
}
