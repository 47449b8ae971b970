//! Pair values: channel results pooled into ROI values per block, blocks into condition values,
//! and condition values laid out as one matrix per cell.
//!
//! Averaging rules (the same for real and pseudo pairs):
//! - a ROI value of a block averages the channels good in both members, and is missing when
//!   fewer than `min_channels_per_roi` are (with `channel_pairs = "all"`, the channel pairs of
//!   ROI a × ROI b);
//! - WTC: a condition value averages its blocks' ROI values weighted by the number of
//!   time–scale points outside the cone of influence in each block;
//! - correlation: channel and block averages are taken on Fisher's z (blocks weighted by their
//!   sample counts) and turned back into r.

use ndarray::Array2;

use super::PairRef;
use super::slice::SliceResult;
use crate::study::Study;
use crate::study::config::{ChannelPairs, Measure};
use crate::vocab::PairGrid;

/// Running sums of one (pair, block, chromophore, band, roi) value.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Acc {
    pub sum: f64,
    pub n: u32,
    pub sum_cos: f64,
    pub sum_sin: f64,
}

/// Wall time the engine spent on members' transforms and on pairs, summed over slices.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct EngineTiming {
    pub transforms_s: f64,
    pub pairs_s: f64,
}

/// Every pair's values, and the labels that index them.
#[derive(Clone, Debug)]
pub struct Synchrony {
    pub pairs: Vec<PairRef>,
    /// The pairing matrix every cell's values are laid out on.
    pub grid: PairGrid,
    pub measure: Measure,
    pub conditions: Vec<String>,
    pub chromophores: Vec<String>,
    pub bands: Vec<String>,
    /// ROI cells: a ROI, or `<roi_a>~<roi_b>` with `channel_pairs = "all"`.
    pub rois: Vec<String>,
    /// (condition index, block index within the condition), in study order.
    pub blocks: Vec<(usize, usize)>,
    /// 1-based block number of each entry of `blocks`.
    pub block_numbers: Vec<usize>,
    /// Per (block, band): the weight of the block in its condition value.
    pub weights: Vec<f64>,
    /// Wall times; not part of any result.
    pub timing: EngineTiming,
    min_channels: u32,
    roi_of_channel: Vec<usize>,
    n_base_rois: usize,
    all_pairs: bool,
    acc: Vec<Acc>,
}

/// One cell's matrix: rows × cols, NaN where no value exists.
#[derive(Clone, Debug, PartialEq)]
pub struct CellValues {
    pub condition: usize,
    pub chromophore: usize,
    pub band: usize,
    pub roi: usize,
    pub values: Array2<f64>,
}

impl Synchrony {
    pub(super) fn layout(study: &Study, pairs: &[PairRef], grid: &PairGrid) -> Self {
        let cfg = &study.config.synchrony;
        let bands: Vec<String> = match cfg.measure {
            Measure::Wtc => study.config.bands.iter().map(|b| b.name.clone()).collect(),
            Measure::Corr => vec![super::BROADBAND.to_string()],
        };
        let all_pairs = cfg.channel_pairs == ChannelPairs::All;
        let rois: Vec<String> = if all_pairs {
            study
                .rois
                .iter()
                .flat_map(|a| study.rois.iter().map(move |b| format!("{a}~{b}")))
                .collect()
        } else {
            study.rois.clone()
        };
        let mut blocks = Vec::new();
        let mut block_numbers = Vec::new();
        for (c, cond) in study.conditions.iter().enumerate() {
            for (k, b) in cond.blocks.iter().enumerate() {
                blocks.push((c, k));
                block_numbers.push(b.block);
            }
        }
        let n = pairs.len() * blocks.len() * cfg.chromophores.len() * bands.len() * rois.len();
        Synchrony {
            pairs: pairs.to_vec(),
            grid: grid.clone(),
            measure: cfg.measure,
            conditions: study.conditions.iter().map(|c| c.name.clone()).collect(),
            chromophores: cfg.chromophores.clone(),
            weights: vec![0.0; blocks.len() * bands.len()],
            timing: EngineTiming::default(),
            bands,
            rois,
            blocks,
            block_numbers,
            min_channels: cfg.min_channels_per_roi as u32,
            roi_of_channel: (0..study.channels.len()).map(|c| study.roi_of(c)).collect(),
            n_base_rois: study.rois.len(),
            all_pairs,
            acc: vec![Acc::default(); n],
        }
    }

    fn index(&self, pair: usize, block: usize, chrom: usize, band: usize, roi: usize) -> usize {
        (((pair * self.blocks.len() + block) * self.chromophores.len() + chrom) * self.bands.len()
            + band)
            * self.rois.len()
            + roi
    }

    /// Adds one slice's channel results, in channel order, to the pairs' sums.
    pub(super) fn add_slice(
        &mut self,
        block: usize,
        chrom: usize,
        band: usize,
        slice: &SliceResult,
    ) {
        for p in 0..self.pairs.len() {
            for c in &slice.values[p * slice.per_pair..(p + 1) * slice.per_pair] {
                if c.value.is_nan() {
                    continue;
                }
                let ra = self.roi_of_channel[c.channel_a];
                let roi = if self.all_pairs {
                    ra * self.n_base_rois + self.roi_of_channel[c.channel_b]
                } else {
                    ra
                };
                let i = self.index(p, block, chrom, band, roi);
                let a = &mut self.acc[i];
                a.sum += c.value;
                a.n += 1;
                a.sum_cos += c.sum_cos;
                a.sum_sin += c.sum_sin;
            }
        }
    }

    /// A pair's ROI value in one block: (value, channels used, mean phase). Missing (NaN) when
    /// fewer than `min_channels_per_roi` channels are good in both members.
    pub fn block_value(
        &self,
        pair: usize,
        block: usize,
        chrom: usize,
        band: usize,
        roi: usize,
    ) -> (f64, u32, f64) {
        let a = self.acc[self.index(pair, block, chrom, band, roi)];
        if a.n < self.min_channels || a.n == 0 {
            return (f64::NAN, a.n, f64::NAN);
        }
        let mean = a.sum / a.n as f64;
        match self.measure {
            Measure::Wtc => (mean, a.n, a.sum_sin.atan2(a.sum_cos)),
            Measure::Corr => (mean.tanh(), a.n, f64::NAN),
        }
    }

    /// A pair's value in one condition: its blocks' ROI values, weighted (see the module doc).
    pub fn condition_value(
        &self,
        pair: usize,
        cond: usize,
        chrom: usize,
        band: usize,
        roi: usize,
    ) -> f64 {
        let mut num = 0.0;
        let mut den = 0.0;
        for (b, &(c, _)) in self.blocks.iter().enumerate() {
            if c != cond {
                continue;
            }
            let (v, _, _) = self.block_value(pair, b, chrom, band, roi);
            if v.is_nan() {
                continue;
            }
            let w = self.weights[b * self.bands.len() + band];
            let v = match self.measure {
                Measure::Wtc => v,
                Measure::Corr => crate::spectral::correlation::fisher_z(v),
            };
            num += w * v;
            den += w;
        }
        if den == 0.0 {
            return f64::NAN;
        }
        match self.measure {
            Measure::Wtc => num / den,
            Measure::Corr => (num / den).tanh(),
        }
    }

    /// One matrix per cell, in (condition, chromophore, band, roi) order. Peers matrices are
    /// symmetric.
    pub fn matrices(&self) -> Vec<CellValues> {
        let mut out = Vec::new();
        for cond in 0..self.conditions.len() {
            for chrom in 0..self.chromophores.len() {
                for band in 0..self.bands.len() {
                    for roi in 0..self.rois.len() {
                        let mut values = self.grid.matrix(f64::NAN);
                        for (p, pr) in self.pairs.iter().enumerate() {
                            let v = self.condition_value(p, cond, chrom, band, roi);
                            values[[pr.row.0, pr.col.0]] = v;
                            if self.grid.is_peers() {
                                values[[pr.col.0, pr.row.0]] = v;
                            }
                        }
                        out.push(CellValues {
                            condition: cond,
                            chromophore: chrom,
                            band,
                            roi,
                            values,
                        });
                    }
                }
            }
        }
        out
    }
}
