//! Pseudo-pair admissibility, counting and uniform sampling of re-pairings.
//!
//! Owns everything about which members may form a pseudo-pair, how many complete
//! re-pairings exist and how to draw them uniformly and reproducibly. It does no I/O,
//! prints nothing and must not reference any other module of the crate but the shared
//! vocabulary (`crate::vocab`, e.g. the [`PairGrid`](crate::vocab::PairGrid) every stage
//! indexes): the loader hands in [`PairingMember`]s, the statistics code takes
//! [`Repairings`] back.
//!
//! Words: a *dyad* is two people recorded together; a *member* is one person's
//! recording within one dyad; a *participant* is a person id (one person may be a
//! member of several dyads). The *real pair* is the two members of one dyad; a
//! *pseudo-pair* joins members of different dyads; a *re-pairing* assigns every member
//! a partner so that every pair is real or admissible (the observed pairing is one).
//!
//! Flow: [`PairPlan::build`] checks the layout and rules and gives every candidate a
//! [`Status`]; [`NullDesign::new`] decides the group test's reference set (every re-pairing
//! by default, or pseudo-pairs only), counts it and chooses the sampler once;
//! [`NullDesign::draw`] draws from it uniformly.
//!
//! Choices worth knowing:
//! - A blank or missing attribute value never equals anything: it never triggers
//!   keep_apart, and it always fails pair_within (a member with a blank pair_within
//!   value therefore has no partner and the plan is refused, naming it).
//! - Peers mode: `status(r, r)` is `Excluded([SameDyad])`; it is not a candidate and is
//!   not counted. Real pairs are counted as `real`, never under a rule.
//! - `Repairings::exact` is true only for complete enumeration (the exact permutation
//!   distribution); rejection draws are exactly uniform but still a random sample.
//!
//! Module map: `rules` (one pair's reasons), `plan` (the grid, strata, member checks),
//! `null` (the reference set and its sampler, the one value every stage reads),
//! `count` with `permanent`, `exclusion`, `estimate` (how many re-pairings), `matching`
//! (one re-pairing, or why none), `enumerate`, `rejection`, `chain` (the three
//! samplers), `sampler` (method choice, streams, parallel loop), `bits`
//! (support), `error`.

use std::collections::BTreeMap;

mod bits;
mod chain;
mod count;
mod enumerate;
mod error;
mod estimate;
mod exclusion;
mod matching;
mod null;
mod permanent;
mod plan;
mod rejection;
mod rules;
mod sampler;

pub use count::RepairingCount;
pub use error::{PairingError, PairingProblem};
pub use null::{NullDesign, Reference};
pub use plan::{PairPlan, PlanCounts};
pub use rules::{Reason, Status};
pub use sampler::{
    MixingCheck, Repairings, SamplerMethod, choose_method, draw_repairings, draw_repairings_with,
    mixing_check,
};

/// One member (one person's recording within one dyad) as the pairing rules see it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PairingMember {
    /// `"<dyad>:<participant>"`, used in every message about this member.
    pub id: String,
    /// Index of the member's dyad, `0..n_dyads`.
    pub dyad: usize,
    /// Person id; equal ids in different dyads are the same person.
    pub participant: String,
    /// Role within the dyad (required in roles mode, ignored in peers mode).
    pub role: Option<String>,
    /// Attributes the configured rules refer to; a missing or blank value means "unknown".
    pub attrs: BTreeMap<String, String>,
}

/// How candidates are formed.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Mode {
    /// Every pseudo-pair joins a member of `row_role` with a member of `col_role`.
    Roles { row_role: String, col_role: String },
    /// Every unordered pair of members of different dyads is a candidate.
    Peers,
}

/// Configured rules on top of the built-in ones (same-dyad, same-participant,
/// ever-partners).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Rules {
    /// Attributes whose equal, non-blank values forbid a pseudo-pair (e.g. family).
    pub keep_apart: Vec<String>,
    /// Attributes whose values must be equal and non-blank for a pseudo-pair (e.g. site).
    pub pair_within: Vec<String>,
}
