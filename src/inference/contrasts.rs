//! Condition contrasts: pairs each cell of condition A with the cell of condition B that
//! has the same chromophore, band and roi, runs the paired test on the per-dyad dyad
//! contrasts and adjusts within contrast families. Reads the per-cell outcomes; computes no
//! cell statistic itself.

use std::collections::HashMap;

use super::CellOutcome;
use super::adjust::adjust_flipped;
use super::dyad::{self, ContrastCell};
use super::layout::Prepared;
use super::signflip::FlipSet;
use super::types::{Alternative, CellMatrix, ContrastRow, InferenceConfig};

/// Every condition contrast over every (chromophore, band, roi) that both conditions have,
/// in contrast order and then in the input order of condition A's cells.
pub(crate) fn run_contrasts(
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
