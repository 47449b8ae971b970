//! nevermet: surrogate-pair (pseudo-dyad) permutation testing for fNIRS hyperscanning.
//!
//! The data flow runs one way: `study` (validated inputs) → `pairing` (who may pair with whom,
//! and why not) → `engine` (synchrony matrices, real pairs on the diagonal) → `inference`
//! (re-pairing permutations, corrections) → `report` (tables, manifest, HTML). Each stage is a
//! function from one plain type to the next; `commands` sequences them for the command line.

pub mod calibration;
pub mod cli;
pub mod commands;
pub mod console;
pub mod demo;
pub mod engine;
pub mod human;
pub mod inference;
pub mod pairing;
pub mod pipeline;
pub mod report;
pub mod spectral;
pub mod study;
pub mod table;
pub mod vocab;

use std::process::ExitCode;

/// Exit code of a replay that found a difference.
pub const EXIT_DIFFERS: u8 = 1;
/// Exit code of bad input or a failed run.
pub const EXIT_FAILURE: u8 = 2;

/// Runs one command.
pub fn run(command: cli::Command) -> anyhow::Result<ExitCode> {
    use cli::Command;
    match command {
        Command::Demo(a) => commands::demo::demo(&a),
        Command::Check(a) => Ok(commands::check::check(&a)),
        Command::Plan(a) => commands::plan::plan(&a),
        Command::Run(a) => commands::run::run(&a),
        Command::Replay(a) => commands::replay::replay(&a),
    }
}

/// True when the error is a closed stdout (e.g. piped into `head`), which is not a failure.
pub fn is_broken_pipe(err: &anyhow::Error) -> bool {
    err.chain().any(|e| {
        e.downcast_ref::<std::io::Error>()
            .is_some_and(|io| io.kind() == std::io::ErrorKind::BrokenPipe)
    })
}
