//! The null design of the group test: which re-pairings the observed pairing is compared with
//! (the reference set), how many there are, and how they are drawn. Built once per study and
//! read by every command, the report and the manifest, so that none of them can describe a
//! set other than the one the test draws from.
//!
//! Why every re-pairing is the default: under the null hypothesis that synchrony does not
//! depend on who was recorded with whom, the observed pairing is one of the assignments of
//! partners that the rules allow, so the test's reference set must contain it. A set of
//! re-pairings made of pseudo-pairs only never contains it; its T* never uses a real pair's
//! value, centres on the pseudo-pair mean and spreads less than T does, which makes the test
//! liberal when the pools members are re-paired in are small (the README gives the measured
//! rates). Randomisation tests: Edgington & Onghena 2007; Phipson & Smyth 2010 for the
//! p-value with the observed statistic counted once.

use serde::Serialize;

use super::count::RepairingCount;
use super::error::PairingError;
use super::plan::PairPlan;
use super::sampler::{Repairings, SamplerMethod, choose_method, draw_repairings_with};

/// Which re-pairings the group test compares the observed pairing with.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Reference {
    /// Every re-pairing: each pair real or admissible, the observed pairing included.
    All,
    /// Re-pairings made of admissible pseudo-pairs only (approximate: liberal in small pools).
    PseudoOnly,
}

impl Reference {
    /// The names written in `study.toml`, `plan.json` and the manifest.
    pub const NAMES: [(&'static str, Reference); 2] = [
        ("all", Reference::All),
        ("pseudo-only", Reference::PseudoOnly),
    ];

    pub fn name(self) -> &'static str {
        match self {
            Reference::All => "all",
            Reference::PseudoOnly => "pseudo-only",
        }
    }

    /// What the set holds, in words for people.
    pub fn describe(self) -> &'static str {
        match self {
            Reference::All => {
                "every re-pairing (each pair real or admissible; the observed pairing included)"
            }
            Reference::PseudoOnly => {
                "re-pairings of pseudo-pairs only (the observed pairing excluded; approximate)"
            }
        }
    }

    fn other(self) -> Reference {
        match self {
            Reference::All => Reference::PseudoOnly,
            Reference::PseudoOnly => Reference::All,
        }
    }
}

/// The group test's null design: the reference set, its size, the sampler and why.
#[derive(Debug, Clone)]
pub struct NullDesign {
    pub reference: Reference,
    /// Size of the reference set (exact or estimated).
    pub count: RepairingCount,
    /// Size of the other reference set, so the audit can show both.
    pub other_count: RepairingCount,
    pub method: SamplerMethod,
    /// Why this sampler was chosen.
    pub reason: String,
    /// Re-pairings requested (`[inference] permutations`).
    pub requested: usize,
    /// The plan whose admissible cells are the pairs a re-pairing may contain.
    plan: PairPlan,
    /// The observed pairing, sorted, to leave it out of an enumerated set.
    observed: Vec<(u32, u32)>,
}

impl NullDesign {
    /// Decides the reference set, counts both sets and chooses the sampler, once.
    pub fn new(plan: &PairPlan, reference: Reference, requested: usize) -> NullDesign {
        let null_plan = match reference {
            Reference::All => plan.with_real_pairs_in_repairings(),
            Reference::PseudoOnly => plan.clone(),
        };
        let other_plan = match reference.other() {
            Reference::All => plan.with_real_pairs_in_repairings(),
            Reference::PseudoOnly => plan.clone(),
        };
        let count = null_plan.count_repairings();
        let other_count = other_plan.count_repairings();
        let (method, reason) = choose_method(&null_plan, requested);
        let mut observed: Vec<(u32, u32)> = plan
            .real
            .iter()
            .map(|&(r, c)| (r.0 as u32, c.0 as u32))
            .collect();
        observed.sort_unstable();
        NullDesign {
            reference,
            count,
            other_count,
            method,
            reason,
            requested,
            plan: null_plan,
            observed,
        }
    }

    /// Whether row `r` with column `c` may stand in a re-pairing of the reference set.
    pub fn admits(&self, r: usize, c: usize) -> bool {
        self.plan.is_admissible(r, c)
    }

    /// Whether the set is enumerated completely (the p-value is then exact).
    pub fn is_enumerated(&self) -> bool {
        matches!(self.method, SamplerMethod::Enumerated { .. })
    }

    /// The count of a set by name, for the audit.
    pub fn count_of(&self, reference: Reference) -> &RepairingCount {
        if reference == self.reference {
            &self.count
        } else {
            &self.other_count
        }
    }

    /// Draws the re-pairings T is compared with. An enumerated set that contains the observed
    /// pairing is returned without it: the p-value (1 + #{T* ≥ T}) / (K + 1) counts the
    /// observed statistic once itself, so p is then its exact rank in the whole set.
    pub fn draw(&self, seed: u64) -> Result<Repairings, PairingError> {
        let mut reps = draw_repairings_with(&self.plan, &self.method, self.requested, seed)?;
        if reps.exact && self.reference == Reference::All {
            let d = reps.n_dyads;
            let mut kept = Vec::with_capacity(reps.pairs.len());
            let mut sorted = Vec::with_capacity(d);
            for draw in reps.pairs.chunks(d) {
                sorted.clear();
                sorted.extend_from_slice(draw);
                sorted.sort_unstable();
                if sorted != self.observed {
                    kept.extend_from_slice(draw);
                }
            }
            reps.pairs = kept;
        }
        Ok(reps)
    }

    /// A caution for the user when the design is the approximate one.
    pub fn warning(&self) -> Option<String> {
        (self.reference == Reference::PseudoOnly).then(|| {
            "reference = \"pseudo-only\": the group test compares the observed pairing with \
             re-pairings that cannot contain it; this is approximate and rejects too often \
             when members are re-paired in small pools (see the README's calibration table); \
             the default reference = \"all\" is exact under random pairing"
                .to_string()
        })
    }
}

#[cfg(test)]
mod tests {
    use super::super::plan::tests::{family_scenario, roles, unrelated_roles};
    use super::super::{Mode, PairPlan, Rules};
    use super::*;

    // Source: exact enumeration. With only the built-in rules and D unrelated dyads, the
    // pseudo-only set is the derangements of D (OEIS A000166: 1, 0, 1, 2, 9, 44, 265) and the
    // full set is every permutation, D!.
    #[test]
    fn both_sets_are_counted_and_the_full_one_holds_the_observed_pairing() {
        let plan = PairPlan::build(&unrelated_roles(5), 5, &roles(), &Rules::default()).unwrap();
        let all = NullDesign::new(&plan, Reference::All, 10_000);
        assert_eq!(all.count.exact_text.as_deref(), Some("120"));
        assert_eq!(all.other_count.exact_text.as_deref(), Some("44"));
        assert!(all.is_enumerated());
        assert!(all.admits(2, 2));
        let reps = all.draw(1).unwrap();
        // 5! = 120 permutations, the identity left out.
        assert_eq!(reps.len(), 119);
        assert!(reps.pairs.chunks(5).all(|d| d.iter().any(|&(r, c)| r != c)));
        let pseudo = NullDesign::new(&plan, Reference::PseudoOnly, 10_000);
        assert_eq!(pseudo.count.exact_text.as_deref(), Some("44"));
        assert_eq!(
            pseudo.count_of(Reference::All).exact_text.as_deref(),
            Some("120")
        );
        assert!(!pseudo.admits(2, 2));
        assert_eq!(pseudo.draw(1).unwrap().len(), 44);
        assert!(pseudo.warning().is_some() && all.warning().is_none());
    }

    // Source: the rule definitions. Sampled re-pairings of the full set keep real pairs at
    // about the rate of fixed points of a uniform permutation (mean 1 per draw for the 10
    // unrelated dyads here: E[fixed points] = 1 for any D, a classical result), and never
    // contain an excluded pair.
    #[test]
    fn sampled_full_set_keeps_real_pairs_and_respects_the_rules() {
        let plan = PairPlan::build(&unrelated_roles(10), 10, &roles(), &Rules::default()).unwrap();
        let design = NullDesign::new(&plan, Reference::All, 4000);
        assert!(!design.is_enumerated());
        let reps = design.draw(7).unwrap();
        assert_eq!(reps.len(), 4000);
        let fixed = reps.pairs.iter().filter(|(r, c)| r == c).count() as f64 / 4000.0;
        // sd of the mean over 4000 draws is about 1/sqrt(4000) = 0.016.
        assert!((fixed - 1.0).abs() < 0.08, "{fixed}");
        let (members, rules) = family_scenario();
        let plan = PairPlan::build(&members, 10, &roles(), &rules).unwrap();
        let design = NullDesign::new(&plan, Reference::All, 500);
        let reps = design.draw(3).unwrap();
        for &(r, c) in &reps.pairs {
            let (r, c) = (r as usize, c as usize);
            assert!(plan.is_admissible(r, c) || r == c, "({r}, {c})");
        }
        let peers = super::super::plan::tests::unrelated_peers(4);
        let plan = PairPlan::build(&peers, 4, &Mode::Peers, &Rules::default()).unwrap();
        // Perfect matchings of K8: 7!! = 105. Those avoiding the 4 real edges, by
        // inclusion–exclusion over the real edges kept: 105 − 4·15 + 6·3 − 4·1 + 1 = 60.
        let design = NullDesign::new(&plan, Reference::All, 10_000);
        assert_eq!(design.count.exact_text.as_deref(), Some("105"));
        assert_eq!(design.other_count.exact_text.as_deref(), Some("60"));
        assert_eq!(design.draw(1).unwrap().len(), 104);
    }
}
