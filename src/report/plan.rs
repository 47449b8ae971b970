//! The pairing audit: what `plan` prints and what `plan.json` holds.

use std::collections::BTreeMap;
use std::fmt;

use serde::Serialize;

use crate::pairing::{NullDesign, PairPlan, PlanCounts, Reference, RepairingCount, SamplerMethod};
use crate::study::Study;
use crate::study::config::{ChannelPairs, Measure};

/// The size of one reference set.
#[derive(Clone, Debug, Serialize)]
pub struct SetAudit {
    /// The number of re-pairings (or its estimate); beyond the double range see `log10`.
    pub count: f64,
    pub exact: bool,
    /// The exact count in decimal, every digit, when known.
    pub count_text: Option<String>,
    pub method: String,
    pub log10: f64,
}

impl SetAudit {
    fn new(rc: &RepairingCount) -> Self {
        SetAudit {
            count: rc.value,
            exact: rc.exact,
            count_text: rc.exact_text.clone(),
            method: rc.method.clone(),
            log10: rc.log10,
        }
    }

    /// The count as people read it: every digit up to 15 of them, scientific form beyond,
    /// "about" before an estimate.
    pub fn readable(&self) -> String {
        match (&self.count_text, self.exact) {
            (Some(t), true) if t.len() <= 15 => t.clone(),
            (_, true) => scientific(self.log10),
            _ if self.log10.is_finite() => format!("about {}", scientific(self.log10)),
            _ => "about 0".to_string(),
        }
    }
}

/// `m × 10^e` with three significant digits, from a base-10 logarithm.
fn scientific(log10: f64) -> String {
    if !log10.is_finite() {
        return "0".to_string();
    }
    let mut e = log10.floor();
    let mut m = 10f64.powf(log10 - e);
    if (m * 100.0).round() >= 1000.0 {
        m /= 10.0;
        e += 1.0;
    }
    if e < 6.0 {
        return format!("{:.0}", 10f64.powf(log10));
    }
    format!("{m:.2} × 10^{e}")
}

/// The group test's reference set and the sizes of both sets.
#[derive(Clone, Debug, Serialize)]
pub struct RepairingsAudit {
    /// The set the group test draws from.
    pub reference: Reference,
    pub reference_description: String,
    /// Its size (`count`, `exact`, `count_text`, `method`, `log10`).
    #[serde(flatten)]
    pub size: SetAudit,
    /// Both sets by name (`all`, `pseudo-only`).
    pub sets: BTreeMap<String, SetAudit>,
}

#[derive(Clone, Debug, Serialize)]
pub struct SamplerAudit {
    pub method: SamplerMethod,
    pub description: String,
    pub reason: String,
    pub draws: usize,
}

#[derive(Clone, Debug, Serialize)]
pub struct CostAudit {
    /// Pairs the engine computes: real pairs plus admissible pseudo-pairs.
    pub pairs: usize,
    /// Pair × block × chromophore × band × channel pair evaluations.
    pub pair_blocks: u64,
    /// Member transforms (member × block × chromophore × band × channel); zero for correlation.
    pub transforms: u64,
}

/// The audit of one pair plan.
#[derive(Clone, Debug, Serialize)]
pub struct PlanAudit {
    pub mode: String,
    pub candidates: usize,
    pub real: usize,
    pub admissible_pairs: usize,
    pub excluded: usize,
    pub excluded_by_rule: BTreeMap<String, usize>,
    /// Member id → number of admissible pseudo-partners.
    pub members: BTreeMap<String, usize>,
    pub partners_min: usize,
    pub partners_median: f64,
    pub partners_max: usize,
    pub fewest: Vec<String>,
    pub repairings: RepairingsAudit,
    pub sampler: SamplerAudit,
    pub cost: CostAudit,
}

impl PlanAudit {
    pub fn new(study: &Study, plan: &PairPlan, counts: &PlanCounts, null: &NullDesign) -> Self {
        let partners = plan.admissible_partners();
        let members: BTreeMap<String, usize> = partners
            .iter()
            .map(|&(m, n)| (study.members[m].id.clone(), n))
            .collect();
        let mut counts_only: Vec<usize> = partners.iter().map(|p| p.1).collect();
        counts_only.sort_unstable();
        let len = counts_only.len();
        let median = match len {
            0 => f64::NAN,
            _ if len % 2 == 1 => counts_only[len / 2] as f64,
            _ => (counts_only[len / 2 - 1] + counts_only[len / 2]) as f64 / 2.0,
        };
        let min = counts_only.first().copied().unwrap_or(0);
        let fewest: Vec<String> = partners
            .iter()
            .filter(|p| p.1 == min)
            .map(|&(m, _)| study.members[m].id.clone())
            .take(10)
            .collect();
        let pairs = counts.real + counts.admissible;
        let cfg = &study.config.synchrony;
        let blocks: usize = study.conditions.iter().map(|c| c.blocks.len()).sum();
        let bands = match cfg.measure {
            Measure::Wtc => study.config.bands.len(),
            Measure::Corr => 1,
        };
        let nch = study.channels.len();
        let channel_pairs = match cfg.channel_pairs {
            ChannelPairs::Same => nch,
            ChannelPairs::All => nch * nch,
        };
        let per_block = (cfg.chromophores.len() * bands) as u64;
        let transforms = match cfg.measure {
            Measure::Wtc => study.members.len() as u64 * blocks as u64 * per_block * nch as u64,
            Measure::Corr => 0,
        };
        PlanAudit {
            mode: if plan.peers() {
                "peers".into()
            } else {
                "roles".into()
            },
            candidates: counts.candidates,
            real: counts.real,
            admissible_pairs: counts.admissible,
            excluded: counts.excluded,
            excluded_by_rule: counts.excluded_by_rule.clone(),
            members,
            partners_min: min,
            partners_median: median,
            partners_max: counts_only.last().copied().unwrap_or(0),
            fewest,
            repairings: RepairingsAudit {
                reference: null.reference,
                reference_description: null.reference.describe().to_string(),
                size: SetAudit::new(&null.count),
                sets: Reference::NAMES
                    .iter()
                    .map(|&(name, r)| (name.to_string(), SetAudit::new(null.count_of(r))))
                    .collect(),
            },
            sampler: SamplerAudit {
                description: null.method.to_string(),
                method: null.method.clone(),
                reason: null.reason.clone(),
                draws: null.requested,
            },
            cost: CostAudit {
                pairs,
                pair_blocks: pairs as u64 * blocks as u64 * per_block * channel_pairs as u64,
                transforms,
            },
        }
    }

    /// The size of the reference set as people read it.
    pub fn repairings_text(&self) -> String {
        self.repairings.size.readable()
    }
}

impl fmt::Display for PlanAudit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        writeln!(f, "pairing audit ({} mode)", self.mode)?;
        writeln!(f, "  candidates     {}", self.candidates)?;
        writeln!(f, "  real pairs     {}", self.real)?;
        writeln!(f, "  admissible     {}", self.admissible_pairs)?;
        writeln!(f, "  excluded       {}", self.excluded)?;
        for (rule, n) in &self.excluded_by_rule {
            writeln!(f, "    {rule:<28} {n}")?;
        }
        writeln!(
            f,
            "  partners       min {} / median {} / max {} admissible pseudo-partners per member",
            self.partners_min, self.partners_median, self.partners_max
        )?;
        writeln!(f, "  fewest         {}", self.fewest.join(", "))?;
        let r = &self.repairings;
        writeln!(
            f,
            "  reference set  {}: {}",
            r.reference.name(),
            r.reference_description
        )?;
        for (name, set) in &r.sets {
            let used = if name == r.reference.name() {
                "  <- used by the test"
            } else {
                ""
            };
            writeln!(
                f,
                "  re-pairings    {name:<12} {} ({}, {}){used}",
                set.readable(),
                if set.exact { "exact" } else { "estimate" },
                set.method
            )?;
        }
        writeln!(f, "  sampler        {}", self.sampler.description)?;
        writeln!(f, "                 why: {}", self.sampler.reason)?;
        writeln!(
            f,
            "  cost           {} pairs, {} pair-blocks, {} transforms",
            self.cost.pairs, self.cost.pair_blocks, self.cost.transforms
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn set(text: Option<&str>, exact: bool, log10: f64) -> SetAudit {
        SetAudit {
            count: 10f64.powf(log10),
            exact,
            count_text: text.map(str::to_string),
            method: String::new(),
            log10,
        }
    }

    // Source: decimal arithmetic: the 78-digit count 227·10^75 is 2.27 × 10^77. Up to 15
    // digits are shown as they are, longer counts in scientific form from log10.
    #[test]
    fn long_counts_are_shown_in_scientific_form() {
        assert_eq!(
            set(Some("254016"), true, 254016f64.log10()).readable(),
            "254016"
        );
        let digits = "227".to_string() + &"0".repeat(75);
        assert_eq!(digits.len(), 78);
        let long = set(Some(&digits), true, 2.27f64.log10() + 77.0);
        assert_eq!(long.readable(), "2.27 × 10^77");
        assert_eq!(set(None, false, 9.999_999).readable(), "about 1.00 × 10^10");
        assert_eq!(set(None, false, 3.0).readable(), "about 1000");
    }
}
