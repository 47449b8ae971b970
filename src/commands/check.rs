//! `nevermet check`: the summary on stdout, warnings and every problem on stderr. A study is
//! valid only when its inputs pass and every member keeps an admissible pseudo-partner.

use std::process::ExitCode;

use crate::cli::CheckArgs;
use crate::pipeline;
use crate::study;

pub fn check(args: &CheckArgs) -> anyhow::Result<ExitCode> {
    let report = study::load_report(&args.study);
    println!("{}", report.summary);
    for w in &report.warnings {
        eprintln!("warning: {w}");
    }
    let mut problems: Vec<String> = report.problems.iter().map(ToString::to_string).collect();
    if let Some(study) = &report.study
        && let Err(pairing) = pipeline::build_plan(study)
    {
        problems.extend(pairing);
    }
    if problems.is_empty() {
        println!("the study is valid");
        Ok(ExitCode::SUCCESS)
    } else {
        eprintln!("{} problem(s):", problems.len());
        for p in &problems {
            eprintln!("  - {p}");
        }
        Ok(ExitCode::from(crate::EXIT_FAILURE))
    }
}
