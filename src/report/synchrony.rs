//! `synchrony.parquet`: every computed pair-level value, one row per pair, condition, block,
//! chromophore, band and roi, so users can fit their own models on block-level values.

use std::path::Path;

use crate::engine::Synchrony;
use crate::study::Study;
use crate::table::{Table, TableError, write_table};

pub fn write(study: &Study, syn: &Synchrony, path: &Path) -> Result<(), TableError> {
    let n = syn.pairs.len()
        * syn.blocks.len()
        * syn.chromophores.len()
        * syn.bands.len()
        * syn.rois.len();
    let mut member_a = Vec::with_capacity(n);
    let mut member_b = Vec::with_capacity(n);
    let mut real = Vec::with_capacity(n);
    let mut condition = Vec::with_capacity(n);
    let mut block = Vec::with_capacity(n);
    let mut chromophore = Vec::with_capacity(n);
    let mut band = Vec::with_capacity(n);
    let mut roi = Vec::with_capacity(n);
    let mut value = Vec::with_capacity(n);
    let mut n_channels = Vec::with_capacity(n);
    let mut phase = Vec::with_capacity(n);
    for (p, pr) in syn.pairs.iter().enumerate() {
        for (b, &(cond, _)) in syn.blocks.iter().enumerate() {
            for (h, chrom) in syn.chromophores.iter().enumerate() {
                for (k, band_name) in syn.bands.iter().enumerate() {
                    for (r, roi_name) in syn.rois.iter().enumerate() {
                        let (v, used, ph) = syn.block_value(p, b, h, k, r);
                        member_a.push(study.members[pr.a.0].id.clone());
                        member_b.push(study.members[pr.b.0].id.clone());
                        real.push(pr.real);
                        condition.push(syn.conditions[cond].clone());
                        block.push(syn.block_numbers[b] as i64);
                        chromophore.push(chrom.clone());
                        band.push(band_name.clone());
                        roi.push(roi_name.clone());
                        value.push(v);
                        n_channels.push(i64::from(used));
                        phase.push(ph);
                    }
                }
            }
        }
    }
    let t = Table::new()
        .text("member_a", member_a)
        .text("member_b", member_b)
        .boolean("real", real)
        .text("condition", condition)
        .int("block", block)
        .text("chromophore", chromophore)
        .text("band", band)
        .text("roi", roi)
        .float("value", value)
        .int("n_channels", n_channels)
        .float("phase", phase);
    write_table(&t, path)
}
