//! `nevermet replay`: check the inputs against the manifest, recompute into a temporary folder
//! and compare every output file's hash.

use std::process::ExitCode;

use anyhow::Context;

use crate::cli::ReplayArgs;
use crate::commands::run::{execute, set_threads};
use crate::engine::Bars;
use crate::report::manifest::{self, Manifest};

pub fn replay(args: &ReplayArgs) -> anyhow::Result<ExitCode> {
    let text = std::fs::read_to_string(&args.manifest)
        .with_context(|| format!("reading {}", args.manifest.display()))?;
    let m: Manifest = serde_json::from_str(&text)
        .with_context(|| format!("{}: not a nevermet manifest", args.manifest.display()))?;
    let root = m
        .study
        .parent()
        .map(|p| p.to_path_buf())
        .unwrap_or_default();
    let mut changed = Vec::new();
    for (rel, want) in &m.inputs {
        let path = root.join(rel);
        match manifest::sha256_file(&path) {
            Ok(h) if &h == want => {}
            Ok(_) => changed.push(format!(
                "{}: input changed since the run (its hash differs)",
                path.display()
            )),
            Err(e) => changed.push(format!("{}: input cannot be read ({e})", path.display())),
        }
    }
    if !changed.is_empty() {
        for c in &changed {
            crate::errln!("nevermet: {c}");
        }
        crate::errln!(
            "nevermet: replay needs the inputs exactly as they were; nothing was recomputed"
        );
        return Ok(ExitCode::from(crate::EXIT_FAILURE));
    }
    let threads = set_threads(args.threads.or(Some(m.threads)))?;
    let tmp = temp_folder()?;
    let progress = Bars::new(args.quiet);
    let outcome = execute(
        &m.study,
        Some(m.seed),
        m.memory_gib,
        threads,
        &progress,
        tmp.path(),
    )?;
    let mut differs = 0;
    for (rel, want) in &m.outputs {
        let got = outcome.manifest.outputs.get(rel);
        if got == Some(want) {
            crate::outln!("OK       {rel}");
        } else {
            differs += 1;
            crate::outln!("DIFFERS  {rel}");
        }
    }
    for rel in outcome
        .manifest
        .outputs
        .keys()
        .filter(|k| !m.outputs.contains_key(*k))
    {
        differs += 1;
        crate::outln!("DIFFERS  {rel} (not in the manifest)");
    }
    if differs == 0 {
        crate::outln!("replay: all {} output files identical", m.outputs.len());
        Ok(ExitCode::SUCCESS)
    } else {
        crate::outln!("replay: {differs} output file(s) differ");
        Ok(ExitCode::from(crate::EXIT_DIFFERS))
    }
}

/// A temporary folder, removed on drop.
struct TempDir(std::path::PathBuf);

impl TempDir {
    fn path(&self) -> &std::path::Path {
        &self.0
    }
}

impl Drop for TempDir {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

fn temp_folder() -> anyhow::Result<TempDir> {
    let base = std::env::temp_dir().join(format!("nevermet-replay-{}", std::process::id()));
    if base.exists() {
        std::fs::remove_dir_all(&base)?;
    }
    std::fs::create_dir_all(&base).with_context(|| format!("creating {}", base.display()))?;
    Ok(TempDir(base))
}
