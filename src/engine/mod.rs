//! The synchrony engine: a validated study and the list of pairs to compute → one value per
//! (pair, condition, block, chromophore, band, roi), and from those one matrix per cell.
//!
//! Work is cut into slices, one (block, band, chromophore, channel) at a time (all channels at
//! once with `channel_pairs = "all"`). In a slice each member's transform and smoothed power are
//! computed once, then every pair reuses them and costs only its cross-spectrum, smoothing and
//! band average, with scratch allocated once per worker. Real and pseudo pairs are the same kind
//! of item in the same list, so they go through exactly the same code. Results land in slots
//! fixed by (pair, slice) and are added in slice order, so the output does not depend on the
//! number of threads. Memory is bounded by tiling the members of a slice when one slice of all
//! members would exceed the budget. The engine never prints: it reports to a [`Progress`].

mod kernel;
pub mod progress;
mod slice;
pub mod values;

use rayon::prelude::*;

use kernel::PairKernel;
pub use progress::{Bars, Progress, Recorded, Silent};
pub use values::{Acc, EngineTiming, Synchrony};

use crate::spectral::coarse::CoarsePlan;
use crate::spectral::{Complex64, band_scale_grid};
use crate::study::config::{ChannelPairs, Measure, TimeGrid};
use crate::study::{BlockWindow, Study};
use crate::vocab::{Col, MemberIx, PairGrid, Row};

/// One pair to compute: its place in the pairing matrix and its two members.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct PairRef {
    pub row: Row,
    pub col: Col,
    pub a: MemberIx,
    pub b: MemberIx,
    pub real: bool,
}

#[derive(Clone, Copy, Debug, PartialEq)]
pub struct EngineOptions {
    /// Memory the cached transforms of one slice may take.
    pub memory_bytes: u64,
}

#[derive(Debug, thiserror::Error)]
pub enum EngineError {
    #[error(
        "the memory budget ({budget_gib:.2} GiB) is too small: two members' transforms of one block need {need_gib:.2} GiB; raise --memory-gib"
    )]
    Budget { budget_gib: f64, need_gib: f64 },
}

/// The band label used for correlation, which does not resolve periods.
pub const BROADBAND: &str = "broadband";

/// Computes every pair's values; `grid` shapes the matrices (and mirrors them in peers mode).
pub fn compute(
    study: &Study,
    pairs: &[PairRef],
    grid: &PairGrid,
    options: EngineOptions,
    progress: &dyn Progress,
) -> Result<Synchrony, EngineError> {
    let cfg = &study.config.synchrony;
    let mut syn = Synchrony::layout(study, pairs, grid);
    let n_members = study.members.len();
    let channel_groups: Vec<Vec<usize>> = match cfg.channel_pairs {
        ChannelPairs::Same => (0..study.channels.len()).map(|c| vec![c]).collect(),
        ChannelPairs::All => vec![(0..study.channels.len()).collect()],
    };
    let n_slices_per_block = syn.bands.len() * syn.chromophores.len() * channel_groups.len();
    let members_used = {
        let mut used = vec![false; n_members];
        for p in pairs {
            used[p.a.0] = true;
            used[p.b.0] = true;
        }
        used.iter().filter(|u| **u).count() as u64
    };
    let total_slices = (syn.blocks.len() * n_slices_per_block) as u64;
    let channels_per_slice = channel_groups[0].len() as u64;
    progress.begin(
        "synchrony",
        &[
            (
                "transforms",
                total_slices * members_used * channels_per_slice,
            ),
            ("pair-blocks", total_slices * pairs.len() as u64),
        ],
    );
    for (cb, &(cond, block_idx)) in syn.blocks.clone().iter().enumerate() {
        let window = &study.conditions[cond].blocks[block_idx];
        let n = window.segment_len();
        for band in 0..syn.bands.len() {
            let geometry = || {
                let b = &study.config.bands[band];
                band_scale_grid(
                    b.min_period_s,
                    b.max_period_s,
                    cfg.omega0,
                    cfg.scales_per_octave,
                )
            };
            let block = window.block_in_segment();
            let run = Band {
                study,
                window,
                block: cb,
                band,
                channel_groups: &channel_groups,
                members_used: members_used as usize,
                memory_bytes: options.memory_bytes,
                pairs,
                progress,
            };
            match (cfg.measure, cfg.time_grid) {
                (Measure::Wtc, TimeGrid::Coarse) => {
                    let plan = CoarsePlan::new(n, study.dt, cfg.omega0, &geometry(), block);
                    run.slices(&kernel::CoarseWtc(plan), &mut syn)?;
                }
                (Measure::Wtc, TimeGrid::Full) => {
                    let k = kernel::FullWtc::new(n, study.dt, cfg.omega0, &geometry(), block);
                    run.slices(&k, &mut syn)?;
                }
                (Measure::Corr, _) => run.slices(&kernel::Correlation { block }, &mut syn)?,
            }
        }
    }
    progress.finish();
    Ok(syn)
}

/// One (block, band) of the work: every chromophore and channel group of it, with one kernel.
struct Band<'a> {
    study: &'a Study,
    window: &'a BlockWindow,
    /// Index into `Synchrony::blocks`.
    block: usize,
    band: usize,
    channel_groups: &'a [Vec<usize>],
    members_used: usize,
    memory_bytes: u64,
    pairs: &'a [PairRef],
    progress: &'a dyn Progress,
}

impl Band<'_> {
    fn slices<K: PairKernel>(&self, kernel: &K, syn: &mut Synchrony) -> Result<(), EngineError> {
        syn.weights[self.block * syn.bands.len() + self.band] = kernel.weight();
        for chrom in 0..syn.chromophores.len() {
            for group in self.channel_groups {
                let ctx = slice::SliceContext {
                    study: self.study,
                    window: self.window,
                    chromophore: chrom,
                    channels: group,
                    members_used: self.members_used,
                    memory_bytes: self.memory_bytes,
                };
                let contributions = slice::run(&ctx, kernel, self.pairs, self.progress)?;
                syn.timing.transforms_s += contributions.transform_s;
                syn.timing.pairs_s += contributions.pair_s;
                syn.add_slice(self.block, chrom, self.band, &contributions);
            }
        }
        Ok(())
    }
}

/// Bytes one member's cached transform and smoothed power take for one channel of a slice.
pub fn bytes_per_member_channel(n_scales: usize, n_samples: usize, power_len: usize) -> u64 {
    (n_scales * n_samples * std::mem::size_of::<Complex64>()
        + power_len * std::mem::size_of::<f64>()) as u64
}

/// Runs `f` over `items` in parallel, with per-worker scratch from `init`, results in order.
pub(crate) fn par_map_init<T, S, R>(
    items: &[T],
    init: impl Fn() -> S + Sync + Send,
    f: impl Fn(&mut S, &T) -> R + Sync + Send,
) -> Vec<R>
where
    T: Sync,
    R: Send,
{
    items.par_iter().map_init(init, f).collect()
}
