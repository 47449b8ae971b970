//! Public vocabulary of the inference stage: its inputs (layout, cell matrices, draws,
//! configuration), its outputs (result, contrast, dyad and null rows) and its error type.
//! Owns no computation; the tests live in the sibling modules.

use std::fmt;
use std::str::FromStr;

use ndarray::Array2;
use serde::{Deserialize, Serialize};

use crate::vocab::{Col, PairGrid, Row};

/// Direction of the alternative hypothesis. `Greater` is the default of the trade for
/// synchrony: real dyads are expected to be more synchronous than pseudo-dyads.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Alternative {
    Greater,
    TwoSided,
}

impl fmt::Display for Alternative {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Alternative::Greater => "greater",
            Alternative::TwoSided => "two-sided",
        })
    }
}

impl FromStr for Alternative {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s {
            "greater" => Ok(Alternative::Greater),
            "two-sided" => Ok(Alternative::TwoSided),
            other => Err(format!(
                "unknown alternative {other:?} (expected \"greater\" or \"two-sided\")"
            )),
        }
    }
}

/// Multiple-comparison procedure applied within each family of cells.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Correction {
    MaxStat,
    Holm,
    Bh,
    By,
    Bonferroni,
    None,
}

impl Correction {
    const NAMES: [(Correction, &'static str); 6] = [
        (Correction::MaxStat, "maxstat"),
        (Correction::Holm, "holm"),
        (Correction::Bh, "bh"),
        (Correction::By, "by"),
        (Correction::Bonferroni, "bonferroni"),
        (Correction::None, "none"),
    ];
}

impl fmt::Display for Correction {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let name = Self::NAMES
            .iter()
            .find(|(c, _)| c == self)
            .map(|(_, n)| *n)
            .unwrap_or("?");
        f.write_str(name)
    }
}

impl FromStr for Correction {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        Self::NAMES
            .iter()
            .find(|(_, n)| *n == s)
            .map(|(c, _)| *c)
            .ok_or_else(|| {
                format!(
                    "unknown correction {s:?} (expected one of maxstat, holm, bh, by, bonferroni, none)"
                )
            })
    }
}

/// An axis along which cells are pooled into one correction family.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum FamilyAxis {
    Band,
    Roi,
    Chromophore,
}

impl fmt::Display for FamilyAxis {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            FamilyAxis::Band => "band",
            FamilyAxis::Roi => "roi",
            FamilyAxis::Chromophore => "chromophore",
        })
    }
}

impl FromStr for FamilyAxis {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s {
            "band" => Ok(FamilyAxis::Band),
            "roi" => Ok(FamilyAxis::Roi),
            "chromophore" => Ok(FamilyAxis::Chromophore),
            other => Err(format!(
                "unknown family axis {other:?} (expected band, roi or chromophore)"
            )),
        }
    }
}

/// Which test produced a result row.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum TestKind {
    /// The group test against re-pairings (written `re-pairing`).
    #[serde(rename = "re-pairing")]
    Repairing,
    DyadContrast,
}

impl fmt::Display for TestKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            TestKind::Repairing => "re-pairing",
            TestKind::DyadContrast => "dyad-contrast",
        })
    }
}

#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub struct CellKey {
    pub condition: String,
    pub chromophore: String,
    pub band: String,
    pub roi: String,
}

impl fmt::Display for CellKey {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "condition={} chromophore={} band={} roi={}",
            self.condition, self.chromophore, self.band, self.roi
        )
    }
}

/// One cell's synchrony matrix, shaped like the layout's grid (standard row-major layout, so
/// a [`Cell`](crate::vocab::Cell) indexes its slice); NaN (or any non-finite value) marks a missing or excluded
/// candidate pair.
#[derive(Debug, Clone, PartialEq)]
pub struct CellMatrix {
    pub key: CellKey,
    pub values: Array2<f64>,
}

impl CellMatrix {
    /// The values in [`Cell`](crate::vocab::Cell) order.
    pub fn flat(&self) -> &[f64] {
        self.values
            .as_slice()
            .expect("cell matrices are in standard layout")
    }
}

/// Who is who in the matrices. Shared by all cells so that the same re-pairings index
/// every cell.
#[derive(Debug, Clone, PartialEq)]
pub struct Layout {
    /// Rows and columns; peers mode: members × members, symmetric. Roles mode: row i and
    /// column i belong to dyad i.
    pub grid: PairGrid,
    pub dyads: Vec<String>,
    /// Per dyad, the cell of its real pair.
    pub real: Vec<(Row, Col)>,
    /// Pairs a re-pairing may hold (real pairs too with the default reference set);
    /// symmetric in peers mode.
    pub admissible: Array2<bool>,
    /// Per dyad: admissible pairs containing either of its members, each once.
    pub dyad_pseudo: Vec<Vec<(Row, Col)>>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ContrastSpec {
    pub name: String,
    pub condition_a: String,
    pub condition_b: String,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct InferenceConfig {
    pub alternative: Alternative,
    pub alpha: f64,
    pub correction: Correction,
    /// Axes pooled into one family; the axes not listed (and the condition, the test and
    /// the contrast) separate families.
    pub family: Vec<FamilyAxis>,
    /// Percentile-bootstrap resamples for the repairing excess interval (0 = no interval).
    pub bootstrap: usize,
    /// Sign flips for the dyad-contrast and condition-contrast permutation p
    /// (0 = no sign-flip p).
    pub sign_flips: usize,
    pub seed: u64,
    pub contrasts: Vec<ContrastSpec>,
}

/// Re-pairings drawn by the sampler: `pairs` holds K blocks of `n_dyads` (row, col) pairs.
#[derive(Debug, Clone, Copy)]
pub struct Draws<'a> {
    pub pairs: &'a [(u32, u32)],
    pub n_dyads: usize,
    /// The blocks are the full enumeration of the reference set (the real pairing itself
    /// excluded), each exactly once.
    pub exact: bool,
}

impl Draws<'_> {
    /// Number of re-pairings K.
    pub fn len(&self) -> usize {
        self.pairs.len().checked_div(self.n_dyads).unwrap_or(0)
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResultRow {
    pub key: CellKey,
    pub test: TestKind,
    pub n_dyads: usize,
    pub n_pseudo: usize,
    pub real_mean: f64,
    pub pseudo_mean: f64,
    pub excess: f64,
    pub effect_size: f64,
    pub ci_low: f64,
    pub ci_high: f64,
    pub statistic: f64,
    pub p: f64,
    /// Sign-flip permutation p of the dyad contrast (NaN for the repairing test, whose
    /// `p` is already a permutation p).
    pub p_signflip: f64,
    pub p_adj: f64,
    pub correction: Correction,
    pub significant: bool,
    pub testable: bool,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ContrastRow {
    pub contrast: String,
    pub condition_a: String,
    pub condition_b: String,
    pub chromophore: String,
    pub band: String,
    pub roi: String,
    pub n_dyads: usize,
    pub mean_difference: f64,
    /// Cohen's d_z of the paired differences.
    pub effect_size: f64,
    pub ci_low: f64,
    pub ci_high: f64,
    /// Paired t.
    pub statistic: f64,
    pub df: f64,
    /// Paired t-test p (two-sided).
    pub p: f64,
    pub p_signflip: f64,
    pub p_adj: f64,
    pub correction: Correction,
    pub significant: bool,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DyadRow {
    pub dyad: String,
    pub key: CellKey,
    pub real: f64,
    pub pseudo_mean: f64,
    pub n_pseudo: usize,
}

/// The re-pairing null of one cell, for plotting.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NullSummary {
    pub key: CellKey,
    /// The observed group statistic T (NaN when the cell is untestable).
    pub observed: f64,
    /// T* per draw, in draw order (NaN for a draw none of whose pairs has a value).
    pub null: Vec<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InferenceOutput {
    pub results: Vec<ResultRow>,
    pub contrasts: Vec<ContrastRow>,
    pub dyads: Vec<DyadRow>,
    pub nulls: Vec<NullSummary>,
    pub warnings: Vec<String>,
}

/// Inputs that do not fit together. These are contract violations by the caller (the
/// sampler or the synchrony stage), reported before any computation.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum InferenceError {
    #[error("inference layout is inconsistent: {0}")]
    Layout(String),
    #[error("inference cell {key}: {detail}")]
    Cell { key: CellKey, detail: String },
    #[error("inference draws are inconsistent: {0}")]
    Draws(String),
    #[error("inference configuration is invalid: {0}")]
    Config(String),
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip_through_display_and_from_str() {
        for (c, n) in Correction::NAMES {
            assert_eq!(c.to_string(), n);
            assert_eq!(n.parse::<Correction>().unwrap(), c);
        }
        for a in [Alternative::Greater, Alternative::TwoSided] {
            assert_eq!(a.to_string().parse::<Alternative>().unwrap(), a);
        }
        for f in [FamilyAxis::Band, FamilyAxis::Roi, FamilyAxis::Chromophore] {
            assert_eq!(f.to_string().parse::<FamilyAxis>().unwrap(), f);
        }
        assert_eq!(TestKind::DyadContrast.to_string(), "dyad-contrast");
        assert!("fdr".parse::<Correction>().is_err());
    }

    #[test]
    fn draws_count_blocks() {
        let pairs = [(0, 1), (1, 0), (0, 1), (1, 0)];
        let d = Draws {
            pairs: &pairs,
            n_dyads: 2,
            exact: false,
        };
        assert_eq!(d.len(), 2);
        let none = Draws {
            pairs: &[],
            n_dyads: 0,
            exact: false,
        };
        assert!(none.is_empty());
    }
}
