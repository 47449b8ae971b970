//! The tool's promise on whole studies: synthetic null studies (every member carries the
//! shared task response, nobody is coupled) are rejected at about the nominal rate, and the
//! demo's coupling is found with high power. Each study goes through the full pipeline:
//! generated files → loading and validation → pairing → WTC → re-pairing inference.
//! Larger versions: `cargo run --release --example calibrate`.

use rayon::prelude::*;

use nevermet::demo::{DemoOptions, write_demo};
use nevermet::engine::Silent;
use nevermet::inference::TestKind;
use nevermet::pipeline::{self, AnalysisOptions};
use nevermet::study;

/// p of the repairing test in (joint, hbo, task, prefrontal), a cell fixed in advance.
fn joint_prefrontal_p(seed: u64, dyads: usize, coupling: f64) -> f64 {
    let dir = tempfile::tempdir().unwrap();
    let folder = dir.path().join("s");
    let opts = DemoOptions {
        dyads,
        seed,
        sampling_hz: 2.0,
        coupling,
        ..DemoOptions::default()
    };
    write_demo(&opts, &folder).unwrap();
    let toml = folder.join("study.toml");
    let text = std::fs::read_to_string(&toml).unwrap();
    std::fs::write(
        &toml,
        text.replace("permutations = 10000", "permutations = 999")
            .replace("pair_within = [\"site\"]", "pair_within = []")
            .replace("bootstrap = 2000", "bootstrap = 0"),
    )
    .unwrap();
    let st = study::load(&toml).unwrap();
    let a = pipeline::analyse(
        st,
        AnalysisOptions {
            seed,
            memory_bytes: 1 << 30,
        },
        &Silent,
    )
    .unwrap();
    a.inference
        .results
        .iter()
        .find(|r| {
            r.test == TestKind::Repairing
                && r.key.condition == "joint"
                && r.key.chromophore == "hbo"
                && r.key.roi == "prefrontal"
        })
        .map(|r| r.p)
        .unwrap()
}

#[test]
fn null_studies_are_rejected_at_about_the_nominal_rate_and_coupling_is_found() {
    // One pool of 12 dyads (the site rule is dropped): re-pairings never keep a real pair, which
    // makes the test slightly liberal when the pools within which members are re-paired are
    // small (see the README); with the demo's two sites of 6 dyads, 100 null studies rejected at
    // 0.11. With 8 dyads in two sites no p could even fall below 1/17.
    let n_null = 100;
    let null: Vec<f64> = (0..n_null as u64)
        .into_par_iter()
        .map(|s| joint_prefrontal_p(1000 + s, 12, 0.0))
        .collect();
    let rate = null.iter().filter(|p| **p < 0.05).count() as f64 / n_null as f64;
    println!("full-pipeline null studies: {n_null}, rejection rate at alpha 0.05: {rate:.3}");
    // The band is wide because 100 studies give a binomial sd of about 0.022 at 0.05.
    assert!((0.01..=0.10).contains(&rate), "null rejection rate {rate}");

    let n_power = 20;
    let coupled: Vec<f64> = (0..n_power as u64)
        .into_par_iter()
        .map(|s| joint_prefrontal_p(5000 + s, 12, 1.0))
        .collect();
    let power = coupled.iter().filter(|p| **p < 0.05).count() as f64 / n_power as f64;
    println!("full-pipeline studies with the demo's coupling: {n_power}, power: {power:.2}");
    assert!(power >= 0.8, "power {power}");
}
