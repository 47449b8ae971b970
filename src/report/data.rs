//! Plain input types of the HTML report: everything the page shows, already computed.
//!
//! These types carry numbers and labels only; they hold no logic and must not reach into the
//! engine or inference stages, so the page can be rendered (and tested) from hand-built values.

use ndarray::Array2;

/// Everything one report page shows, in the order the page shows it.
#[derive(Clone, Debug)]
pub struct ReportData {
    pub title: String,
    pub tool_version: String,
    /// Run facts that are stable across reruns (seed, threads); never a timestamp, so that the
    /// page stays byte-identical when the same run is repeated.
    pub generated_note: String,
    /// Label and value: dyads, members, conditions, blocks, channels, ROIs, ...
    pub study_numbers: Vec<(String, String)>,
    /// Exclusion rule name and the number of candidate pairs it excluded.
    pub rules: Vec<(String, usize)>,
    /// Label and value: candidates, real, admissible, excluded, re-pairings, sampler.
    pub pairing_counts: Vec<(String, String)>,
    /// Methods paragraph (plain text; escaped when rendered).
    pub methods: String,
    pub results: Vec<ResultLine>,
    pub contrasts: Vec<ContrastLine>,
    /// One entry per cell that has a re-pairing test.
    pub cells: Vec<CellPlots>,
    pub matrix: Option<MatrixPlot>,
    pub warnings: Vec<String>,
}

/// One tested cell (condition, chromophore, band, roi) of the results table.
#[derive(Clone, Debug)]
pub struct ResultLine {
    pub condition: String,
    pub chromophore: String,
    pub band: String,
    pub roi: String,
    pub test: String,
    pub n_dyads: usize,
    pub n_pseudo: usize,
    pub real_mean: f64,
    pub pseudo_mean: f64,
    pub excess: f64,
    pub effect_size: f64,
    pub ci_low: f64,
    pub ci_high: f64,
    pub p: f64,
    pub p_adj: f64,
    pub correction: String,
    pub significant: bool,
}

/// One condition contrast of the contrasts table.
#[derive(Clone, Debug)]
pub struct ContrastLine {
    pub contrast: String,
    pub chromophore: String,
    pub band: String,
    pub roi: String,
    pub n_dyads: usize,
    pub mean_difference: f64,
    pub effect_size: f64,
    pub ci_low: f64,
    pub ci_high: f64,
    pub p: f64,
    pub p_adj: f64,
    pub significant: bool,
}

/// The plots of one cell with a re-pairing test.
#[derive(Clone, Debug)]
pub struct CellPlots {
    /// Human-readable cell name, e.g. "joint · hbo · task · prefrontal".
    pub label: String,
    pub significant: bool,
    /// Observed mean over real pairs (T).
    pub observed: f64,
    /// Null statistic T* of each re-pairing.
    pub null: Vec<f64>,
    /// Dyad id, real-pair value, mean over that dyad's pseudo-pairs; NaN marks a missing value.
    pub dyads: Vec<(String, f64, f64)>,
}

/// The candidate-pair matrix of one cell: rows are members of one role, columns of the other.
#[derive(Clone, Debug)]
pub struct MatrixPlot {
    pub label: String,
    pub row_labels: Vec<String>,
    pub col_labels: Vec<String>,
    /// Rows × cols; NaN where there is no value.
    pub values: Array2<f64>,
    /// Rows × cols: 0 excluded, 1 admissible pseudo-pair, 2 real pair.
    pub status: Array2<u8>,
}

/// The analysis settings and counts the methods paragraph is generated from.
#[derive(Clone, Debug)]
pub struct MethodsInput {
    pub tool_version: String,
    /// "wtc" or "corr".
    pub measure: String,
    pub omega0: f64,
    pub scales_per_octave: usize,
    /// Band name, shortest and longest period in seconds.
    pub bands: Vec<(String, f64, f64)>,
    pub chromophores: Vec<String>,
    pub channel_pairs: String,
    pub min_channels_per_roi: usize,
    /// Context kept on each side of a block, in seconds.
    pub context_s: f64,
    /// Whether WTC was evaluated on the coarsened time grid rather than at every sample.
    pub coarse_grid: bool,
    /// Condition and its analysed block lengths in seconds.
    pub block_lengths: Vec<(String, Vec<f64>)>,
    pub mode: String,
    pub roles: Vec<String>,
    pub keep_apart: Vec<String>,
    pub pair_within: Vec<String>,
    pub n_dyads: usize,
    pub n_members: usize,
    pub admissible_pairs: usize,
    pub excluded_by_rule: Vec<(String, usize)>,
    /// Size of the reference set, as text because an exact count may exceed any integer type.
    pub repairings_count: String,
    /// True when the whole reference set is enumerated rather than sampled.
    pub repairings_exact: bool,
    pub permutations: usize,
    pub sampler: String,
    pub correction: String,
    pub family: Vec<String>,
    pub alpha: f64,
    pub alternative: String,
    pub bootstrap: usize,
    pub seed: u64,
    /// True when the reference set is re-pairings of pseudo-pairs only (the approximate one).
    pub pseudo_only: bool,
    /// What the study's `[study] allow_*` keys let through (missing or truncated blocks), one
    /// note each, so the paper says so.
    pub allowances: Vec<String>,
}
