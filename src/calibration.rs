//! Calibration by simulation: whole synthetic studies written by the demo generator, loaded,
//! paired and analysed by the same pipeline as `nevermet run`, with a tally of how often each
//! test rejects. With coupling 0 every member carries the shared block-locked task response
//! and nothing else links real partners, so the null hypothesis holds and a valid test rejects
//! at about α; with the demo's coupling the tally is the power.
//!
//! Used by the calibration tests (which assert bounds) and by the calibrate example (larger
//! runs for the README). The size bound is exact binomial: under a test of size α, the number
//! of rejections among N independent studies is Binomial(N, α).

use rayon::prelude::*;
use statrs::distribution::{Binomial, DiscreteCDF};

use crate::demo::{DemoOptions, write_demo};
use crate::engine::Silent;
use crate::inference::{self, CellKey, InferenceOutput, TestKind};
use crate::pairing::{NullDesign, Reference};
use crate::pipeline;
use crate::study;

/// One simulated study design.
#[derive(Clone, Debug)]
pub struct Design {
    pub label: String,
    /// Dyads of the demo scenario (families, one grandparent in two dyads, twins).
    pub dyads: usize,
    /// Drops the site rule, so every member is re-paired in one pool.
    pub one_pool: bool,
    /// 0 for a null study; 1 is the demo's coupling.
    pub coupling: f64,
    pub sampling_hz: f64,
    pub rois: usize,
    pub blocks_per_condition: usize,
    /// Re-pairings (and sign flips) per study.
    pub permutations: usize,
}

impl Design {
    /// A small, fast design: 2 Hz, two regions, two blocks per condition, 999 re-pairings.
    pub fn small(label: &str, dyads: usize, one_pool: bool, coupling: f64) -> Design {
        Design {
            label: label.to_string(),
            dyads,
            one_pool,
            coupling,
            sampling_hz: 2.0,
            rois: 2,
            blocks_per_condition: 2,
            permutations: 999,
        }
    }
}

/// What one test did in one study: the fixed cell rejected at α (uncorrected), and any cell
/// of the fixed family significant after the correction.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Rejections {
    pub cell: bool,
    pub family: bool,
}

/// One study's outcome for both reference sets of the group test and for the dyad contrast
/// (which does not depend on the reference set).
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct StudyOutcome {
    pub all: Rejections,
    pub pseudo_only: Rejections,
    pub dyad_contrast: Rejections,
}

/// The cell fixed in advance: joint condition, HbO, the task band, prefrontal region (coupled
/// in the demo when coupling > 0). Its family is every cell of the joint condition.
pub const FIXED_CONDITION: &str = "joint";
const FIXED_CHROMOPHORE: &str = "hbo";
const FIXED_ROI: &str = "prefrontal";

fn is_fixed(k: &CellKey) -> bool {
    k.condition == FIXED_CONDITION && k.chromophore == FIXED_CHROMOPHORE && k.roi == FIXED_ROI
}

fn rejections(out: &InferenceOutput, test: TestKind, alpha: f64) -> Rejections {
    let rows = || {
        out.results
            .iter()
            .filter(move |r| r.test == test && r.key.condition == FIXED_CONDITION)
    };
    Rejections {
        cell: rows().any(|r| is_fixed(&r.key) && r.p < alpha),
        family: rows().any(|r| r.significant),
    }
}

/// Writes, loads and analyses one study of the design with the given seed.
pub fn run_study(design: &Design, seed: u64) -> anyhow::Result<StudyOutcome> {
    let dir = tempfile::tempdir()?;
    let folder = dir.path().join("study");
    write_demo(
        &DemoOptions {
            dyads: design.dyads,
            seed,
            sampling_hz: design.sampling_hz,
            rois: design.rois,
            blocks_per_condition: design.blocks_per_condition,
            coupling: design.coupling,
            ..DemoOptions::default()
        },
        &folder,
    )?;
    let toml = folder.join("study.toml");
    let mut text = std::fs::read_to_string(&toml)?;
    if design.one_pool {
        text = text.replace("pair_within = [\"site\"]", "pair_within = []");
    }
    std::fs::write(&toml, text)?;
    let mut st = study::load(&toml)?;
    st.config.inference.permutations = design.permutations;
    st.config.inference.bootstrap = 0;
    let plan = pipeline::build_plan(&st).map_err(|p| anyhow::anyhow!(p.join("; ")))?;
    let syn = pipeline::synchrony(&st, &plan, 1 << 30, &Silent)?;
    let cells = pipeline::cells(&syn);
    let (repair_seed, inference_seed) = pipeline::stream_seeds(seed);
    let cfg = pipeline::inference_config(&st, inference_seed);
    let alpha = st.config.inference.alpha;
    let mut outcome = StudyOutcome::default();
    for reference in [Reference::All, Reference::PseudoOnly] {
        let null = NullDesign::new(&plan, reference, design.permutations);
        let reps = null.draw(repair_seed)?;
        let draws = inference::Draws {
            pairs: &reps.pairs,
            n_dyads: reps.n_dyads,
            exact: reps.exact,
        };
        let layout = pipeline::layout(&st, &plan, &null);
        let out = inference::try_infer(&layout, &cells, &draws, &cfg)?;
        let group = rejections(&out, TestKind::Repairing, alpha);
        match reference {
            Reference::All => {
                outcome.all = group;
                outcome.dyad_contrast = rejections(&out, TestKind::DyadContrast, alpha);
            }
            Reference::PseudoOnly => outcome.pseudo_only = group,
        }
    }
    Ok(outcome)
}

/// Rejection counts over many studies.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Tally {
    pub studies: usize,
    /// (cell, family) rejection counts per test: all, pseudo-only, dyad contrast.
    pub all: (usize, usize),
    pub pseudo_only: (usize, usize),
    pub dyad_contrast: (usize, usize),
}

impl Tally {
    fn add(&mut self, o: &StudyOutcome) {
        self.studies += 1;
        for (t, r) in [
            (&mut self.all, o.all),
            (&mut self.pseudo_only, o.pseudo_only),
            (&mut self.dyad_contrast, o.dyad_contrast),
        ] {
            t.0 += usize::from(r.cell);
            t.1 += usize::from(r.family);
        }
    }

    /// A count as a rate of the studies.
    pub fn rate(&self, count: usize) -> f64 {
        count as f64 / self.studies.max(1) as f64
    }
}

/// Stack of the workers that run whole studies. Each study's pipeline runs parallel loops of
/// its own on the same workers, and a worker waiting inside one may take up another whole
/// study on top of its stack, so the default 2 MiB is not enough.
const STUDY_WORKER_STACK: usize = 256 << 20;

/// Runs `studies` studies of the design (seeds `first_seed..`), in parallel; the tally does not
/// depend on the thread count.
pub fn tally(design: &Design, first_seed: u64, studies: usize) -> anyhow::Result<Tally> {
    let pool = rayon::ThreadPoolBuilder::new()
        .stack_size(STUDY_WORKER_STACK)
        .build()?;
    let outcomes: Vec<StudyOutcome> = pool.install(|| {
        (0..studies as u64)
            .into_par_iter()
            .map(|k| run_study(design, first_seed + k))
            .collect::<anyhow::Result<_>>()
    })?;
    let mut t = Tally::default();
    for o in &outcomes {
        t.add(o);
    }
    Ok(t)
}

/// The rejection counts a test of size α keeps to in `n` studies except with probability at
/// most `tail` on each side: the largest `lo` with P(X < lo) ≤ tail and the smallest `hi`
/// with P(X > hi) ≤ tail, X ~ Binomial(n, α).
pub fn binomial_bounds(n: usize, alpha: f64, tail: f64) -> (usize, usize) {
    let b = Binomial::new(alpha, n as u64).expect("valid binomial");
    let lo = (0..=n as u64)
        .find(|&k| k > 0 && b.cdf(k - 1) > tail)
        .map_or(0, |k| k - 1) as usize;
    let hi = (0..=n as u64)
        .find(|&k| b.sf(k) <= tail)
        .unwrap_or(n as u64) as usize;
    (lo, hi)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: scipy.stats.binom (scipy 1.17): for n = 600, p = 0.05 the largest k with
    // cdf(k − 1) ≤ 0.001 is 15 and the smallest k with sf(k) ≤ 0.001 is 48 (sf(47) = 0.00111).
    #[test]
    fn bounds_hold_their_tails() {
        let (n, a, tail) = (600, 0.05, 0.001);
        let (lo, hi) = binomial_bounds(n, a, tail);
        let b = Binomial::new(a, n as u64).unwrap();
        assert!(b.cdf(lo as u64 - 1) <= tail && b.cdf(lo as u64) > tail);
        assert!(b.sf(hi as u64) <= tail && b.sf(hi as u64 - 1) > tail);
        assert!(
            (12..=16).contains(&lo) && (45..=50).contains(&hi),
            "{lo} {hi}"
        );
    }
}
