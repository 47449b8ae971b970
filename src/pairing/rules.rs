//! Rule evaluation for one candidate pair: which rules forbid it, named and ordered.
//!
//! Owns the rule names, their order and the meaning of blank attribute values. It must
//! not know about plans, counting or sampling: it answers for one pair at a time.

use std::collections::BTreeSet;
use std::fmt;

use super::{PairingMember, Rules};

/// Why a candidate pair cannot be a pseudo-pair. The order of the variants is the order
/// in which reasons are recorded.
#[derive(Debug, Clone, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Reason {
    /// Both members belong to the same dyad. Real pairs get [`Status::Real`] instead;
    /// this reason marks only a member against itself in peers mode.
    SameDyad,
    /// Two recordings of one person.
    SameParticipant,
    /// The two persons form some real dyad of the study, so they have interacted.
    EverPartners,
    /// Equal non-blank values of this attribute.
    KeepApart(String),
    /// Unequal values of this attribute, or a blank value on either side.
    PairWithin(String),
}

impl fmt::Display for Reason {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Reason::SameDyad => f.write_str("same-dyad"),
            Reason::SameParticipant => f.write_str("same-participant"),
            Reason::EverPartners => f.write_str("ever-partners"),
            Reason::KeepApart(a) => write!(f, "keep_apart:{a}"),
            Reason::PairWithin(a) => write!(f, "pair_within:{a}"),
        }
    }
}

impl serde::Serialize for Reason {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

/// What a candidate pair is.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub enum Status {
    /// The two members of one dyad: the observed pair, never a pseudo-pair.
    Real,
    /// A pseudo-pair no rule forbids.
    Admissible,
    /// Forbidden, with every rule that forbids it in rule order.
    Excluded(Vec<Reason>),
}

impl Status {
    pub fn is_admissible(&self) -> bool {
        matches!(self, Status::Admissible)
    }

    /// The excluding rules; empty for real and admissible pairs.
    pub fn reasons(&self) -> &[Reason] {
        match self {
            Status::Excluded(r) => r,
            _ => &[],
        }
    }
}

/// A value counts only if it has non-blank content; surrounding blanks are ignored so
/// that `"F1 "` and `"F1"` are the same family.
fn value<'a>(m: &'a PairingMember, attr: &str) -> Option<&'a str> {
    m.attrs
        .get(attr)
        .map(|v| v.trim())
        .filter(|v| !v.is_empty())
}

fn key(a: &str, b: &str) -> (String, String) {
    if a <= b {
        (a.to_owned(), b.to_owned())
    } else {
        (b.to_owned(), a.to_owned())
    }
}

/// Rules compiled for one study: the configured lists plus the set of persons who
/// were ever recorded together.
pub(super) struct RuleSet<'a> {
    rules: &'a Rules,
    partners: BTreeSet<(String, String)>,
}

impl<'a> RuleSet<'a> {
    /// `real` lists, per dyad, the two members recorded together.
    pub(super) fn new(
        rules: &'a Rules,
        members: &[PairingMember],
        real: &[(usize, usize)],
    ) -> Self {
        let partners = real
            .iter()
            .map(|&(a, b)| key(&members[a].participant, &members[b].participant))
            .collect();
        RuleSet { rules, partners }
    }

    /// Every rule that forbids `a` with `b`, in rule order. The caller handles the real
    /// pair and a member against itself; here `a` and `b` are members of different dyads.
    pub(super) fn reasons(&self, a: &PairingMember, b: &PairingMember) -> Vec<Reason> {
        let mut out = Vec::new();
        if a.participant == b.participant {
            out.push(Reason::SameParticipant);
        }
        if self.partners.contains(&key(&a.participant, &b.participant)) {
            out.push(Reason::EverPartners);
        }
        for attr in &self.rules.keep_apart {
            if let (Some(x), Some(y)) = (value(a, attr), value(b, attr))
                && x == y
            {
                out.push(Reason::KeepApart(attr.clone()));
            }
        }
        for attr in &self.rules.pair_within {
            match (value(a, attr), value(b, attr)) {
                (Some(x), Some(y)) if x == y => {}
                _ => out.push(Reason::PairWithin(attr.clone())),
            }
        }
        out
    }

    /// The names of all rules that can exclude a pseudo-pair, in rule order; these are
    /// the keys of the per-rule counts.
    pub(super) fn names(&self) -> Vec<String> {
        let mut v = vec![
            Reason::SameParticipant.to_string(),
            Reason::EverPartners.to_string(),
        ];
        v.extend(
            self.rules
                .keep_apart
                .iter()
                .map(|a| Reason::KeepApart(a.clone()).to_string()),
        );
        v.extend(
            self.rules
                .pair_within
                .iter()
                .map(|a| Reason::PairWithin(a.clone()).to_string()),
        );
        v
    }
}

/// The pair_within values of a member, joined into a stratum label such as
/// `site=north`; `None` when a value is blank (such a member has no admissible partner).
pub(super) fn stratum_label(m: &PairingMember, rules: &Rules) -> Option<String> {
    if rules.pair_within.is_empty() {
        return Some("all members".to_owned());
    }
    let mut parts = Vec::with_capacity(rules.pair_within.len());
    for attr in &rules.pair_within {
        parts.push(format!("{attr}={}", value(m, attr)?));
    }
    Some(parts.join(", "))
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::collections::BTreeMap;

    fn member(dyad: usize, p: &str, attrs: &[(&str, &str)]) -> PairingMember {
        PairingMember {
            id: format!("{dyad}:{p}"),
            dyad,
            participant: p.to_owned(),
            role: None,
            attrs: attrs
                .iter()
                .map(|(k, v)| (k.to_string(), v.to_string()))
                .collect::<BTreeMap<_, _>>(),
        }
    }

    // Source: the rule definitions of the pairing module (names and order are the
    // contract with the report writer), checked on hand-made members.
    #[test]
    fn reasons_are_recorded_in_rule_order_with_exact_names() {
        let rules = Rules {
            keep_apart: vec!["family".into(), "school".into()],
            pair_within: vec!["site".into(), "lang".into()],
        };
        let members = vec![
            member(0, "A", &[("family", "F1"), ("school", "s1"), ("site", "N")]),
            member(0, "B", &[("family", "F1"), ("site", "N"), ("lang", "en")]),
            member(
                1,
                "A",
                &[("family", "F1 "), ("school", "s1"), ("site", "S")],
            ),
        ];
        let rs = RuleSet::new(&rules, &members, &[(0, 1)]);
        // A (dyad 1) with B (dyad 0): A and B were recorded together in dyad 0.
        let r = rs.reasons(&members[2], &members[1]);
        let names: Vec<String> = r.iter().map(|x| x.to_string()).collect();
        assert_eq!(
            names,
            vec![
                "ever-partners",
                "keep_apart:family",
                "pair_within:site",
                "pair_within:lang"
            ]
        );
        // A with A: same person, equal family and school (blank-trimmed), lang blank on both.
        let r = rs.reasons(&members[2], &members[0]);
        let names: Vec<String> = r.iter().map(|x| x.to_string()).collect();
        assert_eq!(
            names,
            vec![
                "same-participant",
                "keep_apart:family",
                "keep_apart:school",
                "pair_within:site",
                "pair_within:lang"
            ]
        );
        assert_eq!(Reason::SameDyad.to_string(), "same-dyad");
    }

    // Source: rule definitions — blank never equals blank for keep_apart, and a blank
    // on either side fails pair_within.
    #[test]
    fn blank_values_are_never_equal() {
        let rules = Rules {
            keep_apart: vec!["family".into()],
            pair_within: vec!["site".into()],
        };
        let a = member(0, "A", &[("family", ""), ("site", "N")]);
        let b = member(1, "B", &[("family", "  "), ("site", "N")]);
        let c = member(2, "C", &[("site", "")]);
        let rs = RuleSet::new(&rules, &[], &[]);
        assert!(rs.reasons(&a, &b).is_empty());
        assert_eq!(rs.reasons(&a, &c), vec![Reason::PairWithin("site".into())]);
        assert_eq!(stratum_label(&c, &rules), None);
        assert_eq!(stratum_label(&a, &rules).as_deref(), Some("site=N"));
    }
}
