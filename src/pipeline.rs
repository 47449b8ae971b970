//! The main job as one function per arrow of the data flow: a validated study → the pair plan
//! → the re-pairings → the synchrony matrices → inference. This module only converts between
//! the stages' plain types; each stage's logic lives in its own module. `job` runs the whole
//! analysis into a folder for the commands that need it (`run`, `replay`).

mod job;

pub use job::{Job, Outcome, execute, set_threads};

use std::time::Instant;

use crate::engine::{self, EngineOptions, PairRef, Progress, Synchrony};
use crate::inference::{self, CellKey, CellMatrix, InferenceOutput};
use crate::pairing::{self, NullDesign, PairPlan, PairingMember, PlanCounts, Repairings};
use crate::study::Study;
use crate::study::config::{AlternativeName, Axis, CorrectionName, PairingMode};

/// The pairing rules' view of the study's members.
pub fn pairing_members(study: &Study) -> Vec<PairingMember> {
    study
        .members
        .iter()
        .map(|m| PairingMember {
            id: m.id.clone(),
            dyad: m.dyad,
            participant: m.participant.clone(),
            role: m.role.clone(),
            attrs: m.attrs.clone(),
        })
        .collect()
}

pub fn pairing_mode(study: &Study) -> pairing::Mode {
    match study.config.pairing.mode {
        PairingMode::Roles => pairing::Mode::Roles {
            row_role: study.config.pairing.roles[0].clone(),
            col_role: study.config.pairing.roles[1].clone(),
        },
        PairingMode::Peers => pairing::Mode::Peers,
    }
}

/// Builds the pair plan; a problem message per member left without partners, and so on.
pub fn build_plan(study: &Study) -> Result<PairPlan, Vec<String>> {
    let rules = pairing::Rules {
        keep_apart: study.config.pairing.keep_apart.clone(),
        pair_within: study.config.pairing.pair_within.clone(),
    };
    PairPlan::build(
        &pairing_members(study),
        study.dyads.len(),
        &pairing_mode(study),
        &rules,
    )
    .map_err(|problems| problems.iter().map(|p| p.to_string()).collect())
}

/// Every pair the engine computes: the real pairs and the admissible pseudo-pairs, in the
/// plan's candidate order (peers: each unordered pair once).
pub fn engine_pairs(plan: &PairPlan) -> Vec<PairRef> {
    plan.candidates()
        .filter_map(|(r, c, status)| {
            let real = matches!(status, pairing::Status::Real);
            (real || status.is_admissible()).then(|| PairRef {
                row: r,
                col: c,
                a: plan.grid.row_member(r),
                b: plan.grid.col_member(c),
                real,
            })
        })
        .collect()
}

/// Every real and admissible pair's synchrony values for a study and its pair plan.
pub fn synchrony(
    study: &Study,
    plan: &PairPlan,
    memory_bytes: u64,
    progress: &dyn Progress,
) -> Result<Synchrony, engine::EngineError> {
    engine::compute(
        study,
        &engine_pairs(plan),
        &plan.grid,
        EngineOptions { memory_bytes },
        progress,
    )
}

/// The inference stage's view of the pair plan and of the null design: a pair may stand in
/// a draw when the design admits it (with the default reference set real pairs may), while
/// the pseudo-pair lists behind the pseudo means hold admissible pseudo-pairs only.
pub fn layout(study: &Study, plan: &PairPlan, design: &NullDesign) -> inference::Layout {
    let grid = plan.grid.clone();
    let admissible = ndarray::Array2::from_shape_fn((grid.n_rows(), grid.n_cols()), |(r, c)| {
        design.admits(r, c)
    });
    inference::Layout {
        grid,
        dyads: study.dyads.iter().map(|d| d.id.clone()).collect(),
        real: plan.real.clone(),
        admissible,
        dyad_pseudo: (0..plan.n_dyads())
            .map(|d| plan.pseudo_pairs_of_dyad(d))
            .collect(),
    }
}

/// The group test's null design for a study: its configured reference set, counted, with the
/// sampler chosen once for the configured number of re-pairings.
pub fn null_design(study: &Study, plan: &PairPlan) -> NullDesign {
    NullDesign::new(
        plan,
        study.config.inference.reference,
        study.config.inference.permutations,
    )
}

/// The synchrony matrices as inference cells, in (condition, chromophore, band, roi) order.
pub fn cells(syn: &Synchrony) -> Vec<CellMatrix> {
    syn.matrices()
        .into_iter()
        .map(|m| CellMatrix {
            key: CellKey {
                condition: syn.conditions[m.condition].clone(),
                chromophore: syn.chromophores[m.chromophore].clone(),
                band: syn.bands[m.band].clone(),
                roi: syn.rois[m.roi].clone(),
            },
            values: m.values,
        })
        .collect()
}

pub fn inference_config(study: &Study, seed: u64) -> inference::InferenceConfig {
    let inf = &study.config.inference;
    inference::InferenceConfig {
        alternative: match inf.alternative {
            AlternativeName::Greater => inference::Alternative::Greater,
            AlternativeName::TwoSided => inference::Alternative::TwoSided,
        },
        alpha: inf.alpha,
        correction: match inf.correction {
            CorrectionName::Maxstat => inference::Correction::MaxStat,
            CorrectionName::Holm => inference::Correction::Holm,
            CorrectionName::Bh => inference::Correction::Bh,
            CorrectionName::By => inference::Correction::By,
            CorrectionName::Bonferroni => inference::Correction::Bonferroni,
            CorrectionName::None => inference::Correction::None,
        },
        family: inf
            .family
            .iter()
            .map(|a| match a {
                Axis::Band => inference::FamilyAxis::Band,
                Axis::Roi => inference::FamilyAxis::Roi,
                Axis::Chromophore => inference::FamilyAxis::Chromophore,
            })
            .collect(),
        bootstrap: inf.bootstrap,
        sign_flips: inf.permutations,
        seed,
        contrasts: study
            .config
            .contrasts
            .iter()
            .map(|c| inference::ContrastSpec {
                name: c.name.clone(),
                condition_a: c.conditions[0].clone(),
                condition_b: c.conditions[1].clone(),
            })
            .collect(),
    }
}

/// Seeds of the independent random streams, derived from the master seed so that the
/// re-pairings and the inference resampling never share a stream.
pub fn stream_seeds(master: u64) -> (u64, u64) {
    (master, master ^ 0x9e37_79b9_7f4a_7c15)
}

#[derive(Clone, Copy, Debug)]
pub struct AnalysisOptions {
    pub seed: u64,
    pub memory_bytes: u64,
}

/// Everything the outputs are written from.
pub struct Analysis {
    pub study: Study,
    pub plan: PairPlan,
    pub counts: PlanCounts,
    /// The reference set, its size and sampler: what every output says the test drew from.
    pub null: NullDesign,
    pub repairings: Repairings,
    pub synchrony: Synchrony,
    pub cells: Vec<CellMatrix>,
    pub inference: InferenceOutput,
    pub seed: u64,
    /// Wall time per stage (s), in stage order.
    pub timings: Vec<(String, f64)>,
}

/// Runs plan → re-pairings → synchrony → inference on a validated study.
pub fn analyse(
    study: Study,
    opts: AnalysisOptions,
    progress: &dyn Progress,
) -> anyhow::Result<Analysis> {
    let mut timings = Vec::new();
    let mut clock = Instant::now();
    let mut lap = |name: &str, timings: &mut Vec<(String, f64)>| {
        timings.push((name.to_string(), clock.elapsed().as_secs_f64()));
        clock = Instant::now();
    };
    let plan = build_plan(&study)
        .map_err(|p| anyhow::anyhow!("pairing problems:\n  - {}", p.join("\n  - ")))?;
    let counts = plan.counts();
    let null = null_design(&study, &plan);
    lap("plan", &mut timings);
    let (repair_seed, inference_seed) = stream_seeds(opts.seed);
    let repairings = null.draw(repair_seed)?;
    lap("re-pairings", &mut timings);
    let synchrony = synchrony(&study, &plan, opts.memory_bytes, progress)?;
    lap("synchrony", &mut timings);
    timings.push(("transforms".to_string(), synchrony.timing.transforms_s));
    timings.push(("pairs".to_string(), synchrony.timing.pairs_s));
    let cells = cells(&synchrony);
    let layout = layout(&study, &plan, &null);
    let draws = inference::Draws {
        pairs: &repairings.pairs,
        n_dyads: repairings.n_dyads,
        exact: repairings.exact,
    };
    let inference = inference::try_infer(
        &layout,
        &cells,
        &draws,
        &inference_config(&study, inference_seed),
    )?;
    lap("inference", &mut timings);
    Ok(Analysis {
        study,
        plan,
        counts,
        null,
        repairings,
        synchrony,
        cells,
        inference,
        seed: opts.seed,
        timings,
    })
}
