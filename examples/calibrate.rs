//! Calibration at scale: rejection rates of the re-pairing test (both reference sets) and of
//! the dyad contrast on synthetic studies run through the whole pipeline, and power under the
//! demo's coupling.
//!
//! `cargo run --release --example calibrate [-- --sims 2000 --dyads 12 --sites 2 --coupling 0]`
//!
//! Prints, for the cell (joint, hbo, task, prefrontal) fixed in advance, the fraction of studies
//! with p < 0.05 (uncorrected) and with any significant cell of the joint condition under
//! maxstat, each with its binomial standard error. `--sites 1` drops the site rule, so members
//! are re-paired in one pool. `--hz`, `--rois` and `--blocks` set the demo's sampling rate,
//! regions and blocks per condition (defaults 2 Hz, 2, 2).

use nevermet::calibration::{Design, tally};

fn arg<T: std::str::FromStr>(name: &str, default: T) -> T {
    let args: Vec<String> = std::env::args().collect();
    args.iter()
        .position(|a| a == name)
        .and_then(|i| args.get(i + 1))
        .and_then(|v| v.parse().ok())
        .unwrap_or(default)
}

fn main() -> anyhow::Result<()> {
    let sims: usize = arg("--sims", 400);
    let dyads: usize = arg("--dyads", 12);
    let sites: usize = arg("--sites", 2);
    let coupling: f64 = arg("--coupling", 0.0);
    let mut design = Design::small("calibrate", dyads, sites == 1, coupling);
    design.sampling_hz = arg("--hz", design.sampling_hz);
    design.rois = arg("--rois", design.rois);
    design.blocks_per_condition = arg("--blocks", design.blocks_per_condition);
    let t = tally(&design, arg("--seed", 100_000u64), sims)?;
    let se = |c: usize| {
        let p = t.rate(c);
        format!("{p:.3} ± {:.3}", (p * (1.0 - p) / t.studies as f64).sqrt())
    };
    println!(
        "calibration: {sims} studies, {dyads} dyads, {sites} site(s), coupling {coupling}, {} Hz, \
         {} regions, {} blocks per condition",
        design.sampling_hz, design.rois, design.blocks_per_condition
    );
    println!("                                   one cell        family (maxstat)");
    for (name, c) in [
        ("re-pairing, reference all", t.all),
        ("re-pairing, reference pseudo-only", t.pseudo_only),
        ("dyad-contrast", t.dyad_contrast),
    ] {
        println!("  {name:<33} {}   {}", se(c.0), se(c.1));
    }
    Ok(())
}
