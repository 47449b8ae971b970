//! Where the coarse grid evaluates: each scale's nodes and smoothing weights, each band row's
//! output instants and Simpson weights (rules in the parent module's docs).
//!
//! Built once per geometry; everything here is plain arithmetic on the definitions of
//! [`crate::spectral::smoothing`], so the pair kernel only reads tables.

use std::collections::BTreeMap;
use std::ops::Range;
use std::sync::Arc;

use rustfft::{Fft, FftPlanner};

use super::{NODES_PER_SCALE, OUTPUT_PER_SCALE, TRUNCATE_SCALES};
use crate::spectral::morlet::WaveletPlan;
use crate::spectral::smoothing::{coi_range, gauss_half_width, scale_boxcar};
use crate::spectral::{ScaleGrid, Seconds};

/// One grid scale: where its transform is read and how it is time-smoothed.
pub(super) struct Stage {
    pub grid_index: usize,
    /// Node spacing `E` in samples (a power of two).
    pub step: usize,
    /// Inverse FFT of `padded / step` points; `None` when no band point needs this scale.
    pub inverse: Option<Arc<dyn Fft<f64>>>,
    /// The filter gains folded (indices into the scale's gain run): those above
    /// [`GAIN_CUT`] of the largest; the rest change no node by a representable amount.
    pub bins: Range<usize>,
    /// Node indices `first_node .. first_node + n_nodes` (instant `j·E`).
    pub first_node: usize,
    pub n_nodes: usize,
    /// Offset of the first node in a member's node arrays.
    pub offset: usize,
    /// Weights per instant.
    pub taps: usize,
    /// Per instant, the local index of its first node.
    pub starts: Vec<usize>,
    /// `instants × taps` smoothing weights, `1/s` included.
    pub weights: Vec<f64>,
    /// Offset of the first instant among all stages' instants.
    pub t_offset: usize,
}

/// One band scale's output instants.
pub(super) struct Row {
    /// Quadrature weight per instant; they sum to the row's point count.
    pub quad: Vec<f64>,
    /// For each boxcar offset `k`, the (global) instant of stage `r + k` for each instant.
    pub feeds: Vec<Vec<u32>>,
    /// Offset of the first instant in a member's power array.
    pub p_offset: usize,
    /// Points of the row on the full grid.
    pub points: usize,
}

pub(super) struct Geometry {
    pub stages: Vec<Stage>,
    pub rows: Vec<Row>,
    pub boxcar: Vec<f64>,
}

/// An output instant `a + num·len/denominator`, `denominator` shared by the whole plan, so
/// that equal instants of different rows get equal keys.
type InstantKey = (usize, usize, u64);

/// A row's run of points and its instant count `m` (`m + 1` instants; 0 for one point).
struct RowRun {
    run: Range<usize>,
    m: u64,
}

pub(super) fn build(
    wavelet: &WaveletPlan,
    dt: Seconds,
    grid: &ScaleGrid,
    window: Range<usize>,
) -> Geometry {
    let n = wavelet.n_samples();
    let padded = wavelet.padded_len();
    assert!(
        window.start <= window.end && window.end <= n,
        "CoarsePlan: window {window:?} not inside 0..{n}"
    );
    let boxcar = scale_boxcar(grid.scales_per_octave);
    let halo = (boxcar.len() - 1) / 2;
    grid.assert_halo(halo, "CoarsePlan");
    let n_band = grid.band.len();
    let first_scale = grid.band.start - halo;

    // Rows: each band scale's run of points and its power-of-two instant count.
    let runs: Vec<RowRun> = (0..n_band)
        .map(|r| {
            let s = grid.scales[grid.band.start + r];
            let run = coi_range(&window, n, dt, s);
            let len = run.len().saturating_sub(1);
            let m = if run.len() <= 1 {
                0
            } else {
                let spacing = s / (OUTPUT_PER_SCALE * dt);
                ((len as f64 / spacing).ceil() as u64)
                    .next_power_of_two()
                    .max(2)
            };
            RowRun { run, m }
        })
        .collect();
    let denominator = runs.iter().map(|r| r.m).max().unwrap_or(1).max(1);
    let row_keys: Vec<Vec<InstantKey>> = runs
        .iter()
        .map(|r| {
            if r.run.is_empty() {
                return Vec::new();
            }
            match denominator.checked_div(r.m) {
                None => vec![(r.run.start, 0, 0)],
                Some(stride) => (0..=r.m)
                    .map(|i| (r.run.start, r.run.len() - 1, i * stride))
                    .collect(),
            }
        })
        .collect();
    let instant = |key: &InstantKey| -> f64 {
        key.0 as f64 + key.2 as f64 * (key.1 as f64 / denominator as f64)
    };

    // Stages: the union of the instants of the rows each grid scale feeds.
    let mut planner = FftPlanner::<f64>::new();
    let mut stages = Vec::with_capacity(n_band + 2 * halo);
    let mut lookup: Vec<BTreeMap<InstantKey, u32>> = Vec::with_capacity(n_band + 2 * halo);
    let (mut offset, mut t_offset) = (0, 0);
    for si in 0..n_band + 2 * halo {
        let grid_index = first_scale + si;
        let s = grid.scales[grid_index];
        let mut keys: Vec<InstantKey> = (si.saturating_sub(2 * halo)..(si + 1).min(n_band))
            .flat_map(|r| row_keys[r].iter().copied())
            .collect();
        keys.sort_unstable();
        keys.dedup();
        let step = node_step(s, dt, n);
        let mut stage = Stage {
            grid_index,
            step,
            inverse: None,
            bins: significant_gains(wavelet.filter(grid_index).1),
            first_node: 0,
            n_nodes: 0,
            offset,
            taps: 0,
            starts: Vec::new(),
            weights: Vec::new(),
            t_offset,
        };
        if !keys.is_empty() {
            let taus: Vec<f64> = keys.iter().map(instant).collect();
            fill_weights(&mut stage, &taus, s, dt, n);
            stage.inverse = Some(planner.plan_fft_inverse(padded / step));
            debug_assert!(stage.first_node + stage.n_nodes <= padded / step);
        }
        offset += stage.n_nodes;
        t_offset += stage.starts.len();
        lookup.push(
            keys.iter()
                .enumerate()
                .map(|(i, k)| (*k, (stage.t_offset + i) as u32))
                .collect(),
        );
        stages.push(stage);
    }

    let mut rows = Vec::with_capacity(n_band);
    let mut p_offset = 0;
    for (r, (run, keys)) in runs.iter().zip(&row_keys).enumerate() {
        let feeds = (0..boxcar.len())
            .map(|k| keys.iter().map(|key| lookup[r + k][key]).collect())
            .collect();
        let quad = simpson_with_ends(run.run.len(), run.m);
        rows.push(Row {
            quad,
            feeds,
            p_offset,
            points: run.run.len(),
        });
        p_offset += keys.len();
    }
    Geometry {
        stages,
        rows,
        boxcar,
    }
}

/// Gains below this fraction of a filter's peak are left out of the fold: `exp(−x²/2)` is
/// under 10⁻²⁰ beyond about 9.6 standard deviations of the Morlet filter.
pub(super) const GAIN_CUT: f64 = 1e-20;

/// The run of gains at or above [`GAIN_CUT`] of the largest (empty if all are zero).
fn significant_gains(gain: &[f64]) -> Range<usize> {
    let peak = gain.iter().copied().fold(0.0f64, f64::max);
    let keep = |g: &f64| *g > 0.0 && *g >= GAIN_CUT * peak;
    match (gain.iter().position(keep), gain.iter().rposition(keep)) {
        (Some(lo), Some(hi)) => lo..hi + 1,
        _ => 0..0,
    }
}

/// Largest power of two `E` with `E·dt ≤ s / NODES_PER_SCALE`, and at most `(n − 1)/2` so that
/// a segment always holds several nodes (and every node index stays below `padded / E`).
fn node_step(s: Seconds, dt: Seconds, n: usize) -> usize {
    let limit = (s / (NODES_PER_SCALE * dt)).min(((n.max(3) - 1) / 2) as f64);
    let mut e = 1usize;
    while ((2 * e) as f64) <= limit {
        e *= 2;
    }
    e
}

/// The smoothing weights `G(τ, j)` of every instant `τ` (module docs, step 2), with the
/// full-grid normalisation of the Gaussian and the `1/s` of the WTC definition folded in.
fn fill_weights(stage: &mut Stage, taus: &[f64], s: Seconds, dt: Seconds, n: usize) {
    let e = stage.step;
    // Full-grid normalisation: unit sum over lags |k| ≤ m (smoothing module docs).
    let m = gauss_half_width(s, dt, n);
    let total = 1.0
        + 2.0
            * (1..=m)
                .map(|k| {
                    let x = k as f64 * dt / s;
                    (-0.5 * x * x).exp()
                })
                .sum::<f64>();
    let shift = if e > 1 {
        (e as f64 * dt).powi(2) / 6.0
    } else {
        0.0
    };
    let s_eff = (s * s - shift).sqrt();
    let amp = (s / s_eff) / (total * s);
    let reach = ((TRUNCATE_SCALES * s / dt).ceil()).min((n - 1) as f64);
    // Per instant: its node range and weights by node.
    let mut per: Vec<(usize, Vec<f64>)> = Vec::with_capacity(taus.len());
    for &tau in taus {
        let lo = (tau - reach).ceil().max(0.0) as usize;
        let hi = ((tau + reach).floor() as usize).min(n - 1);
        let j_lo = lo / e;
        let j_hi = hi / e + 1;
        let mut w = vec![0.0; j_hi - j_lo + 1];
        for u in lo..=hi {
            let x = (tau - u as f64) * dt / s_eff;
            let g = amp * (-0.5 * x * x).exp();
            let j = u / e;
            let frac = (u - j * e) as f64 / e as f64;
            w[j - j_lo] += g * (1.0 - frac);
            if frac > 0.0 {
                w[j + 1 - j_lo] += g * frac;
            }
        }
        per.push((j_lo, w));
    }
    let first = per.iter().map(|(j, _)| *j).min().unwrap_or(0);
    let last = per.iter().map(|(j, w)| j + w.len() - 1).max().unwrap_or(0);
    let taps = per.iter().map(|(_, w)| w.len()).max().unwrap_or(0);
    stage.first_node = first;
    stage.n_nodes = last + 1 - first;
    stage.taps = taps;
    stage.starts = Vec::with_capacity(per.len());
    stage.weights = vec![0.0; per.len() * taps];
    for (i, (j_lo, w)) in per.iter().enumerate() {
        // Shift the window left when it would run past the last node; it still covers [j_lo, ..].
        let start = (*j_lo).min(last + 1 - taps);
        stage.starts.push(start - first);
        let row = &mut stage.weights[i * taps..(i + 1) * taps];
        row[j_lo - start..j_lo - start + w.len()].copy_from_slice(w);
    }
}

/// Weights for `Σ_{t=a}^{a+points−1} f(t)` from `f` at `m + 1` equally spaced instants over
/// `[a, a + points − 1]`: composite Simpson's rule (`m` even) plus half of each end value.
fn simpson_with_ends(points: usize, m: u64) -> Vec<f64> {
    if points == 0 {
        return Vec::new();
    }
    if m == 0 {
        return vec![1.0];
    }
    let m = m as usize;
    debug_assert!(m.is_multiple_of(2));
    let h = (points - 1) as f64 / m as f64;
    (0..=m)
        .map(|i| {
            let simpson = if i == 0 || i == m {
                h / 3.0
            } else if i % 2 == 1 {
                4.0 * h / 3.0
            } else {
                2.0 * h / 3.0
            };
            simpson + if i == 0 || i == m { 0.5 } else { 0.0 }
        })
        .collect()
}

#[cfg(test)]
pub(super) fn tests_simpson(points: usize, m: u64) -> Vec<f64> {
    simpson_with_ends(points, m)
}
