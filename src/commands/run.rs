//! `nevermet run`: the whole analysis into an atomically written output folder.

use std::path::Path;
use std::process::ExitCode;

use crate::cli::RunArgs;
use crate::engine::Bars;
use crate::pipeline::{self, Job, Outcome};
use crate::report::outdir::{self, Staging};
use crate::study;

pub fn run(args: &RunArgs) -> anyhow::Result<ExitCode> {
    outdir::install_signal_cleanup();
    let threads = pipeline::set_threads(args.threads)?;
    // Claim the output folder (refusing a non-empty one, or one another run is writing)
    // before any heavy work.
    let staging = Staging::new(&args.out, args.force)?;
    for c in staging.cleaned() {
        crate::errln!("nevermet: {c}");
    }
    let progress = Bars::new(args.quiet);
    let job = Job {
        study: args.study.clone(),
        seed: args.seed,
        memory_gib: args.memory_gib,
        threads,
    };
    let outcome = match pipeline::execute(&job, &progress, staging.path(), &args.out) {
        Ok(o) => o,
        Err(e) => {
            if let Some(se) = e.downcast_ref::<study::StudyError>() {
                crate::errln!("nevermet: {} problem(s) in the study:", se.problems.len());
                crate::err!("{}", se.problems);
                return Ok(ExitCode::from(crate::EXIT_FAILURE));
            }
            return Err(e);
        }
    };
    let out = staging.commit()?;
    for w in &outcome.manifest.warnings {
        crate::errln!("warning: {w}");
    }
    print_summary(&outcome, &out);
    Ok(ExitCode::SUCCESS)
}

/// What the group test compared T with, in one line: the reference set, its size and how
/// its members were drawn.
fn repairings_line(o: &Outcome) -> String {
    let a = &o.analysis;
    let set = format!(
        "reference set {} ({} re-pairings)",
        a.null.reference.name(),
        o.audit.repairings_text()
    );
    if a.repairings.exact {
        format!("{set}, enumerated completely: the p-values are exact")
    } else {
        format!(
            "{} drawn from the {set}; {}",
            a.repairings.len(),
            a.repairings.method
        )
    }
}

fn print_summary(o: &Outcome, out: &Path) {
    let a = &o.analysis;
    let audit = &o.audit;
    println!(
        "nevermet {} — {}",
        env!("CARGO_PKG_VERSION"),
        a.study.config.name
    );
    println!(
        "  pairs       {} real, {} admissible pseudo-pairs, {} excluded",
        audit.real, audit.admissible_pairs, audit.excluded
    );
    println!("  re-pairings {}", repairings_line(o));
    let sig: Vec<_> = a
        .inference
        .results
        .iter()
        .filter(|r| r.significant)
        .collect();
    println!(
        "  significant {} of {} tests ({} correction, alpha {})",
        sig.len(),
        a.inference.results.len(),
        a.study.config.inference.correction_label(),
        a.study.config.inference.alpha
    );
    for r in &sig {
        println!(
            "    {:<14} {} · {} · {} · {}  excess {:+.4}  p_adj {:.4}",
            r.test.to_string(),
            r.key.condition,
            r.key.chromophore,
            r.key.band,
            r.key.roi,
            r.excess,
            r.p_adj
        );
    }
    let csig = a
        .inference
        .contrasts
        .iter()
        .filter(|c| c.significant)
        .count();
    if !a.inference.contrasts.is_empty() {
        println!(
            "  contrasts   {csig} of {} significant",
            a.inference.contrasts.len()
        );
    }
    let n_warn = o.manifest.warnings.len();
    if n_warn > 0 {
        println!("  warnings    {n_warn} (listed in the report and the manifest)");
    }
    println!("  results in  {}", out.display());
    println!("  report      {}", out.join("report.html").display());
}
