//! The WTC kernel of one (block, band) geometry, on the coarse or the full time grid.
//!
//! Both grids expose the same three steps, which is all a slice needs: one member's data
//! (computed once per member), one pair's band coherence from two members' data, and the
//! per-worker scratch. Keeping the choice here leaves the slice loop unaware of it.

use crate::spectral::Complex64;
use crate::spectral::coarse::{CoarsePlan, CoarseScratch, MemberNodes};
use crate::spectral::coherence::{BandCoherence, CoherencePlan};
use crate::spectral::morlet::WaveletPlan;
use crate::spectral::{ScaleGrid, Seconds};
use crate::study::config::TimeGrid;

pub enum Kernel {
    Coarse(CoarsePlan),
    Full {
        wavelet: WaveletPlan,
        coherence: CoherencePlan,
    },
}

/// One member's cached data for one channel of a slice.
pub enum MemberData {
    Coarse(MemberNodes),
    Full { w: Vec<Complex64>, p: Vec<f64> },
}

pub enum Scratch {
    Coarse(Box<CoarseScratch>),
    Full(Vec<Complex64>),
}

impl Kernel {
    pub fn new(
        time_grid: TimeGrid,
        n: usize,
        dt: Seconds,
        omega0: f64,
        grid: &ScaleGrid,
        block: std::ops::Range<usize>,
    ) -> Kernel {
        match time_grid {
            TimeGrid::Coarse => Kernel::Coarse(CoarsePlan::new(n, dt, omega0, grid, block)),
            TimeGrid::Full => Kernel::Full {
                wavelet: WaveletPlan::new(n, dt, omega0, &grid.scales),
                coherence: CoherencePlan::new(n, dt, grid, block),
            },
        }
    }

    /// Points outside the cone of influence on the full grid: the block's weight.
    pub fn n_points(&self) -> usize {
        match self {
            Kernel::Coarse(c) => c.n_points(),
            Kernel::Full { coherence, .. } => coherence.n_points(),
        }
    }

    /// Bytes one member's data take for one channel.
    pub fn member_bytes(&self) -> u64 {
        match self {
            Kernel::Coarse(c) => c.member_bytes(),
            Kernel::Full { wavelet, coherence } => super::bytes_per_member_channel(
                wavelet.n_scales(),
                wavelet.n_samples(),
                coherence.power_len(),
            ),
        }
    }

    pub fn scratch(&self) -> Scratch {
        match self {
            Kernel::Coarse(c) => Scratch::Coarse(Box::new(c.scratch())),
            Kernel::Full { wavelet, coherence } => {
                Scratch::Full(vec![
                    Complex64::new(0.0, 0.0);
                    wavelet.scratch_len().max(coherence.scratch_len())
                ])
            }
        }
    }

    pub fn member(&self, signal: &[f64], scratch: &mut Scratch) -> MemberData {
        match (self, scratch) {
            (Kernel::Coarse(c), Scratch::Coarse(s)) => MemberData::Coarse(c.member(signal, s)),
            (Kernel::Full { wavelet, coherence }, Scratch::Full(s)) => {
                let mut w =
                    vec![Complex64::new(0.0, 0.0); wavelet.n_scales() * wavelet.n_samples()];
                wavelet.transform_into(signal, &mut w, &mut s[..wavelet.scratch_len()]);
                let mut p = vec![0.0; coherence.power_len()];
                coherence.smoothed_power_into(&w, &mut p, &mut s[..coherence.scratch_len()]);
                MemberData::Full { w, p }
            }
            _ => unreachable!("scratch built by another kernel"),
        }
    }

    /// Band coherence of the pairs `(xs[i], ys[i])`, several at once where the grid allows.
    pub fn coherence_many(
        &self,
        xs: &[&MemberData],
        ys: &[&MemberData],
        scratch: &mut Scratch,
    ) -> Vec<BandCoherence> {
        if let (Kernel::Coarse(c), Scratch::Coarse(s)) = (self, &mut *scratch) {
            let x: Vec<&MemberNodes> = xs.iter().map(|m| coarse_nodes(m)).collect();
            let y: Vec<&MemberNodes> = ys.iter().map(|m| coarse_nodes(m)).collect();
            let empty = BandCoherence {
                sum_r2: 0.0,
                n_points: 0,
                sum_cos: 0.0,
                sum_sin: 0.0,
            };
            let mut out = vec![empty; xs.len()];
            c.coherence_many(&x, &y, &mut out, s);
            return out;
        }
        xs.iter()
            .zip(ys)
            .map(|(x, y)| self.coherence(x, y, scratch))
            .collect()
    }

    pub fn coherence(
        &self,
        x: &MemberData,
        y: &MemberData,
        scratch: &mut Scratch,
    ) -> BandCoherence {
        match (self, x, y, scratch) {
            (
                Kernel::Coarse(c),
                MemberData::Coarse(x),
                MemberData::Coarse(y),
                Scratch::Coarse(s),
            ) => c.coherence(x, y, s),
            (
                Kernel::Full { coherence, .. },
                MemberData::Full { w: wx, p: px },
                MemberData::Full { w: wy, p: py },
                Scratch::Full(s),
            ) => coherence.coherence(wx, wy, px, py, &mut s[..coherence.scratch_len()]),
            _ => unreachable!("member data or scratch built by another kernel"),
        }
    }
}

fn coarse_nodes(m: &MemberData) -> &MemberNodes {
    match m {
        MemberData::Coarse(n) => n,
        MemberData::Full { .. } => unreachable!("member data built by another kernel"),
    }
}
