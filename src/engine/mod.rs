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

use kernel::Kernel;
pub use progress::{Bars, Progress, Recorded, Silent};
pub use values::{Acc, EngineTiming, Synchrony};

use crate::spectral::{Complex64, band_scale_grid};
use crate::study::Study;
use crate::study::config::{ChannelPairs, Measure};

/// One pair to compute: its place in the pairing matrix and its two members.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct PairRef {
    pub row: usize,
    pub col: usize,
    pub a: usize,
    pub b: usize,
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

/// Computes every pair's values. `n_rows`/`n_cols` size the pairing matrix; `peers` mirrors it.
pub fn compute(
    study: &Study,
    pairs: &[PairRef],
    n_rows: usize,
    n_cols: usize,
    peers: bool,
    options: EngineOptions,
    progress: &dyn Progress,
) -> Result<Synchrony, EngineError> {
    let cfg = &study.config.synchrony;
    let mut syn = Synchrony::layout(study, pairs, n_rows, n_cols, peers);
    let n_members = study.members.len();
    let channel_groups: Vec<Vec<usize>> = match cfg.channel_pairs {
        ChannelPairs::Same => (0..study.channels.len()).map(|c| vec![c]).collect(),
        ChannelPairs::All => vec![(0..study.channels.len()).collect()],
    };
    let n_slices_per_block = syn.bands.len() * syn.chromophores.len() * channel_groups.len();
    let members_used = {
        let mut used = vec![false; n_members];
        for p in pairs {
            used[p.a] = true;
            used[p.b] = true;
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
            let kernel = match cfg.measure {
                Measure::Wtc => {
                    let b = &study.config.bands[band];
                    let grid = band_scale_grid(
                        b.min_period_s,
                        b.max_period_s,
                        cfg.omega0,
                        cfg.scales_per_octave,
                    );
                    let kernel = Kernel::new(
                        cfg.time_grid,
                        n,
                        study.dt,
                        cfg.omega0,
                        &grid,
                        window.block_in_segment(),
                    );
                    syn.weights[cb * syn.bands.len() + band] = kernel.n_points() as f64;
                    Some(kernel)
                }
                Measure::Corr => {
                    syn.weights[cb * syn.bands.len() + band] = window.length as f64;
                    None
                }
            };
            for chrom in 0..syn.chromophores.len() {
                for group in &channel_groups {
                    let ctx = slice::SliceContext {
                        study,
                        window,
                        chromophore: chrom,
                        channels: group,
                        kernel: kernel.as_ref(),
                        members_used: members_used as usize,
                        memory_bytes: options.memory_bytes,
                    };
                    let contributions = slice::run(&ctx, pairs, progress)?;
                    syn.timing.transforms_s += contributions.transform_s;
                    syn.timing.pairs_s += contributions.pair_s;
                    syn.add_slice(cb, chrom, band, &contributions);
                }
            }
        }
    }
    progress.finish();
    Ok(syn)
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
