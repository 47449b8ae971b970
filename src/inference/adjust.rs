//! Applies the configured correction within each family: the max-statistic adjustment
//! over the shared re-pairings or sign flips, or a p-value procedure. Forms the families
//! with `family` and adjusts with `correction`; computes no test statistic itself.

use rayon::prelude::*;

use super::layout::Prepared;
use super::signflip::FlipSet;
use super::types::{Alternative, CellKey, CellMatrix, Correction, InferenceConfig};
use super::{CellOutcome, correction, dyad, family};
use dyad::FlipOutcome;

/// Adjusted p of every cell's group test (NaN for untestable cells).
pub(crate) fn adjust_repairing(
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
                    "a re-pairing null without spread was standardised to zero for maxstat"
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
pub(crate) fn adjust_flipped<'a>(
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
