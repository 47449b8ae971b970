//! `nevermet run`: the whole analysis into an atomically written output folder.

use std::collections::BTreeMap;
use std::path::Path;
use std::process::ExitCode;
use std::time::Instant;

use anyhow::Context;

use crate::cli::RunArgs;
use crate::engine::{Bars, Progress};
use crate::pipeline::{self, Analysis, AnalysisOptions};
use crate::report::manifest::{self, Manifest};
use crate::report::outdir::{self, Staging};
use crate::report::{self, plan::PlanAudit};
use crate::study;

const GIB: f64 = (1u64 << 30) as f64;

/// Sets the worker count once for the process; `None` keeps rayon's default (all cores).
pub fn set_threads(threads: Option<usize>) -> anyhow::Result<usize> {
    if let Some(n) = threads {
        anyhow::ensure!(n >= 1, "--threads must be at least 1");
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build_global()
            .context("setting up the worker threads")?;
    }
    Ok(rayon::current_num_threads())
}

/// What one execution produced.
pub struct Outcome {
    pub analysis: Analysis,
    pub audit: PlanAudit,
    pub manifest: Manifest,
}

/// Loads, analyses and writes every output file into `dir` (a staging folder).
pub fn execute(
    study_path: &Path,
    seed: Option<u64>,
    memory_gib: f64,
    threads: usize,
    progress: &dyn Progress,
    dir: &Path,
) -> anyhow::Result<Outcome> {
    let start = Instant::now();
    let study = study::load(study_path)?;
    let load_time = start.elapsed().as_secs_f64();
    let seed = seed.unwrap_or(study.config.inference.seed);
    anyhow::ensure!(memory_gib > 0.0, "--memory-gib must be positive");
    let opts = AnalysisOptions {
        seed,
        memory_bytes: (memory_gib * GIB) as u64,
    };
    let mut analysis = pipeline::analyse(study, opts, progress)?;
    analysis.timings.insert(0, ("load".to_string(), load_time));
    let mut warnings = analysis.study.warnings.clone();
    warnings.extend(analysis.null.warning());
    warnings.extend(analysis.inference.warnings.iter().cloned());
    let audit = report::audit(&analysis);
    let t = Instant::now();
    let outputs = report::write_outputs(&analysis, &audit, &warnings, dir)?;
    analysis
        .timings
        .push(("outputs".to_string(), t.elapsed().as_secs_f64()));
    let study_abs = std::fs::canonicalize(study_path)
        .with_context(|| format!("resolving {}", study_path.display()))?;
    let root = &analysis.study.root;
    let inputs =
        manifest::hash_files(root, &analysis.study.input_files).context("hashing the inputs")?;
    let output_hashes = manifest::hash_files(dir, &outputs).context("hashing the outputs")?;
    let mut counts = BTreeMap::new();
    counts.insert("dyads".into(), analysis.study.dyads.len().into());
    counts.insert("members".into(), analysis.study.members.len().into());
    counts.insert("candidates".into(), audit.candidates.into());
    counts.insert("admissible_pairs".into(), audit.admissible_pairs.into());
    counts.insert("excluded".into(), audit.excluded.into());
    counts.insert("repairings_drawn".into(), analysis.repairings.len().into());
    counts.insert("cells".into(), analysis.cells.len().into());
    counts.insert("pair_blocks".into(), audit.cost.pair_blocks.into());
    let m = Manifest {
        tool: "nevermet".into(),
        version: env!("CARGO_PKG_VERSION").into(),
        study: study_abs,
        seed,
        threads,
        memory_gib,
        sampler: serde_json::json!({
            "reference": analysis.null.reference,
            "reference_size": audit.repairings.size,
            "method": analysis.repairings.method,
            "description": analysis.repairings.method.to_string(),
            "exact": analysis.repairings.exact,
            "compared_with": analysis.repairings.len(),
            "reason": analysis.null.reason,
        }),
        config: Manifest::resolved_config(&analysis.study.config),
        counts,
        inputs,
        outputs: output_hashes,
        warnings,
    };
    report::write_json(&m, &dir.join(manifest::MANIFEST))?;
    let ordered: Vec<serde_json::Value> = analysis
        .timings
        .iter()
        .map(|(k, v)| serde_json::json!({"stage": k, "seconds": v}))
        .collect();
    report::write_json(
        &serde_json::json!({ "threads": threads, "stages": ordered }),
        &dir.join(manifest::TIMINGS),
    )?;
    Ok(Outcome {
        analysis,
        audit,
        manifest: m,
    })
}

pub fn run(args: &RunArgs) -> anyhow::Result<ExitCode> {
    outdir::install_signal_cleanup();
    let threads = set_threads(args.threads)?;
    // Refuse a non-empty output folder before any heavy work.
    outdir::check_target(&args.out, args.force)?;
    let progress = Bars::new(args.quiet);
    let staging = Staging::new(&args.out, args.force)?;
    let outcome = match execute(
        &args.study,
        args.seed,
        args.memory_gib,
        threads,
        &progress,
        staging.path(),
    ) {
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
