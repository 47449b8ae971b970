//! The command line, as clap definitions only. Turning these into work happens in `commands/`.

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};

#[derive(Debug, Parser)]
#[command(
    name = "nevermet",
    version,
    about = "Surrogate-pair (pseudo-dyad) permutation testing for fNIRS hyperscanning",
    long_about = "Compares the synchrony of real dyads with that of pseudo-dyads (members of \
                  different dyads who never interacted), with exact re-pairing permutation \
                  inference. A research analysis tool, not a clinical or diagnostic one."
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Write a synthetic study folder with known ground truth
    Demo(DemoArgs),
    /// Validate every input of a study and print a summary and every problem
    Check(CheckArgs),
    /// The pairing audit: admissible pseudo-pairs, exclusions and re-pairing counts
    Plan(PlanArgs),
    /// The whole analysis: check, plan, synchrony, inference, outputs
    Run(RunArgs),
    /// Run again from a manifest and verify every output file's hash
    Replay(ReplayArgs),
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum ModeArg {
    Roles,
    Peers,
}

#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Folder to write the study into (must not exist or be empty)
    #[arg(long)]
    pub out: PathBuf,
    /// Number of dyads
    #[arg(long, default_value_t = 12)]
    pub dyads: usize,
    /// Seed of the synthetic signals
    #[arg(long, default_value_t = 20261201)]
    pub seed: u64,
    /// Sampling rate of the recordings (Hz)
    #[arg(long, default_value_t = 4.0)]
    pub sampling_hz: f64,
    /// Regions of interest, the first N of prefrontal, temporoparietal, occipital, central (1-4)
    #[arg(long, value_name = "N", default_value_t = 3)]
    pub rois: usize,
    /// Channels in each region of interest
    #[arg(long, default_value_t = 2)]
    pub channels_per_roi: usize,
    /// Length of every block (whole seconds, 10-600); the recordings grow to fit the schedule
    #[arg(long, value_name = "SECONDS", default_value_t = 30.0)]
    pub block_s: f64,
    /// Blocks of each condition (joint, parallel, rest) per dyad (1-20)
    #[arg(long, value_name = "K", default_value_t = 3)]
    pub blocks_per_condition: usize,
    /// Roles (grandparent-grandchild) or peers (adult strangers)
    #[arg(long, value_enum, default_value_t = ModeArg::Roles)]
    pub mode: ModeArg,
    /// Strength of the real-pair coupling, as a multiple of the default (0: a null study)
    #[arg(long, default_value_t = 1.0)]
    pub coupling: f64,
}

#[derive(Debug, Args)]
pub struct CheckArgs {
    /// The study's study.toml
    pub study: PathBuf,
}

#[derive(Debug, Args)]
pub struct PlanArgs {
    /// The study's study.toml
    pub study: PathBuf,
    /// Also write pairs.tsv and plan.json into this folder
    #[arg(long)]
    pub out: Option<PathBuf>,
}

#[derive(Debug, Args)]
pub struct RunArgs {
    /// The study's study.toml
    pub study: PathBuf,
    /// Output folder (written atomically)
    #[arg(long)]
    pub out: PathBuf,
    /// Master seed (overrides [inference] seed)
    #[arg(long)]
    pub seed: Option<u64>,
    /// Worker threads (default: all cores)
    #[arg(long)]
    pub threads: Option<usize>,
    /// Memory budget for the synchrony stage, in GiB
    #[arg(long, default_value_t = 4.0)]
    pub memory_gib: f64,
    /// No progress bars
    #[arg(long)]
    pub quiet: bool,
    /// Replace an existing non-empty output folder (only once the new results are complete)
    #[arg(long)]
    pub force: bool,
}

#[derive(Debug, Args)]
pub struct ReplayArgs {
    /// The manifest.json of an earlier run, in its output folder
    pub manifest: PathBuf,
    /// The study.toml to replay against, when the study was moved away from its outputs
    /// (default: the study the manifest names, relative to the manifest's folder)
    #[arg(long, value_name = "STUDY.toml")]
    pub study: Option<PathBuf>,
    /// Worker threads (default: the thread count the manifest records)
    #[arg(long)]
    pub threads: Option<usize>,
    /// No progress bars
    #[arg(long)]
    pub quiet: bool,
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn definition_is_consistent() {
        Cli::command().debug_assert();
    }

    #[test]
    fn run_takes_the_documented_options() {
        let cli = Cli::try_parse_from([
            "nevermet",
            "run",
            "s/study.toml",
            "--out",
            "o",
            "--seed",
            "7",
            "--threads",
            "2",
            "--quiet",
            "--force",
        ])
        .unwrap();
        let Command::Run(a) = cli.command else {
            panic!("not run")
        };
        assert_eq!(a.seed, Some(7));
        assert_eq!(a.threads, Some(2));
        assert!(a.quiet && a.force);
    }
}
