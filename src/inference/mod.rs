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

mod bootstrap;
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

use dyad::{ContrastCell, DyadCell, FlipOutcome};
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
    let repair_adj = adjust_repairing(cells, &per_cell, cfg, &mut warnings);

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
    let (dyad_flip_p, dyad_adj) = adjust_flipped(
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
        run_contrasts(cells, &per_cell, &prep, cfg, &random);
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
    for (
        i,
        (
            cell,
            CellOutcome {
                group: g,
                ci,
                dyad: dc,
            },
        ),
    ) in cells.iter().zip(per_cell).enumerate()
    {
        if let Some(why) = &g.untestable {
            warnings.push(format!(
                "repairing test untestable for cell {}: {why}",
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
                surrogate_mean: dc.surrogate[d],
                n_pseudo: dc.n_surrogate[d],
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
struct CellOutcome {
    group: GroupTest,
    /// Bootstrap interval of the group test's excess.
    ci: (f64, f64),
    dyad: DyadCell,
}

/// The per-cell work: group test, its bootstrap interval (stream (seed, cell index)) and
/// the dyad contrast.
fn analyse_cell(
    index: usize,
    cell: &CellMatrix,
    prep: &Prepared,
    cfg: &InferenceConfig,
) -> CellOutcome {
    let g = repairing::group_test(&cell.values, prep, cfg.alternative);
    let ci = if g.untestable.is_none() {
        let pseudo: Vec<(usize, usize, f64)> = prep
            .pseudo
            .iter()
            .filter(|p| repairing::present(cell.values[p.0]))
            .map(|&(i, a, b)| (a, b, cell.values[i]))
            .collect();
        let mut rng = stats::stream(cfg.seed, stats::STREAM_BOOTSTRAP, index as u64);
        bootstrap::excess_interval(&g.real, &pseudo, cfg.bootstrap, cfg.alpha, &mut rng)
    } else {
        (f64::NAN, f64::NAN)
    };
    let dyad = dyad::dyad_cell(&cell.values, prep, cfg.alternative, cfg.alpha);
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
             surrogate means",
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

/// Adjusted p of every cell's group test (NaN for untestable cells).
fn adjust_repairing(
    cells: &[CellMatrix],
    per_cell: &[CellOutcome],
    cfg: &InferenceConfig,
    warnings: &mut Vec<String>,
) -> Vec<f64> {
    let mut adj = vec![f64::NAN; cells.len()];
    let members: Vec<usize> = (0..cells.len())
        .filter(|&i| per_cell[i].group.untestable.is_none())
        .collect();
    let families = family::group(
        members
            .iter()
            .map(|&i| (cells[i].key.condition.as_str(), &cells[i].key)),
        &cfg.family,
    );
    for fam in families {
        let idx: Vec<usize> = fam.iter().map(|&m| members[m]).collect();
        let values = if cfg.correction == Correction::MaxStat {
            let (observed, nulls): (Vec<f64>, Vec<Vec<f64>>) = idx
                .par_iter()
                .map(|&i| {
                    let g = &per_cell[i].group;
                    let z: Vec<f64> = g
                        .null
                        .iter()
                        .map(|&t| g.standardise(t, cfg.alternative))
                        .collect();
                    (g.standardise(g.observed, cfg.alternative), z)
                })
                .unzip();
            if observed.iter().any(|z| z.is_infinite()) {
                warnings.push(
                    "a repairing null without spread was standardised to zero for maxstat"
                        .to_owned(),
                );
            }
            let scale = 1.0
                + observed
                    .iter()
                    .filter(|x| x.is_finite())
                    .fold(0.0f64, |m, x| m.max(x.abs()));
            let refs: Vec<&[f64]> = nulls.iter().map(|n| n.as_slice()).collect();
            correction::maxstat(&observed, &refs, false, scale)
        } else {
            let p: Vec<f64> = idx.iter().map(|&i| per_cell[i].group.p).collect();
            correction::adjust(&p, cfg.correction).unwrap_or_else(|| vec![f64::NAN; p.len()])
        };
        for (&i, v) in idx.iter().zip(values) {
            adj[i] = v;
        }
    }
    adj
}

/// Sign-flip p and adjusted p of a set of dyad-level tests. `members` are the testable
/// entries, `scope_key` gives each its family scope and cell key, `p` the t-test p used by
/// the p-value procedures, `items` the per-dyad values flipped.
#[allow(clippy::too_many_arguments)]
fn adjust_flipped<'a>(
    members: &[usize],
    scope_key: impl Fn(usize) -> (&'a str, &'a CellKey),
    p: &[f64],
    items: &[Vec<(usize, f64)>],
    alternative: Alternative,
    prep: &Prepared,
    cfg: &InferenceConfig,
    random: &dyn Fn() -> FlipSet,
) -> (Vec<f64>, Vec<f64>) {
    let mut flip_p = vec![f64::NAN; p.len()];
    let mut adj = vec![f64::NAN; p.len()];
    let families = family::group(members.iter().map(|&i| scope_key(i)), &cfg.family);
    for fam in families {
        let idx: Vec<usize> = fam.iter().map(|&m| members[m]).collect();
        let fam_items: Vec<Vec<(usize, f64)>> = idx.iter().map(|&i| items[i].clone()).collect();
        let FlipOutcome { p: fp, p_maxstat } = dyad::flip_family(
            &fam_items,
            prep.n_dyads,
            cfg.sign_flips,
            alternative,
            cfg.correction == Correction::MaxStat,
            random,
        );
        let values = if cfg.correction == Correction::MaxStat {
            p_maxstat
        } else {
            let fam_p: Vec<f64> = idx.iter().map(|&i| p[i]).collect();
            correction::adjust(&fam_p, cfg.correction).unwrap_or_else(|| vec![f64::NAN; idx.len()])
        };
        for ((&i, a), f) in idx.iter().zip(values).zip(fp) {
            adj[i] = a;
            flip_p[i] = f;
        }
    }
    (flip_p, adj)
}

/// Every condition contrast over every (chromophore, band, roi) that both conditions have,
/// in contrast order and then in the input order of condition A's cells.
fn run_contrasts(
    cells: &[CellMatrix],
    per_cell: &[CellOutcome],
    prep: &Prepared,
    cfg: &InferenceConfig,
    random: &dyn Fn() -> FlipSet,
) -> (Vec<ContrastRow>, Vec<String>) {
    let mut warnings = Vec::new();
    let mut first: HashMap<(&str, &str, &str, &str), usize> = HashMap::new();
    for (i, c) in cells.iter().enumerate() {
        let k = &c.key;
        first
            .entry((&k.condition, &k.chromophore, &k.band, &k.roi))
            .or_insert(i);
    }
    // (contrast index, cell of condition A, outcome)
    let mut entries: Vec<(usize, usize, ContrastCell)> = Vec::new();
    for (s, spec) in cfg.contrasts.iter().enumerate() {
        let mut any = false;
        for (ia, ca) in cells.iter().enumerate() {
            let k = &ca.key;
            if k.condition != spec.condition_a
                || first[&(
                    k.condition.as_str(),
                    k.chromophore.as_str(),
                    k.band.as_str(),
                    k.roi.as_str(),
                )] != ia
            {
                continue;
            }
            any = true;
            let Some(&ib) = first.get(&(
                spec.condition_b.as_str(),
                k.chromophore.as_str(),
                k.band.as_str(),
                k.roi.as_str(),
            )) else {
                warnings.push(format!(
                    "contrast {}: condition {} has no cell for chromophore={} band={} roi={}",
                    spec.name, spec.condition_b, k.chromophore, k.band, k.roi
                ));
                continue;
            };
            let cc = dyad::contrast_cell(&per_cell[ia].dyad, &per_cell[ib].dyad, cfg.alpha);
            if let Some(why) = &cc.untestable {
                warnings.push(format!(
                    "contrast {} untestable for chromophore={} band={} roi={}: {why}",
                    spec.name, k.chromophore, k.band, k.roi
                ));
            }
            entries.push((s, ia, cc));
        }
        if !any {
            warnings.push(format!(
                "contrast {}: condition {} has no cells",
                spec.name, spec.condition_a
            ));
        }
    }
    let members: Vec<usize> = (0..entries.len())
        .filter(|&e| entries[e].2.untestable.is_none())
        .collect();
    let p: Vec<f64> = entries.iter().map(|e| e.2.test.p).collect();
    let items: Vec<Vec<(usize, f64)>> = entries.iter().map(|e| e.2.items.clone()).collect();
    let (flip_p, adj) = adjust_flipped(
        &members,
        |e| {
            (
                cfg.contrasts[entries[e].0].name.as_str(),
                &cells[entries[e].1].key,
            )
        },
        &p,
        &items,
        Alternative::TwoSided,
        prep,
        cfg,
        random,
    );
    let rows = entries
        .iter()
        .enumerate()
        .map(|(e, (s, ia, cc))| {
            let spec = &cfg.contrasts[*s];
            let k = &cells[*ia].key;
            let t = &cc.test;
            ContrastRow {
                contrast: spec.name.clone(),
                condition_a: spec.condition_a.clone(),
                condition_b: spec.condition_b.clone(),
                chromophore: k.chromophore.clone(),
                band: k.band.clone(),
                roi: k.roi.clone(),
                n_dyads: t.n,
                mean_difference: t.mean,
                effect_size: t.dz,
                ci_low: t.ci_low,
                ci_high: t.ci_high,
                statistic: t.t,
                df: t.df,
                p: t.p,
                p_signflip: flip_p[e],
                p_adj: adj[e],
                correction: cfg.correction,
                significant: adj[e] < cfg.alpha,
            }
        })
        .collect();
    (rows, warnings)
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
        surrogate_mean: g.surrogate_mean,
        excess: g.real_mean - g.surrogate_mean,
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
        surrogate_mean: dc.surrogate_mean,
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
