//! `nevermet check`: the summary on stdout, warnings and every problem on stderr. A study is
//! valid only when its inputs pass and every member keeps an admissible pseudo-partner; what
//! an allowance of the study let through is listed in the summary, and a warning is printed
//! before the verdict, never after it.

use std::process::ExitCode;

use crate::cli::CheckArgs;
use crate::pipeline;
use crate::study;

pub fn check(args: &CheckArgs) -> ExitCode {
    let report = study::load_report(&args.study);
    crate::outln!("{}", report.summary);
    for w in &report.warnings {
        crate::errln!("warning: {w}");
    }
    let mut problems: Vec<String> = report.problems.iter().map(ToString::to_string).collect();
    if let Some(study) = &report.study
        && let Err(pairing) = pipeline::build_plan(study)
    {
        problems.extend(pairing);
    }
    if problems.is_empty() {
        match report.warnings.len() {
            0 => crate::outln!("the study is valid"),
            n => crate::outln!("the study is valid, with {n} warning(s) above"),
        }
        ExitCode::SUCCESS
    } else {
        crate::errln!("{} problem(s):", problems.len());
        for p in &problems {
            crate::errln!("  - {p}");
        }
        ExitCode::from(crate::EXIT_FAILURE)
    }
}
