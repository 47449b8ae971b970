//! Inference stage: turns the synchrony matrices of every cell (condition × chromophore ×
//! band × roi) and the sampled re-pairings into test results. It only indexes the
//! matrices, never recomputes synchrony, and never draws re-pairings itself (the sampler
//! does); it must not depend on any other module of the crate.
//!
//! Per cell it runs the re-pairing group test (`repairing`) and the dyad contrast
//! (`dyad`), then the condition contrasts, and adjusts the p-values within families
//! (`family`, `correction`). Results are bit-identical for any thread count: every
//! parallel task is a pure function of its inputs, results are collected in input order,
//! and every random stream is a pure function of (seed, task index).

mod adjust;
mod bootstrap;
mod contrasts;
pub mod correction;
mod dyad;
mod family;
mod layout;
mod repairing;
mod signflip;
mod stats;
#[cfg(test)]
mod tests;
pub mod ttest;
mod types;

use std::collections::HashMap;
use std::sync::OnceLock;

use rayon::prelude::*;

pub use types::{
    Alternative, CellKey, CellMatrix, ContrastRow, ContrastSpec, Correction, Draws, DyadRow,
    FamilyAxis, InferenceConfig, InferenceError, InferenceOutput, Layout, NullSummary, ResultRow,
    TestKind,
};

use dyad::DyadCell;
use layout::Prepared;
use repairing::GroupTest;
use signflip::FlipSet;

/// Runs every test on every cell.
///
/// # Panics
/// When the inputs do not fit together (see [`try_infer`], which reports it instead).
pub fn infer(
    layout: &Layout,
    cells: &[CellMatrix],
    draws: &Draws,
    cfg: &InferenceConfig,
) -> InferenceOutput {
    try_infer(layout, cells, draws, cfg).unwrap_or_else(|e| panic!("{e}"))
}

/// Runs every test on every cell, reporting inconsistent inputs as an error.
pub fn try_infer(
    layout: &Layout,
    cells: &[CellMatrix],
    draws: &Draws,
    cfg: &InferenceConfig,
) -> Result<InferenceOutput, InferenceError> {
    let prep = layout::prepare(layout, cells, draws, cfg)?;
    let mut warnings = input_warnings(&prep, cells, cfg);

    let per_cell: Vec<CellOutcome> = cells
        .par_iter()
        .enumerate()
        .map(|(index, cell)| analyse_cell(index, cell, &prep, cfg))
        .collect();

    // Re-pairing group test: adjust within families.
    let repair_adj = adjust::adjust_repairing(cells, &per_cell, cfg, &mut warnings);

    // Dyad contrast: sign flips and adjustment within families. The Monte Carlo flip set
    // is built at most once and shared by every family that needs it.
    let random_flips: OnceLock<FlipSet> = OnceLock::new();
    let random = || {
        random_flips
            .get_or_init(|| FlipSet::random(prep.n_dyads, cfg.sign_flips, cfg.seed, 0))
            .clone()
    };
    let dyad_members: Vec<usize> = (0..cells.len())
        .filter(|&i| per_cell[i].dyad.untestable.is_none())
        .collect();
    let dyad_p: Vec<f64> = per_cell.iter().map(|c| c.dyad.test.p).collect();
    let dyad_items: Vec<Vec<(usize, f64)>> = per_cell.iter().map(|c| c.dyad.items()).collect();
    let (dyad_flip_p, dyad_adj) = adjust::adjust_flipped(
        &dyad_members,
        |i| (cells[i].key.condition.as_str(), &cells[i].key),
        &dyad_p,
        &dyad_items,
        cfg.alternative,
        &prep,
        cfg,
        &random,
    );

    // Condition contrasts.
    let (contrast_rows, mut contrast_warnings) =
        contrasts::run_contrasts(cells, &per_cell, &prep, cfg, &random);
    warnings.append(&mut contrast_warnings);
    if cfg.correction == Correction::MaxStat && cfg.sign_flips == 0 {
        warnings.push(
            "maxstat correction of the dyad and condition contrasts needs sign flips; \
             their adjusted p-values are NaN"
                .to_owned(),
        );
    }

    let mut results = Vec::with_capacity(2 * cells.len());
    let mut dyads = Vec::with_capacity(cells.len() * prep.n_dyads);
    let mut nulls = Vec::with_capacity(cells.len());
    for (i, (cell, outcome)) in cells.iter().zip(per_cell).enumerate() {
        let CellOutcome {
            group: g,
            ci,
            dyad: dc,
        } = outcome;
        if let Some(why) = &g.untestable {
            warnings.push(format!(
                "re-pairing test untestable for cell {}: {why}",
                cell.key
            ));
        }
        if let Some(why) = &dc.untestable {
            warnings.push(format!(
                "dyad contrast untestable for cell {}: {why}",
                cell.key
            ));
        }
        results.push(repairing_row(cell, &g, ci, repair_adj[i], cfg));
        results.push(dyad_row(cell, &dc, dyad_flip_p[i], dyad_adj[i], cfg));
        for (d, name) in layout.dyads.iter().enumerate() {
            dyads.push(DyadRow {
                dyad: name.clone(),
                key: cell.key.clone(),
                real: dc.real[d],
                pseudo_mean: dc.pseudo[d],
                n_pseudo: dc.n_pseudo[d],
            });
        }
        nulls.push(NullSummary {
            key: cell.key.clone(),
            observed: g.observed,
            null: g.null,
        });
    }
    Ok(InferenceOutput {
        results,
        contrasts: contrast_rows,
        dyads,
        nulls,
        warnings,
    })
}

/// Everything computed for one cell before the families are formed.
pub(crate) struct CellOutcome {
    pub group: GroupTest,
    /// Bootstrap interval of the group test's excess.
    pub ci: (f64, f64),
    pub dyad: DyadCell,
}

/// The per-cell work: group test, its bootstrap interval (stream (seed, cell index)) and
/// the dyad contrast.
fn analyse_cell(
    index: usize,
    cell: &CellMatrix,
    prep: &Prepared,
    cfg: &InferenceConfig,
) -> CellOutcome {
    let values = cell.flat();
    let g = repairing::group_test(values, prep, cfg.alternative);
    let ci = if g.untestable.is_none() {
        let pseudo: Vec<(usize, usize, f64)> = prep
            .pseudo
            .iter()
            .filter(|p| repairing::present(values[p.0]))
            .map(|&(i, a, b)| (a, b, values[i]))
            .collect();
        let mut rng = stats::stream(cfg.seed, stats::STREAM_BOOTSTRAP, index as u64);
        bootstrap::excess_interval(&g.real, &pseudo, cfg.bootstrap, cfg.alpha, &mut rng)
    } else {
        (f64::NAN, f64::NAN)
    };
    let dyad = dyad::dyad_cell(values, prep, cfg.alternative, cfg.alpha);
    CellOutcome { group: g, ci, dyad }
}

/// Warnings about the inputs as a whole.
fn input_warnings(prep: &Prepared, cells: &[CellMatrix], cfg: &InferenceConfig) -> Vec<String> {
    let mut w = Vec::new();
    if prep.n_draws == 0 {
        w.push("no re-pairings were supplied; every repairing test is untestable".to_owned());
    }
    if prep.unowned > 0 {
        w.push(format!(
            "{} matrix rows/columns belong to no dyad; their pairs are left out of the \
             pseudo means",
            prep.unowned
        ));
    }
    let mut seen: HashMap<&CellKey, usize> = HashMap::new();
    for (i, cell) in cells.iter().enumerate() {
        if let Some(first) = seen.insert(&cell.key, i) {
            w.push(format!(
                "cell {} appears twice (inputs {first} and {i}); contrasts use the first",
                cell.key
            ));
            seen.insert(&cell.key, first);
        }
        let infinite = cell.values.iter().filter(|v| v.is_infinite()).count();
        if infinite > 0 {
            w.push(format!(
                "cell {}: {infinite} infinite values are treated as missing",
                cell.key
            ));
        }
    }
    if cfg.bootstrap == 1 {
        w.push("a bootstrap of one resample gives no interval".to_owned());
    }
    w
}

fn repairing_row(
    cell: &CellMatrix,
    g: &GroupTest,
    ci: (f64, f64),
    p_adj: f64,
    cfg: &InferenceConfig,
) -> ResultRow {
    let testable = g.untestable.is_none();
    ResultRow {
        key: cell.key.clone(),
        test: TestKind::Repairing,
        n_dyads: g.n_dyads,
        n_pseudo: g.n_pseudo,
        real_mean: g.real_mean,
        pseudo_mean: g.pseudo_mean,
        excess: g.real_mean - g.pseudo_mean,
        effect_size: g.effect_size,
        ci_low: ci.0,
        ci_high: ci.1,
        statistic: g.observed,
        p: g.p,
        p_signflip: f64::NAN,
        p_adj,
        correction: cfg.correction,
        significant: testable && p_adj < cfg.alpha,
        testable,
    }
}

fn dyad_row(
    cell: &CellMatrix,
    dc: &DyadCell,
    p_signflip: f64,
    p_adj: f64,
    cfg: &InferenceConfig,
) -> ResultRow {
    let testable = dc.untestable.is_none();
    let t = &dc.test;
    ResultRow {
        key: cell.key.clone(),
        test: TestKind::DyadContrast,
        n_dyads: t.n,
        n_pseudo: dc.n_pseudo_used,
        real_mean: dc.real_mean,
        pseudo_mean: dc.pseudo_mean,
        excess: dc.excess,
        effect_size: t.dz,
        ci_low: t.ci_low,
        ci_high: t.ci_high,
        statistic: t.t,
        p: t.p,
        p_signflip,
        p_adj,
        correction: cfg.correction,
        significant: testable && p_adj < cfg.alpha,
        testable,
    }
}
