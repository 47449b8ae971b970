//! Calibration at scale: rejection rates of the re-pairing test on synthetic studies run
//! through the whole pipeline, and power under the demo's coupling.
//!
//! `cargo run --release --example calibrate [-- --sims 400 --dyads 12 --coupling 0 --sites 2 --keep-real 1]`
//!
//! Prints, for the cell (joint, hbo, task, prefrontal) fixed in advance, the fraction of studies
//! with p < 0.05 (uncorrected) and with a significant maxstat-corrected result, with a binomial
//! standard error. `--sites 1` drops the site rule, so members are re-paired in one pool;
//! `--keep-real 1` sets `null_includes_real = true`.

use rayon::prelude::*;

use nevermet::demo::{DemoOptions, write_demo};
use nevermet::engine::Silent;
use nevermet::inference::TestKind;
use nevermet::pipeline::{self, AnalysisOptions};
use nevermet::study;

fn arg<T: std::str::FromStr>(name: &str, default: T) -> T {
    let args: Vec<String> = std::env::args().collect();
    args.iter()
        .position(|a| a == name)
        .and_then(|i| args.get(i + 1))
        .and_then(|v| v.parse().ok())
        .unwrap_or(default)
}

/// (p, significant after correction) of the fixed cell in one synthetic study.
fn one(
    seed: u64,
    dyads: usize,
    coupling: f64,
    sites: usize,
    keep_real: bool,
) -> anyhow::Result<(f64, bool)> {
    let dir = tempfile::tempdir()?;
    let folder = dir.path().join("s");
    write_demo(
        &DemoOptions {
            dyads,
            seed,
            sampling_hz: 2.0,
            coupling,
            ..DemoOptions::default()
        },
        &folder,
    )?;
    let toml = folder.join("study.toml");
    let mut text = std::fs::read_to_string(&toml)?
        .replace("permutations = 10000", "permutations = 999")
        .replace("bootstrap = 2000", "bootstrap = 0");
    if sites == 1 {
        text = text.replace("pair_within = [\"site\"]", "pair_within = []");
    }
    if keep_real {
        text = text.replace("bootstrap = 0", "bootstrap = 0\nnull_includes_real = true");
    }
    std::fs::write(&toml, text)?;
    let st = study::load(&toml)?;
    let a = pipeline::analyse(
        st,
        AnalysisOptions {
            seed,
            memory_bytes: 1 << 30,
        },
        &Silent,
    )?;
    let r = a
        .inference
        .results
        .iter()
        .find(|r| {
            r.test == TestKind::Repairing
                && r.key.condition == "joint"
                && r.key.chromophore == "hbo"
                && r.key.roi == "prefrontal"
        })
        .ok_or_else(|| anyhow::anyhow!("cell missing"))?;
    Ok((r.p, r.significant))
}

fn main() -> anyhow::Result<()> {
    let sims: u64 = arg("--sims", 400);
    let dyads: usize = arg("--dyads", 12);
    let coupling: f64 = arg("--coupling", 0.0);
    let sites: usize = arg("--sites", 2);
    let keep_real = arg("--keep-real", 0usize) == 1;
    let results: Vec<(f64, bool)> = (0..sims)
        .into_par_iter()
        .map(|s| one(100_000 + s, dyads, coupling, sites, keep_real))
        .collect::<anyhow::Result<_>>()?;
    let n = results.len() as f64;
    let raw = results.iter().filter(|r| r.0 < 0.05).count() as f64 / n;
    let adj = results.iter().filter(|r| r.1).count() as f64 / n;
    let se = |p: f64| (p * (1.0 - p) / n).sqrt();
    println!(
        "calibration: {sims} studies, {dyads} dyads, {sites} site(s), coupling {coupling}, real pairs in the null: {keep_real}"
    );
    println!("  p < 0.05 (uncorrected)       {raw:.3} ± {:.3}", se(raw));
    println!("  significant after maxstat    {adj:.3} ± {:.3}", se(adj));
    Ok(())
}
