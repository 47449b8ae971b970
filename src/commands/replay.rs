//! `nevermet replay`: three checks against a manifest, each printed file by file: the output
//! folder as it is now (every listed file, and no other), the inputs, and a recomputation into
//! a temporary folder. Any difference exits with `EXIT_DIFFERS`.

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::Context;

use crate::cli::ReplayArgs;
use crate::engine::Bars;
use crate::pipeline::{self, Job};
use crate::report::manifest::Manifest;
use crate::report::verify::{self, Check, Finding};

pub fn replay(args: &ReplayArgs) -> anyhow::Result<ExitCode> {
    let text = std::fs::read_to_string(&args.manifest)
        .with_context(|| format!("reading {}", args.manifest.display()))?;
    let m: Manifest = serde_json::from_str(&text)
        .with_context(|| format!("{}: not a nevermet manifest", args.manifest.display()))?;
    let home = match args.manifest.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let study = study_file(args, &m, &home)?;

    let folder = verify::check_folder(&home, &m)?;
    print_findings(&folder);
    let inputs = verify::check_inputs(&study, &m);
    print_findings(&inputs);
    let inputs_ok = inputs.iter().all(Finding::ok);
    let recomputed = if inputs_ok {
        let threads = pipeline::set_threads(args.threads.or(Some(m.threads)))?;
        let tmp = tempfile::Builder::new()
            .prefix("nevermet-replay-")
            .tempdir()
            .context("creating a temporary folder for the recomputation")?;
        let job = Job {
            study: study.clone(),
            seed: Some(m.seed),
            memory_gib: m.memory_gib,
            threads,
        };
        let outcome = pipeline::execute(&job, &Bars::new(args.quiet), tmp.path(), &home)
            .context("recomputing")?;
        let found = verify::compare_outputs(&m, &outcome.manifest);
        print_findings(&found);
        Some(found)
    } else {
        None
    };

    crate::outln!();
    let mut failed = Vec::new();
    for (check, found) in [
        (Check::Folder, Some(&folder)),
        (Check::Inputs, Some(&inputs)),
        (Check::Recomputation, recomputed.as_ref()),
    ] {
        let line = match found {
            Some(f) => summary(check, f),
            None => "not run: the inputs are not the ones the manifest lists".to_string(),
        };
        if found.is_none_or(|f| !f.iter().all(Finding::ok)) {
            failed.push(check.name());
        }
        crate::outln!("replay: {:<14} {line}", check.name());
    }
    if failed.is_empty() {
        crate::outln!("replay: OK, {} matches its manifest", home.display());
        Ok(ExitCode::SUCCESS)
    } else {
        crate::errln!(
            "nevermet: replay of {} found differences ({}); see the lines above",
            args.manifest.display(),
            failed.join(", ")
        );
        Ok(ExitCode::from(crate::EXIT_DIFFERS))
    }
}

/// The study to replay against: `--study`, or the one the manifest names relative to its own
/// folder, which must then exist.
fn study_file(args: &ReplayArgs, m: &Manifest, home: &Path) -> anyhow::Result<PathBuf> {
    if let Some(s) = &args.study {
        anyhow::ensure!(s.is_file(), "{}: no such study file (--study)", s.display());
        return Ok(s.clone());
    }
    let study = m.study_path(home);
    anyhow::ensure!(
        study.is_file(),
        "{}: the study file the manifest names ({:?}, relative to the manifest's folder) is not there; \
         if the study was moved on its own, give its study.toml with --study",
        study.display(),
        m.study
    );
    Ok(study)
}

fn print_findings(found: &[Finding]) {
    for f in found {
        let (label, detail) = f.label();
        if detail.is_empty() {
            crate::outln!("{:<14} {label:<10} {}", f.check.name(), f.file);
        } else {
            crate::outln!("{:<14} {label:<10} {}: {detail}", f.check.name(), f.file);
        }
    }
}

fn summary(check: Check, found: &[Finding]) -> String {
    let bad = found.iter().filter(|f| !f.ok()).count();
    let what = match check {
        Check::Folder => "output files as the manifest lists them",
        Check::Inputs => "inputs unchanged",
        Check::Recomputation => "recomputed output files identical",
    };
    if bad == 0 {
        format!("OK, all {} {what}", found.len())
    } else {
        let names: Vec<&str> = found
            .iter()
            .filter(|f| !f.ok())
            .map(|f| f.file.as_str())
            .collect();
        format!("FAILED, {bad} file(s): {}", names.join(", "))
    }
}
