//! The pairing audit: what `plan` prints and what `plan.json` holds.

use std::collections::BTreeMap;
use std::fmt;

use serde::Serialize;

use crate::pairing::{PairPlan, PlanCounts, RepairingCount, SamplerMethod};
use crate::study::Study;
use crate::study::config::{ChannelPairs, Measure};

#[derive(Clone, Debug, Serialize)]
pub struct RepairingsAudit {
    /// The number of admissible re-pairings (or its estimate).
    pub count: f64,
    pub exact: bool,
    /// The exact count in decimal, when known.
    pub count_text: Option<String>,
    pub method: String,
    pub log10: f64,
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
    pub fn new(
        study: &Study,
        plan: &PairPlan,
        counts: &PlanCounts,
        rc: &RepairingCount,
        method: SamplerMethod,
        reason: String,
    ) -> Self {
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
            mode: if plan.peers {
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
                count: rc.value,
                exact: rc.exact,
                count_text: rc.exact_text.clone(),
                method: rc.method.clone(),
                log10: rc.log10,
            },
            sampler: SamplerAudit {
                description: method.to_string(),
                method,
                reason,
                draws: study.config.inference.permutations,
            },
            cost: CostAudit {
                pairs,
                pair_blocks: pairs as u64 * blocks as u64 * per_block * channel_pairs as u64,
                transforms,
            },
        }
    }

    /// The number of re-pairings as people read it.
    pub fn repairings_text(&self) -> String {
        match (&self.repairings.count_text, self.repairings.exact) {
            (Some(t), true) => t.clone(),
            _ if self.repairings.log10.is_finite() && self.repairings.log10 > 15.0 => {
                format!("about 10^{:.1}", self.repairings.log10)
            }
            _ => format!("about {:.3e}", self.repairings.count),
        }
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
        writeln!(
            f,
            "  re-pairings    {} ({}, {})",
            self.repairings_text(),
            if self.repairings.exact {
                "exact"
            } else {
                "estimate"
            },
            self.repairings.method
        )?;
        writeln!(f, "  sampler        {}", self.sampler.description)?;
        writeln!(f, "                 why: {}", self.sampler.reason)?;
        writeln!(
            f,
            "  cost           {} pairs, {} pair-blocks, {} transforms",
            self.cost.pairs, self.cost.pair_blocks, self.cost.transforms
        )
    }
}
