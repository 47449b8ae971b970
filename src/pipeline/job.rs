//! One execution of the whole analysis into a folder, shared by `run` (into its staging
//! folder) and `replay` (into a temporary folder): load, analyse, write every output file,
//! the manifest and the timings.

use std::path::{Path, PathBuf};
use std::time::Instant;

use anyhow::Context;

use crate::engine::Progress;
use crate::pipeline::{self, Analysis, AnalysisOptions};
use crate::report::manifest::{self, Manifest, RunSettings};
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

/// What to execute and how.
#[derive(Clone, Debug)]
pub struct Job {
    /// The study's `study.toml`.
    pub study: PathBuf,
    /// Master seed; `None` takes the study's `[inference] seed`.
    pub seed: Option<u64>,
    pub memory_gib: f64,
    /// The worker count in use (recorded in the manifest).
    pub threads: usize,
}

/// What one execution produced.
pub struct Outcome {
    pub analysis: Analysis,
    pub audit: PlanAudit,
    pub manifest: Manifest,
}

/// Loads, analyses and writes every output file, `manifest.json` and `timings.json` into
/// `dir`. `home` is the folder the files will finally be read from (the output folder a
/// staging folder is renamed to): the manifest names the study relative to it.
pub fn execute(
    job: &Job,
    progress: &dyn Progress,
    dir: &Path,
    home: &Path,
) -> anyhow::Result<Outcome> {
    let start = Instant::now();
    let study = study::load(&job.study)?;
    let load_time = start.elapsed().as_secs_f64();
    let seed = job.seed.unwrap_or(study.config.inference.seed);
    anyhow::ensure!(job.memory_gib > 0.0, "--memory-gib must be positive");
    let opts = AnalysisOptions {
        seed,
        memory_bytes: (job.memory_gib * GIB) as u64,
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
    let settings = RunSettings {
        seed,
        threads: job.threads,
        memory_gib: job.memory_gib,
    };
    let study_rel = manifest::relative_to(&job.study, home)
        .context("naming the study relative to the output folder")?;
    let m = manifest::build(
        &analysis, &audit, &warnings, settings, study_rel, dir, &outputs,
    )?;
    report::write_json(&m, &dir.join(manifest::MANIFEST))?;
    report::write_json(
        &manifest::timings(&analysis, job.threads),
        &dir.join(manifest::TIMINGS),
    )?;
    Ok(Outcome {
        analysis,
        audit,
        manifest: m,
    })
}
