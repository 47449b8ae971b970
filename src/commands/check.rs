//! `nevermet check`: the summary on stdout, warnings and every problem on stderr.

use std::process::ExitCode;

use crate::cli::CheckArgs;
use crate::study;

pub fn check(args: &CheckArgs) -> anyhow::Result<ExitCode> {
    let report = study::load_report(&args.study);
    println!("{}", report.summary);
    for w in &report.warnings {
        eprintln!("warning: {w}");
    }
    if report.problems.is_empty() {
        println!("the study is valid");
        Ok(ExitCode::SUCCESS)
    } else {
        eprintln!("{} problem(s):", report.problems.len());
        eprint!("{}", report.problems);
        Ok(ExitCode::from(crate::EXIT_FAILURE))
    }
}
