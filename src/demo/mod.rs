//! The synthetic demo study: a complete, invented study folder that the rest of nevermet can
//! load and analyse, with a known ground truth.
//!
//! Owns the public entry point ([`write_demo`]), its options and their validation, and the
//! random streams every part of the demo draws from. Who is in the study lives in
//! `scenario`, the signals in `signals` (with the haemodynamic response in `hrf`), and the
//! files on disk in `write`. This module must not read study folders or run any analysis.

use std::path::{Path, PathBuf};

use anyhow::{Context, bail};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

mod hrf;
mod scenario;
mod signals;
mod write;

/// Smallest and largest study the demo builds. Each site needs at least four dyads: with three,
/// the two-dyad family at a site leaves no complete re-pairing that keeps families apart. The
/// upper bound keeps every id at most three digits wide (ids grow from two digits to three only
/// above 99 dyads).
const MIN_DYADS: usize = 8;
const MAX_DYADS: usize = 998;
const MIN_SAMPLING_HZ: f64 = 1.0;
const MAX_SAMPLING_HZ: f64 = 50.0;
/// Blocks shorter than 10 s would be mostly the 3 s fades of the coupling at their edges.
const MIN_BLOCK_S: f64 = 10.0;
const MAX_BLOCK_S: f64 = 600.0;
const MAX_BLOCKS_PER_CONDITION: usize = 20;

/// Settings of the generated study; the defaults give the documented demo folder.
#[derive(Clone, Debug, PartialEq)]
pub struct DemoOptions {
    /// Number of real dyads, half at each of the two sites (the first takes the odd one).
    pub dyads: usize,
    /// Seed of every random draw, also written as the inference seed of the study.
    pub seed: u64,
    /// Sampling rate of the recordings.
    pub sampling_hz: f64,
    /// Regions of interest, the first this many of prefrontal, temporoparietal, occipital and
    /// central (1 to 4); real pairs are coupled in the first two only.
    pub rois: usize,
    /// Channels in each region of interest.
    pub channels_per_roi: usize,
    /// Length of every block in seconds; a whole number, so that onsets stay on samples.
    pub block_s: f64,
    /// Blocks of each of the three conditions in every dyad's schedule. The recordings grow
    /// with the schedule so the analysis context always fits after the last block.
    pub blocks_per_condition: usize,
    /// Which kind of study: grandparent–grandchild roles or adult strangers.
    pub mode: DemoMode,
    /// Strength of the real-pair coupling as a multiple of the demo's built-in amplitude; 0
    /// writes a null study (shared task responses, no coupling), for calibration checks.
    pub coupling: f64,
}

impl Default for DemoOptions {
    fn default() -> Self {
        DemoOptions {
            dyads: 12,
            seed: 20261201,
            sampling_hz: 4.0,
            rois: 3,
            channels_per_roi: 2,
            block_s: 30.0,
            blocks_per_condition: 3,
            mode: DemoMode::Roles,
            coupling: 1.0,
        }
    }
}

/// The two demo scenarios, which differ in how pseudo-pairs may be formed.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum DemoMode {
    /// Grandparent–grandchild dyads: pseudo-pairs join a grandparent with another child.
    Roles,
    /// Adult strangers: any two adults of different dyads may form a pseudo-pair.
    Peers,
}

/// What was written, so the caller can tell the user.
#[derive(Clone, Debug)]
pub struct DemoSummary {
    pub dyads: usize,
    /// Member rows (one person's recording within one dyad).
    pub members: usize,
    /// Every file written, as paths inside the output folder.
    pub files: Vec<PathBuf>,
}

/// Writes the whole study folder into `out` (created if missing; refuses a non-empty folder).
pub fn write_demo(opts: &DemoOptions, out: &Path) -> anyhow::Result<DemoSummary> {
    validate(opts)?;
    prepare_folder(out)?;
    let study = scenario::Scenario::build(opts);
    let files = write::write_study(&study, opts, out)
        .with_context(|| format!("writing the demo study into {}", out.display()))?;
    Ok(DemoSummary {
        dyads: study.dyads.len(),
        members: study.members.len(),
        files,
    })
}

fn validate(opts: &DemoOptions) -> anyhow::Result<()> {
    if opts.dyads < MIN_DYADS || opts.dyads > MAX_DYADS {
        bail!(
            "demo dyads must be from {MIN_DYADS} to {MAX_DYADS} (got {}): the dyads are split \
             over two sites and each site needs at least 4",
            opts.dyads
        );
    }
    if !(MIN_SAMPLING_HZ..=MAX_SAMPLING_HZ).contains(&opts.sampling_hz) {
        bail!(
            "demo sampling rate must be between {MIN_SAMPLING_HZ} and {MAX_SAMPLING_HZ} Hz (got {})",
            opts.sampling_hz
        );
    }
    if !(0.0..=10.0).contains(&opts.coupling) {
        bail!(
            "demo coupling must be between 0 and 10 (got {})",
            opts.coupling
        );
    }
    let regions = scenario::ROIS.len();
    if opts.rois == 0 || opts.rois > regions {
        bail!(
            "demo regions must be from 1 to {regions} (got {}): the demo has the regions {}, \
             taken in that order",
            opts.rois,
            scenario::ROIS.map(|r| r.name).join(", ")
        );
    }
    if !(MIN_BLOCK_S..=MAX_BLOCK_S).contains(&opts.block_s) || opts.block_s.fract() != 0.0 {
        bail!(
            "demo block length must be a whole number of seconds from {MIN_BLOCK_S} to \
             {MAX_BLOCK_S} (got {}), so that every onset falls on a sample",
            opts.block_s
        );
    }
    if opts.blocks_per_condition == 0 || opts.blocks_per_condition > MAX_BLOCKS_PER_CONDITION {
        bail!(
            "demo blocks per condition must be from 1 to {MAX_BLOCKS_PER_CONDITION} (got {})",
            opts.blocks_per_condition
        );
    }
    if opts.channels_per_roi == 0 {
        bail!("demo channels per region must be at least 1 (got 0)");
    }
    if opts.channels_per_roi > 9 {
        bail!(
            "demo channels per region must be at most 9 (got {}), so channel names stay one \
             digit wide",
            opts.channels_per_roi
        );
    }
    Ok(())
}

/// Creates `out`, or accepts it if it is an empty folder; anything else is refused so that a
/// demo never mixes with, or overwrites, someone's files.
fn prepare_folder(out: &Path) -> anyhow::Result<()> {
    if out.exists() {
        if !out.is_dir() {
            bail!("{} exists and is not a folder", out.display());
        }
        let mut entries = std::fs::read_dir(out)
            .with_context(|| format!("cannot list the folder {}", out.display()))?;
        if entries.next().is_some() {
            bail!(
                "{} is not empty: the demo is written only into a new or empty folder",
                out.display()
            );
        }
        return Ok(());
    }
    std::fs::create_dir_all(out)
        .with_context(|| format!("cannot create the folder {}", out.display()))
}

/// What a random stream is used for; part of the stream number so that no two uses share one.
#[derive(Clone, Copy)]
pub(crate) enum Purpose {
    Events = 1,
    Physiology = 2,
    Channel = 3,
    Coupling = 4,
    Lag = 5,
}

/// The random stream for one use: a pure function of (seed, purpose, a, b), so every file's
/// content is independent of the order in which files are generated.
pub(crate) fn stream(seed: u64, purpose: Purpose, a: usize, b: usize) -> ChaCha8Rng {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(((purpose as u64) << 56) | ((a as u64) << 24) | b as u64);
    rng
}

/// A uniform deviate in `[lo, hi)`.
pub(crate) fn uniform(rng: &mut ChaCha8Rng, lo: f64, hi: f64) -> f64 {
    lo + (hi - lo) * rng.random::<f64>()
}

/// A standard normal deviate by the Box–Muller transform (Box & Muller 1958); one of the pair is
/// discarded so each call consumes exactly two uniforms.
pub(crate) fn normal(rng: &mut ChaCha8Rng) -> f64 {
    // 1 - u lies in (0, 1], so the logarithm is finite.
    let u1 = 1.0 - rng.random::<f64>();
    let u2 = rng.random::<f64>();
    (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn options_out_of_range_are_refused_with_the_rule() {
        let dir = tempfile::tempdir().unwrap();
        let cases = [
            (
                DemoOptions {
                    dyads: 6,
                    ..Default::default()
                },
                "from 8 to 998 (got 6)",
            ),
            (
                DemoOptions {
                    dyads: 7,
                    ..Default::default()
                },
                "from 8 to 998 (got 7)",
            ),
            (
                DemoOptions {
                    sampling_hz: 0.5,
                    ..Default::default()
                },
                "between 1 and 50",
            ),
            (
                DemoOptions {
                    sampling_hz: f64::NAN,
                    ..Default::default()
                },
                "between 1 and 50",
            ),
            (
                DemoOptions {
                    channels_per_roi: 0,
                    ..Default::default()
                },
                "at least 1",
            ),
            (
                DemoOptions {
                    dyads: 1000,
                    ..Default::default()
                },
                "from 8 to 998 (got 1000)",
            ),
            (
                DemoOptions {
                    rois: 0,
                    ..Default::default()
                },
                "regions must be from 1 to 4 (got 0)",
            ),
            (
                DemoOptions {
                    rois: 5,
                    ..Default::default()
                },
                "prefrontal, temporoparietal, occipital, central",
            ),
            (
                DemoOptions {
                    block_s: 45.5,
                    ..Default::default()
                },
                "whole number of seconds from 10 to 600 (got 45.5)",
            ),
            (
                DemoOptions {
                    block_s: 5.0,
                    ..Default::default()
                },
                "from 10 to 600",
            ),
            (
                DemoOptions {
                    block_s: f64::INFINITY,
                    ..Default::default()
                },
                "from 10 to 600",
            ),
            (
                DemoOptions {
                    blocks_per_condition: 0,
                    ..Default::default()
                },
                "blocks per condition must be from 1 to 20 (got 0)",
            ),
            (
                DemoOptions {
                    blocks_per_condition: 21,
                    ..Default::default()
                },
                "from 1 to 20",
            ),
        ];
        for (i, (opts, needle)) in cases.iter().enumerate() {
            let out = dir.path().join(format!("case{i}"));
            let Err(err) = write_demo(opts, &out) else {
                panic!("options must be refused: {opts:?}");
            };
            assert!(err.to_string().contains(needle), "{err}");
            assert!(!out.exists(), "nothing is written for refused options");
        }
    }

    #[test]
    fn a_non_empty_folder_is_refused() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join("notes.txt"), "keep me").unwrap();
        let Err(err) = write_demo(&DemoOptions::default(), dir.path()) else {
            panic!("a non-empty folder must be refused");
        };
        assert!(err.to_string().contains("is not empty"), "{err}");
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
    }

    #[test]
    fn box_muller_deviates_have_unit_variance() {
        // Moments of the standard normal: mean 0, variance 1, fourth moment 3. With 200 000
        // draws the standard errors are about 0.0022, 0.0032 and 0.02.
        let mut rng = stream(7, Purpose::Channel, 0, 0);
        let n = 200_000;
        let xs: Vec<f64> = (0..n).map(|_| normal(&mut rng)).collect();
        let mean = xs.iter().sum::<f64>() / n as f64;
        let var = xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n as f64;
        let m4 = xs.iter().map(|x| (x - mean).powi(4)).sum::<f64>() / n as f64;
        assert!(mean.abs() < 0.01, "mean {mean}");
        assert!((var - 1.0).abs() < 0.015, "variance {var}");
        assert!((m4 - 3.0).abs() < 0.1, "fourth moment {m4}");
    }

    #[test]
    fn streams_differ_by_purpose_and_index() {
        let draw = |p, a, b| stream(1, p, a, b).random::<u64>();
        let base = draw(Purpose::Channel, 3, 4);
        assert_eq!(base, draw(Purpose::Channel, 3, 4));
        assert_ne!(base, draw(Purpose::Channel, 4, 3));
        assert_ne!(base, draw(Purpose::Physiology, 3, 4));
        assert_ne!(base, stream(2, Purpose::Channel, 3, 4).random::<u64>());
    }
}
