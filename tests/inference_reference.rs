//! Agreement with general-purpose reference libraries, through the scripts in
//! tests/reference/: statsmodels.stats.multitest.multipletests for the p-value
//! adjustments and scipy.stats.ttest_1samp / ttest_rel for the t-tests.

mod common {
    pub fn rng(seed: u64) -> rand_chacha::ChaCha8Rng {
        <rand_chacha::ChaCha8Rng as rand::SeedableRng>::seed_from_u64(seed)
    }
    pub fn normal(rng: &mut rand_chacha::ChaCha8Rng) -> f64 {
        use rand::RngExt;
        let u1: f64 = 1.0 - rng.random::<f64>();
        let u2: f64 = rng.random::<f64>();
        (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
    }
}

use std::path::PathBuf;
use std::process::Command;

use nevermet::inference::correction;
use nevermet::inference::ttest;
use nevermet::inference::{Alternative, Correction};
use rand::RngExt;
use serde_json::{Value, json};

/// Interpreter with numpy, scipy and statsmodels (a venv under target/, made on first use).
fn python() -> PathBuf {
    crate::util::python().to_path_buf()
}

fn script(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/reference")
        .join(name)
}

/// Runs a reference script on `input` and returns its parsed output.
fn run_reference(name: &str, input: &Value) -> Value {
    let dir = std::env::temp_dir();
    let stem = format!("nevermet-ref-{}-{name}", std::process::id());
    let inp = dir.join(format!("{stem}.in.json"));
    let out = dir.join(format!("{stem}.out.json"));
    std::fs::write(&inp, serde_json::to_vec(input).unwrap()).unwrap();
    let status = Command::new(python())
        .arg(script(name))
        .arg(&inp)
        .arg(&out)
        .status()
        .unwrap_or_else(|e| {
            panic!(
                "cannot start {} for {name}: {e} (create the venv: python3 -m venv target/ref-venv && \
                 target/ref-venv/bin/pip install numpy scipy statsmodels, or set NEVERMET_REF_PYTHON)",
                python().display()
            )
        });
    assert!(status.success(), "reference script {name} failed: {status}");
    let v: Value = serde_json::from_slice(&std::fs::read(&out).unwrap()).unwrap();
    let _ = std::fs::remove_file(inp);
    let _ = std::fs::remove_file(out);
    v
}

fn f(v: &Value) -> f64 {
    v.as_f64().unwrap_or(f64::NAN)
}

#[test]
fn adjustments_agree_with_statsmodels_multipletests() {
    let mut rng = common::rng(7);
    let mut cases = Vec::new();
    let mut ours = Vec::new();
    for case in 0..240 {
        let m = 1 + case % 60;
        let p: Vec<f64> = (0..m)
            .map(|_| {
                let u: f64 = rng.random::<f64>();
                match rng.random_range(0..10) {
                    0 => (u * 20.0).round() / 20.0, // ties, exact 0 and 1
                    1 => u * 1e-4,                  // very small p
                    _ => u,
                }
            })
            .collect();
        for method in [
            Correction::Holm,
            Correction::Bh,
            Correction::By,
            Correction::Bonferroni,
        ] {
            cases.push(json!({"method": method.to_string(), "p": p}));
            ours.push(correction::adjust(&p, method).unwrap());
        }
    }
    let out = run_reference("multitest_ref.py", &json!({ "cases": cases }));
    let results = out["results"].as_array().unwrap();
    assert_eq!(results.len(), ours.len());
    let mut worst = 0.0f64;
    for (i, (r, mine)) in results.iter().zip(&ours).enumerate() {
        let theirs: Vec<f64> = r["p_adj"].as_array().unwrap().iter().map(f).collect();
        for (a, b) in mine.iter().zip(&theirs) {
            worst = worst.max((a - b).abs());
            assert!(
                (a - b).abs() <= 1e-12,
                "case {i} ({}): {a} vs {b}",
                cases[i]["method"]
            );
        }
    }
    eprintln!(
        "multipletests: {} cases, worst |diff| = {worst:e}",
        ours.len()
    );
}

#[test]
fn t_tests_agree_with_scipy() {
    let mut rng = common::rng(11);
    let mut cases = Vec::new();
    let mut ours = Vec::new();
    for case in 0..150 {
        let n = 2 + case % 39;
        let shift = [0.0, 0.3, 1.0, -0.5, 3.0][case % 5];
        let scale = [1.0, 0.01, 50.0][case % 3];
        let x: Vec<f64> = (0..n)
            .map(|_| scale * (common::normal(&mut rng) + shift))
            .collect();
        let y: Vec<f64> = (0..n).map(|_| scale * common::normal(&mut rng)).collect();
        let alpha = [0.05, 0.01, 0.1][case % 3];
        for alt in [Alternative::Greater, Alternative::TwoSided] {
            cases.push(
                json!({"kind": "1samp", "x": x, "alternative": alt.to_string(), "alpha": alpha}),
            );
            ours.push(ttest::one_sample(&x, alt, alpha));
            cases.push(json!({"kind": "rel", "x": x, "y": y, "alternative": alt.to_string(), "alpha": alpha}));
            ours.push(ttest::paired(&x, &y, alt, alpha));
        }
    }
    let out = run_reference("ttest_ref.py", &json!({ "cases": cases }));
    let results = out["results"].as_array().unwrap();
    assert_eq!(results.len(), ours.len());
    let (mut wt, mut wp, mut wci) = (0.0f64, 0.0f64, 0.0f64);
    for (i, (r, mine)) in results.iter().zip(&ours).enumerate() {
        let rel = |a: f64, b: f64| (a - b).abs() / b.abs().max(1e-300);
        let (t, p, df) = (f(&r["t"]), f(&r["p"]), f(&r["df"]));
        wt = wt.max(rel(mine.t, t));
        assert!(rel(mine.t, t) < 1e-12, "case {i}: t {} vs {t}", mine.t);
        assert_eq!(mine.df, df, "case {i}");
        // p: relative 1e-10 (both evaluate the regularised incomplete beta function by
        // different series), absolute 1e-14 near zero.
        let dp = (mine.p - p).abs();
        wp = wp.max(rel(mine.p, p));
        assert!(
            dp <= 1e-10 * p.abs() + 1e-14,
            "case {i}: p {} vs {p}",
            mine.p
        );
        let (lo, hi) = (f(&r["ci_low"]), f(&r["ci_high"]));
        let width = hi - lo;
        wci = wci.max((mine.ci_low - lo).abs().max((mine.ci_high - hi).abs()) / width);
        assert!(
            (mine.ci_low - lo).abs() <= 1e-11 * width,
            "case {i}: ci_low {} vs {lo}",
            mine.ci_low
        );
        assert!(
            (mine.ci_high - hi).abs() <= 1e-11 * width,
            "case {i}: ci_high {} vs {hi}",
            mine.ci_high
        );
    }
    eprintln!(
        "scipy t-tests: {} cases, worst rel t {wt:e}, rel p {wp:e}, ci/width {wci:e}",
        ours.len()
    );
}
