//! What a slice needs from a synchrony measure: one member's data (computed once per member and
//! channel), the values of pairs from two members' data, and per-worker scratch. WTC on the
//! coarse grid, WTC on the every-sample grid and correlation are three kernels of one trait,
//! so the slice loop is written once, is unaware of the measure, and needs no arm for data
//! built by another kernel.

use std::ops::Range;

use crate::spectral::coarse::{CoarsePlan, CoarseScratch, MemberNodes};
use crate::spectral::coherence::{BandCoherence, CoherencePlan};
use crate::spectral::correlation::{fisher_z, pearson};
use crate::spectral::morlet::WaveletPlan;
use crate::spectral::{Complex64, ScaleGrid, Seconds};

/// One (pair, channel pair) value of a block: WTC's block-mean R² with its phase sums, or
/// correlation's Fisher z (phase sums zero).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PairValue {
    pub value: f64,
    pub sum_cos: f64,
    pub sum_sin: f64,
}

impl From<BandCoherence> for PairValue {
    fn from(b: BandCoherence) -> Self {
        PairValue {
            value: b.mean_r2(),
            sum_cos: b.sum_cos,
            sum_sin: b.sum_sin,
        }
    }
}

/// A synchrony measure of one (block, band) geometry.
pub trait PairKernel: Sync {
    /// One member's cached data for one channel of a slice.
    type Member: Send + Sync;
    /// Per-worker scratch, allocated once per worker.
    type Scratch: Send;

    /// The block's weight in its condition value (points outside the cone of influence for
    /// WTC, samples for correlation).
    fn weight(&self) -> f64;
    /// Bytes one member's data take for one channel (for the memory budget).
    fn member_bytes(&self) -> u64;
    fn scratch(&self) -> Self::Scratch;
    /// One member's data from its segment (block plus context).
    fn member(&self, segment: &[f64], scratch: &mut Self::Scratch) -> Self::Member;
    /// Values of the pairs `(xs[i], ys[i])` into `out[i]`; up to
    /// [`crate::spectral::coarse::GROUP`] at once. Each pair's value must not depend on the
    /// others in the call.
    fn pairs(
        &self,
        xs: &[&Self::Member],
        ys: &[&Self::Member],
        out: &mut [PairValue],
        scratch: &mut Self::Scratch,
    );
}

/// WTC on the coarse time grid (the default): `spectral::coarse`.
pub struct CoarseWtc(pub CoarsePlan);

impl PairKernel for CoarseWtc {
    type Member = MemberNodes;
    type Scratch = Box<CoarseScratch>;

    fn weight(&self) -> f64 {
        self.0.n_points() as f64
    }

    fn member_bytes(&self) -> u64 {
        self.0.member_bytes()
    }

    fn scratch(&self) -> Self::Scratch {
        Box::new(self.0.scratch())
    }

    fn member(&self, segment: &[f64], scratch: &mut Self::Scratch) -> MemberNodes {
        self.0.member(segment, scratch)
    }

    fn pairs(
        &self,
        xs: &[&MemberNodes],
        ys: &[&MemberNodes],
        out: &mut [PairValue],
        scratch: &mut Self::Scratch,
    ) {
        let empty = BandCoherence {
            sum_r2: 0.0,
            n_points: 0,
            sum_cos: 0.0,
            sum_sin: 0.0,
        };
        let mut bands = vec![empty; xs.len()];
        self.0.coherence_many(xs, ys, &mut bands, scratch);
        for (o, b) in out.iter_mut().zip(bands) {
            *o = b.into();
        }
    }
}

/// WTC at every sample (`time_grid = "full"`), the reference the coarse grid is tested against.
pub struct FullWtc {
    wavelet: WaveletPlan,
    coherence: CoherencePlan,
}

impl FullWtc {
    pub fn new(n: usize, dt: Seconds, omega0: f64, grid: &ScaleGrid, block: Range<usize>) -> Self {
        FullWtc {
            wavelet: WaveletPlan::new(n, dt, omega0, &grid.scales),
            coherence: CoherencePlan::new(n, dt, grid, block),
        }
    }
}

/// A member's transform and its smoothed power on the every-sample grid.
pub struct FullMember {
    w: Vec<Complex64>,
    p: Vec<f64>,
}

impl PairKernel for FullWtc {
    type Member = FullMember;
    type Scratch = Vec<Complex64>;

    fn weight(&self) -> f64 {
        self.coherence.n_points() as f64
    }

    fn member_bytes(&self) -> u64 {
        super::bytes_per_member_channel(
            self.wavelet.n_scales(),
            self.wavelet.n_samples(),
            self.coherence.power_len(),
        )
    }

    fn scratch(&self) -> Self::Scratch {
        let len = self.wavelet.scratch_len().max(self.coherence.scratch_len());
        vec![Complex64::new(0.0, 0.0); len]
    }

    fn member(&self, segment: &[f64], s: &mut Self::Scratch) -> FullMember {
        let (wavelet, coherence) = (&self.wavelet, &self.coherence);
        let mut w = vec![Complex64::new(0.0, 0.0); wavelet.n_scales() * wavelet.n_samples()];
        wavelet.transform_into(segment, &mut w, &mut s[..wavelet.scratch_len()]);
        let mut p = vec![0.0; coherence.power_len()];
        coherence.smoothed_power_into(&w, &mut p, &mut s[..coherence.scratch_len()]);
        FullMember { w, p }
    }

    fn pairs(
        &self,
        xs: &[&FullMember],
        ys: &[&FullMember],
        out: &mut [PairValue],
        s: &mut Self::Scratch,
    ) {
        let c = &self.coherence;
        for ((o, x), y) in out.iter_mut().zip(xs).zip(ys) {
            *o = c
                .coherence(&x.w, &y.w, &x.p, &y.p, &mut s[..c.scratch_len()])
                .into();
        }
    }
}

/// Pearson r over the block's samples (no context), as Fisher's z.
pub struct Correlation {
    /// The block inside a member's segment.
    pub block: Range<usize>,
}

impl PairKernel for Correlation {
    type Member = Vec<f64>;
    type Scratch = ();

    fn weight(&self) -> f64 {
        self.block.len() as f64
    }

    fn member_bytes(&self) -> u64 {
        (self.block.len() * std::mem::size_of::<f64>()) as u64
    }

    fn scratch(&self) {}

    fn member(&self, segment: &[f64], _: &mut ()) -> Vec<f64> {
        segment[self.block.clone()].to_vec()
    }

    fn pairs(&self, xs: &[&Vec<f64>], ys: &[&Vec<f64>], out: &mut [PairValue], _: &mut ()) {
        for ((o, x), y) in out.iter_mut().zip(xs).zip(ys) {
            *o = PairValue {
                value: fisher_z(pearson(x, y)),
                sum_cos: 0.0,
                sum_sin: 0.0,
            };
        }
    }
}
