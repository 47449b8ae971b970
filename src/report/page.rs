//! Finished results → the plain data the HTML page shows (see `data.rs`).

use super::data::{CellPlots, ContrastLine, MatrixPlot, MethodsInput, ReportData, ResultLine};
use super::plan::PlanAudit;
use crate::inference::TestKind;
use crate::pairing::{Reference, Status};
use crate::pipeline::Analysis;
use crate::study::config::{ChannelPairs, Measure, TimeGrid};
use crate::vocab::MemberIx;

fn cell_label(k: &crate::inference::CellKey) -> String {
    format!(
        "{} · {} · {} · {}",
        k.condition, k.chromophore, k.band, k.roi
    )
}

pub fn methods_input(a: &Analysis, audit: &PlanAudit) -> MethodsInput {
    let cfg = &a.study.config;
    let s = &cfg.synchrony;
    MethodsInput {
        tool_version: env!("CARGO_PKG_VERSION").to_string(),
        measure: match s.measure {
            Measure::Wtc => "wtc".into(),
            Measure::Corr => "corr".into(),
        },
        omega0: s.omega0,
        scales_per_octave: s.scales_per_octave,
        bands: cfg
            .bands
            .iter()
            .map(|b| (b.name.clone(), b.min_period_s, b.max_period_s))
            .collect(),
        chromophores: s.chromophores.clone(),
        channel_pairs: match s.channel_pairs {
            ChannelPairs::Same => "same".into(),
            ChannelPairs::All => "all".into(),
        },
        min_channels_per_roi: s.min_channels_per_roi,
        context_s: s.context_s,
        coarse_grid: s.time_grid == TimeGrid::Coarse,
        block_lengths: a
            .study
            .conditions
            .iter()
            .map(|c| {
                (
                    c.name.clone(),
                    c.blocks
                        .iter()
                        .map(|b| b.length as f64 * a.study.dt)
                        .collect(),
                )
            })
            .collect(),
        mode: audit.mode.clone(),
        roles: cfg.pairing.roles.clone(),
        keep_apart: cfg.pairing.keep_apart.clone(),
        pair_within: cfg.pairing.pair_within.clone(),
        n_dyads: a.study.dyads.len(),
        n_members: a.study.members.len(),
        admissible_pairs: audit.admissible_pairs,
        excluded_by_rule: audit
            .excluded_by_rule
            .iter()
            .map(|(k, v)| (k.clone(), *v))
            .collect(),
        repairings_count: audit.repairings_text(),
        repairings_exact: a.repairings.exact,
        permutations: a.repairings.len(),
        sampler: a.repairings.method.to_string(),
        pseudo_only: a.null.reference == Reference::PseudoOnly,
        correction: format!("{:?}", cfg.inference.correction).to_lowercase(),
        family: cfg
            .inference
            .family
            .iter()
            .map(|f| format!("{f:?}").to_lowercase())
            .collect(),
        alpha: cfg.inference.alpha,
        alternative: match cfg.inference.alternative {
            crate::study::config::AlternativeName::Greater => "greater".into(),
            crate::study::config::AlternativeName::TwoSided => "two-sided".into(),
        },
        bootstrap: cfg.inference.bootstrap,
        seed: a.seed,
        allowances: a.study.allowances.clone(),
    }
}

pub fn report_data(a: &Analysis, audit: &PlanAudit, warnings: &[String]) -> ReportData {
    let study = &a.study;
    let n_blocks: usize = study.conditions.iter().map(|c| c.blocks.len()).sum();
    let study_numbers = vec![
        ("dyads".to_string(), study.dyads.len().to_string()),
        ("members".to_string(), study.members.len().to_string()),
        (
            "conditions".to_string(),
            study
                .conditions
                .iter()
                .map(|c| c.name.clone())
                .collect::<Vec<_>>()
                .join(", "),
        ),
        ("blocks".to_string(), n_blocks.to_string()),
        ("channels".to_string(), study.channels.len().to_string()),
        ("ROIs".to_string(), study.rois.join(", ")),
        (
            "chromophores".to_string(),
            study.config.synchrony.chromophores.join(", "),
        ),
        (
            "sampling rate".to_string(),
            format!("{:.3} Hz", 1.0 / study.dt),
        ),
    ];
    let pairing_counts = vec![
        ("candidates".to_string(), audit.candidates.to_string()),
        ("real pairs".to_string(), audit.real.to_string()),
        (
            "admissible pseudo-pairs".to_string(),
            audit.admissible_pairs.to_string(),
        ),
        ("excluded".to_string(), audit.excluded.to_string()),
        (
            "reference set".to_string(),
            format!(
                "{}: {}",
                audit.repairings.reference.name(),
                audit.repairings.reference_description
            ),
        ),
        (
            "re-pairings in the reference set".to_string(),
            format!(
                "{} ({})",
                audit.repairings_text(),
                if audit.repairings.size.exact {
                    "exact"
                } else {
                    "estimate"
                }
            ),
        ),
        (
            "re-pairings used".to_string(),
            a.repairings.len().to_string(),
        ),
        ("sampler".to_string(), a.repairings.method.to_string()),
    ];
    let results = a
        .inference
        .results
        .iter()
        .map(|r| ResultLine {
            condition: r.key.condition.clone(),
            chromophore: r.key.chromophore.clone(),
            band: r.key.band.clone(),
            roi: r.key.roi.clone(),
            test: r.test.to_string(),
            n_dyads: r.n_dyads,
            n_pseudo: r.n_pseudo,
            real_mean: r.real_mean,
            pseudo_mean: r.pseudo_mean,
            excess: r.excess,
            effect_size: r.effect_size,
            ci_low: r.ci_low,
            ci_high: r.ci_high,
            p: r.p,
            p_adj: r.p_adj,
            correction: r.correction.to_string(),
            significant: r.significant,
        })
        .collect();
    let contrasts = a
        .inference
        .contrasts
        .iter()
        .map(|c| ContrastLine {
            contrast: c.contrast.clone(),
            chromophore: c.chromophore.clone(),
            band: c.band.clone(),
            roi: c.roi.clone(),
            n_dyads: c.n_dyads,
            mean_difference: c.mean_difference,
            effect_size: c.effect_size,
            ci_low: c.ci_low,
            ci_high: c.ci_high,
            p: c.p,
            p_adj: c.p_adj,
            significant: c.significant,
        })
        .collect();
    let cells: Vec<CellPlots> = a
        .inference
        .nulls
        .iter()
        .map(|n| {
            let significant = a
                .inference
                .results
                .iter()
                .any(|r| r.key == n.key && r.test == TestKind::Repairing && r.significant);
            let dyads = a
                .inference
                .dyads
                .iter()
                .filter(|d| d.key == n.key)
                .map(|d| (d.dyad.clone(), d.real, d.pseudo_mean))
                .collect();
            CellPlots {
                label: cell_label(&n.key),
                significant,
                observed: n.observed,
                null: n.null.clone(),
                dyads,
            }
        })
        .collect();
    ReportData {
        title: format!("nevermet results: {}", study.config.name),
        tool_version: env!("CARGO_PKG_VERSION").to_string(),
        generated_note: format!("seed {}, {} re-pairings", a.seed, a.repairings.len()),
        study_numbers,
        rules: audit
            .excluded_by_rule
            .iter()
            .map(|(k, v)| (k.clone(), *v))
            .collect(),
        pairing_counts,
        methods: super::methods::paragraph(&methods_input(a, audit)),
        results,
        contrasts,
        cells,
        matrix: matrix(a),
        warnings: warnings.to_vec(),
    }
}

/// The pairing matrix of the most significant re-pairing cell (the first cell when none is).
fn matrix(a: &Analysis) -> Option<MatrixPlot> {
    let best = a
        .inference
        .results
        .iter()
        .filter(|r| r.test == TestKind::Repairing && r.testable)
        .min_by(|x, y| x.p_adj.total_cmp(&y.p_adj).then(x.p.total_cmp(&y.p)))?;
    let cell = a.cells.iter().find(|c| c.key == best.key)?;
    let plan = &a.plan;
    let grid = &plan.grid;
    let status =
        ndarray::Array2::from_shape_fn((grid.n_rows(), grid.n_cols()), |(r, c)| {
            match plan.status(r, c) {
                Status::Real => 2,
                Status::Admissible => 1,
                Status::Excluded(_) => 0,
            }
        });
    let label = |m: &MemberIx| a.study.members[m.0].id.clone();
    Some(MatrixPlot {
        label: cell_label(&best.key),
        row_labels: grid.rows().iter().map(label).collect(),
        col_labels: grid.cols().iter().map(label).collect(),
        values: cell.values.clone(),
        status,
    })
}
