//! One slice of the work: a block window, a band, a chromophore and a group of channels.
//!
//! First every member needed gets its transform and smoothed power (once), then every pair
//! is evaluated from those caches. When the caches of all members would exceed the memory
//! budget, pairs are grouped into tiles of the pairing matrix and only a tile's members are
//! held at a time; each pair still lands in its own slot, so tiling never changes a value.

use std::collections::BTreeMap;
use std::time::Instant;

use super::progress::Progress;
use rayon::prelude::*;

use super::kernel::{PairKernel, PairValue};
use super::{EngineError, PairRef, par_map_init};
use crate::spectral::coarse::GROUP;
use crate::study::{BlockWindow, Study};

pub struct SliceContext<'a> {
    pub study: &'a Study,
    pub window: &'a BlockWindow,
    pub chromophore: usize,
    pub channels: &'a [usize],
    pub members_used: usize,
    pub memory_bytes: u64,
}

/// One (pair, channel pair) result. `value` is NaN when a channel is bad in either member.
/// For WTC it is the block-mean R², for correlation Fisher's z of Pearson r.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Contribution {
    pub channel_a: usize,
    pub channel_b: usize,
    pub value: f64,
    pub sum_cos: f64,
    pub sum_sin: f64,
}

const MISSING: Contribution = Contribution {
    channel_a: 0,
    channel_b: 0,
    value: f64::NAN,
    sum_cos: 0.0,
    sum_sin: 0.0,
};

/// The contributions of every pair, `per_pair` consecutive entries per pair, and the wall
/// time spent on members' transforms and on pairs.
pub struct SliceResult {
    pub per_pair: usize,
    pub values: Vec<Contribution>,
    pub transform_s: f64,
    pub pair_s: f64,
}

pub fn run<K: PairKernel>(
    ctx: &SliceContext,
    kernel: &K,
    pairs: &[PairRef],
    progress: &dyn Progress,
) -> Result<SliceResult, EngineError> {
    let nch = ctx.channels.len();
    let per_pair = nch * nch;
    let mut values = vec![MISSING; pairs.len() * per_pair];
    let (mut transform_s, mut pair_s) = (0.0, 0.0);
    let per_member = kernel.member_bytes() * nch as u64;
    let cap = (ctx.memory_bytes / per_member.max(1)) as usize;
    if cap < 2 {
        return Err(EngineError::Budget {
            budget_gib: ctx.memory_bytes as f64 / GIB,
            need_gib: 2.0 * per_member as f64 / GIB,
        });
    }
    for mut tile in tiles(pairs, ctx.members_used, cap) {
        // Pairs in small squares of the pairing matrix, so that neighbouring pairs share
        // members whose data are still in cache; each value still lands in its own slot.
        tile.sort_by_key(|&i| (pairs[i].row.0 / LOCALITY, pairs[i].col.0 / LOCALITY, i));
        let members: Vec<usize> = {
            let mut m: Vec<usize> = tile
                .iter()
                .flat_map(|&i| [pairs[i].a.0, pairs[i].b.0])
                .collect();
            m.sort_unstable();
            m.dedup();
            m
        };
        // (member, channel) → cache, computed once for the tile.
        let jobs: Vec<(usize, usize)> = members
            .iter()
            .flat_map(|&m| ctx.channels.iter().map(move |&c| (m, c)))
            .collect();
        let clock = Instant::now();
        let caches: Vec<Option<K::Member>> = par_map_init(
            &jobs,
            || kernel.scratch(),
            |scratch, &(m, c)| {
                let signal = ctx.study.signal(m, c, ctx.chromophore)?;
                let range = ctx.window.segment(m)?;
                Some(kernel.member(&signal[range], scratch))
            },
        );
        transform_s += clock.elapsed().as_secs_f64();
        progress.advance(0, jobs.len() as u64);
        let clock = Instant::now();
        let index: BTreeMap<(usize, usize), usize> =
            jobs.iter().enumerate().map(|(i, j)| (*j, i)).collect();
        let mut tile_values = vec![MISSING; tile.len() * per_pair];
        let combos: Vec<(usize, usize)> = ctx
            .channels
            .iter()
            .flat_map(|&ca| ctx.channels.iter().map(move |&cb| (ca, cb)))
            .collect();
        // Groups of consecutive pairs go through the kernel side by side; each pair's
        // arithmetic is the same whatever its group, so grouping never changes a value.
        tile_values
            .par_chunks_mut(per_pair * GROUP)
            .zip(tile.par_chunks(GROUP))
            .for_each_init(
                || kernel.scratch(),
                |scratch, (out, group)| {
                    for (c, &(ca, cb)) in combos.iter().enumerate() {
                        let mut lanes = Vec::with_capacity(GROUP);
                        let (mut xs, mut ys) =
                            (Vec::with_capacity(GROUP), Vec::with_capacity(GROUP));
                        for (k, &pi) in group.iter().enumerate() {
                            let p = pairs[pi];
                            out[k * per_pair + c] = Contribution {
                                channel_a: ca,
                                channel_b: cb,
                                ..MISSING
                            };
                            let x = caches[index[&(p.a.0, ca)]].as_ref();
                            let y = caches[index[&(p.b.0, cb)]].as_ref();
                            if let (Some(x), Some(y)) = (x, y) {
                                lanes.push(k);
                                xs.push(x);
                                ys.push(y);
                            }
                        }
                        let mut results = [UNSET; GROUP];
                        let results = &mut results[..xs.len()];
                        kernel.pairs(&xs, &ys, results, scratch);
                        for (k, r) in lanes.into_iter().zip(results.iter()) {
                            let slot = &mut out[k * per_pair + c];
                            slot.value = r.value;
                            slot.sum_cos = r.sum_cos;
                            slot.sum_sin = r.sum_sin;
                        }
                    }
                },
            );
        for (k, &pi) in tile.iter().enumerate() {
            values[pi * per_pair..(pi + 1) * per_pair]
                .copy_from_slice(&tile_values[k * per_pair..(k + 1) * per_pair]);
        }
        pair_s += clock.elapsed().as_secs_f64();
        progress.advance(1, tile.len() as u64);
    }
    Ok(SliceResult {
        per_pair,
        values,
        transform_s,
        pair_s,
    })
}

const GIB: f64 = (1u64 << 30) as f64;

const UNSET: PairValue = PairValue {
    value: f64::NAN,
    sum_cos: 0.0,
    sum_sin: 0.0,
};

/// Side of the squares of the pairing matrix that are computed together.
const LOCALITY: usize = 16;

/// Groups pair indices into tiles whose members fit in `cap` caches. With room for every member
/// there is one tile; otherwise square tiles of the pairing matrix, `cap / 2` rows by `cap / 2`
/// columns, so a tile never holds more than `cap` members.
fn tiles(pairs: &[PairRef], members_used: usize, cap: usize) -> Vec<Vec<usize>> {
    if members_used <= cap {
        return vec![(0..pairs.len()).collect()];
    }
    let side = (cap / 2).max(1);
    let mut by_tile: BTreeMap<(usize, usize), Vec<usize>> = BTreeMap::new();
    for (i, p) in pairs.iter().enumerate() {
        by_tile
            .entry((p.row.0 / side, p.col.0 / side))
            .or_default()
            .push(i);
    }
    by_tile.into_values().collect()
}
