//! The binary: parse the command line, run the library, map the outcome to an exit code.

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let cli = nevermet::cli::Cli::parse();
    match nevermet::run(cli.command) {
        Ok(code) => code,
        Err(err) => {
            if nevermet::is_broken_pipe(&err) {
                return ExitCode::SUCCESS;
            }
            eprintln!("nevermet: {err:#}");
            ExitCode::from(nevermet::EXIT_FAILURE)
        }
    }
}
