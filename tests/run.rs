//! `run` end to end: every output file, byte-identical reruns on 1 and 2 threads, `replay`,
//! and the atomic output folder (refused, failed and interrupted runs lose nothing).

use std::path::{Path, PathBuf};
use std::process::Command;

use crate::util::{TempStudy, bin, nevermet, stderr, stdout};

pub const OUTPUTS: &[&str] = &[
    "results.tsv",
    "contrasts.tsv",
    "dyads.tsv",
    "pairs.tsv",
    "plan.json",
    "synchrony.parquet",
    "report.html",
    "manifest.json",
];

/// A small study with fewer re-pairings, so a full run takes seconds.
fn quick_study() -> TempStudy {
    let s = TempStudy::new();
    s.edit("study.toml", |t| {
        t.replace("permutations = 10000", "permutations = 2000")
            .replace("bootstrap = 2000", "bootstrap = 300")
    });
    s
}

fn leftovers(dir: &Path) -> Vec<PathBuf> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| {
            p.file_name()
                .unwrap()
                .to_string_lossy()
                .contains("nevermet-partial")
        })
        .collect()
}

#[test]
fn two_runs_on_one_and_two_threads_are_identical_and_replay_confirms() {
    let s = quick_study();
    let a = s.dir.path().join("out1");
    let b = s.dir.path().join("out2");
    let o = s.run_into(&a, &["--threads", "1"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let summary = stdout(&o);
    assert!(summary.contains("re-pairings"), "{summary}");
    assert!(summary.contains("report.html"), "{summary}");
    let o = s.run_into(&b, &["--threads", "2"]);
    assert!(o.status.success(), "{}", stderr(&o));
    for f in OUTPUTS {
        assert!(a.join(f).is_file(), "missing {f}");
    }
    for f in OUTPUTS.iter().filter(|f| **f != "manifest.json") {
        assert_eq!(
            std::fs::read(a.join(f)).unwrap(),
            std::fs::read(b.join(f)).unwrap(),
            "{f} differs between 1 and 2 threads"
        );
    }
    let o = nevermet(&[
        "replay",
        a.join("manifest.json").to_str().unwrap(),
        "--quiet",
    ]);
    assert!(o.status.success(), "{}{}", stdout(&o), stderr(&o));
    let text = stdout(&o);
    assert!(text.contains("OK       results.tsv"), "{text}");
    assert!(!text.contains("DIFFERS"), "{text}");
}

#[test]
fn replay_names_a_changed_input_and_a_differing_output() {
    let s = quick_study();
    let out = s.dir.path().join("out");
    let o = s.run_into(&out, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    let manifest = out.join("manifest.json");
    // A tampered output hash must be reported as DIFFERS with exit code 1.
    let text = std::fs::read_to_string(&manifest).unwrap();
    let mut m: serde_json::Value = serde_json::from_str(&text).unwrap();
    m["outputs"]["results.tsv"] = serde_json::Value::String("0".repeat(64));
    std::fs::write(&manifest, serde_json::to_string_pretty(&m).unwrap()).unwrap();
    let o = nevermet(&["replay", manifest.to_str().unwrap(), "--quiet"]);
    assert_eq!(o.status.code(), Some(1), "{}", stdout(&o));
    assert!(
        stdout(&o).contains("DIFFERS  results.tsv"),
        "{}",
        stdout(&o)
    );
    // A changed input is an error naming the file.
    s.edit("events.tsv", |t| t + "\n");
    let o = nevermet(&["replay", manifest.to_str().unwrap(), "--quiet"]);
    assert!(!o.status.success());
    assert!(
        stderr(&o).contains("events.tsv: input changed"),
        "{}",
        stderr(&o)
    );
}

#[test]
fn a_non_empty_output_folder_is_refused_without_force() {
    let s = quick_study();
    let out = s.dir.path().join("out");
    std::fs::create_dir(&out).unwrap();
    std::fs::write(out.join("keep.txt"), "precious").unwrap();
    let o = s.run_into(&out, &[]);
    assert!(!o.status.success());
    assert!(
        stderr(&o).contains("exists and is not empty"),
        "{}",
        stderr(&o)
    );
    assert_eq!(
        std::fs::read_to_string(out.join("keep.txt")).unwrap(),
        "precious"
    );
    let o = s.run_into(&out, &["--force"]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(!out.join("keep.txt").exists());
    assert!(out.join("results.tsv").exists());
    assert!(leftovers(s.dir.path()).is_empty());
}

#[test]
fn a_failed_run_with_force_keeps_the_old_results() {
    let s = quick_study();
    let out = s.dir.path().join("out");
    std::fs::create_dir(&out).unwrap();
    std::fs::write(out.join("keep.txt"), "precious").unwrap();
    // Break the study so the run fails after the output folder was accepted.
    s.set_cell("events.tsv", 2, 0, "zz99");
    let o = s.run_into(&out, &["--force"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("unknown dyad \"zz99\""),
        "{}",
        stderr(&o)
    );
    assert_eq!(
        std::fs::read_to_string(out.join("keep.txt")).unwrap(),
        "precious"
    );
    assert!(
        leftovers(s.dir.path()).is_empty(),
        "staging folder left behind"
    );
}

#[test]
fn an_interrupted_run_leaves_no_output_folder() {
    // A larger study so the run is still loading when the signal arrives.
    let s = TempStudy::with_args(&["--dyads", "40"]);
    let out = s.dir.path().join("out");
    for signal in ["-INT", "-TERM"] {
        let mut child = Command::new(bin())
            .args([
                "run",
                s.toml().to_str().unwrap(),
                "--out",
                out.to_str().unwrap(),
                "--quiet",
            ])
            .stdout(std::process::Stdio::null())
            .stderr(std::process::Stdio::null())
            .spawn()
            .unwrap();
        // Wait until the staging folder exists, then interrupt.
        let start = std::time::Instant::now();
        while leftovers(s.dir.path()).is_empty() {
            assert!(start.elapsed().as_secs() < 30, "no staging folder appeared");
            std::thread::sleep(std::time::Duration::from_millis(20));
        }
        std::thread::sleep(std::time::Duration::from_millis(300));
        let status = Command::new("kill")
            .args([signal, &child.id().to_string()])
            .status()
            .unwrap();
        assert!(status.success());
        let code = child.wait().unwrap();
        assert!(!code.success(), "run finished before the signal ({signal})");
        assert!(!out.exists(), "partial output folder after {signal}");
        assert!(
            leftovers(s.dir.path()).is_empty(),
            "staging folder left after {signal}"
        );
    }
}

#[test]
fn an_enumerated_reference_set_holds_the_observed_pairing_once() {
    let s = quick_study();
    let out = s.dir.path().join("out");
    let o = s.run_into(&out, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    let m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("manifest.json")).unwrap()).unwrap();
    // Hand count: each site has 4 dyads; its first two are one family (a grandparent in both,
    // or twins), so the two cells between them are excluded and the diagonal (real pairs) is
    // allowed: 4! − 2·3! + 2! = 14 re-pairings per site (inclusion–exclusion), 14² = 196 in
    // all, fewer than the 2000 requested, so all are enumerated; the observed pairing is one
    // of them and is counted once by the p-value itself, so 195 are drawn.
    assert_eq!(m["counts"]["repairings_drawn"], 195, "{}", m["sampler"]);
    assert_eq!(m["sampler"]["exact"], true);
    assert_eq!(m["sampler"]["reference"], "all");
    assert_eq!(m["config"]["inference"]["reference"], "all");
    let report = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(
        report.contains("the observed pairing among them; the study admitted 196 re-pairings"),
        "methods paragraph names the reference set"
    );
    // Pseudo-pairs only: derangements of 4 avoiding the two family cells, 9 − 3 − 3 + 1 = 4
    // per site (inclusion–exclusion), 16 in all, none of them the observed pairing.
    s.edit("study.toml", |t| {
        t.replace("reference = \"all\"", "reference = \"pseudo-only\"")
    });
    let out = s.dir.path().join("out-pseudo");
    let o = s.run_into(&out, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("warning: reference = \"pseudo-only\""),
        "{}",
        stderr(&o)
    );
    let m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("manifest.json")).unwrap()).unwrap();
    assert_eq!(m["counts"]["repairings_drawn"], 16, "{}", m["sampler"]);
    assert_eq!(m["sampler"]["reference"], "pseudo-only");
    let report = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(report.contains("rejects too often when members are re-paired in small pools"));
}

/// `plan`, the run's `plan.json`, its manifest, its one-screen summary and its report must all
/// describe the set the test drew from, with either reference set.
#[test]
fn every_output_describes_the_reference_set_the_test_drew_from() {
    let s = TempStudy::with_args(&[]);
    s.edit("study.toml", |t| {
        t.replace("bootstrap = 2000", "bootstrap = 0")
    });
    // The demo's rules: two sites of 6 dyads; at each site the first two dyads are one family
    // (two cells excluded). Every re-pairing: 6! − 2·5! + 4! = 504 per site (inclusion–
    // exclusion), 504² = 254016; pseudo-pairs only: 168 per site (tests/demo.rs counts it by
    // brute force), 168² = 28224. Both exceed the 10000 requested, so both are sampled by
    // rejection, with acceptance 254016 / 720² = 0.490 and 28224 / 720² = 0.054.
    for (reference, count, acceptance) in [
        (None, "254016", "0.490"),
        (Some("pseudo-only"), "28224", "0.054"),
    ] {
        if let Some(r) = reference {
            s.edit("study.toml", |t| {
                t.replace("reference = \"all\"", &format!("reference = \"{r}\""))
            });
        }
        let name = reference.unwrap_or("all");
        let audit_dir = s.dir.path().join(format!("plan-{name}"));
        let o = nevermet(&[
            "plan",
            s.toml().to_str().unwrap(),
            "--out",
            audit_dir.to_str().unwrap(),
        ]);
        assert!(o.status.success(), "{}", stderr(&o));
        let printed = stdout(&o);
        assert!(
            printed.contains(&format!("reference set  {name}")),
            "{printed}"
        );
        assert!(
            printed.contains(&format!("acceptance {acceptance}")),
            "{printed}"
        );
        let out = s.dir.path().join(format!("out-{name}"));
        let o = s.run_into(&out, &[]);
        assert!(o.status.success(), "{}", stderr(&o));
        let summary = stdout(&o);
        assert!(
            summary.contains(&format!(
                "10000 drawn from the reference set {name} ({count} re-pairings)"
            )),
            "{summary}"
        );
        assert!(
            summary.contains(&format!("acceptance {acceptance}")),
            "{summary}"
        );
        let json = |p: PathBuf| -> serde_json::Value {
            serde_json::from_str(&std::fs::read_to_string(p).unwrap()).unwrap()
        };
        let planned = json(audit_dir.join("plan.json"));
        let ran = json(out.join("plan.json"));
        assert_eq!(planned["repairings"], ran["repairings"]);
        assert_eq!(planned["sampler"], ran["sampler"]);
        assert_eq!(ran["repairings"]["reference"], name);
        assert_eq!(ran["repairings"]["count_text"], count);
        let m = json(out.join("manifest.json"));
        assert_eq!(m["sampler"]["reference"], name);
        assert_eq!(m["sampler"]["reference_size"]["count_text"], count);
        assert_eq!(m["sampler"]["method"], ran["sampler"]["method"]);
        let report = std::fs::read_to_string(out.join("report.html")).unwrap();
        assert!(
            report.contains(&format!("admitted {count}")),
            "report count"
        );
        assert!(
            report.contains(&format!("acceptance {acceptance}")),
            "report sampler"
        );
    }
}

#[test]
fn peers_mode_runs_end_to_end() {
    let s = TempStudy::with_args(&["--dyads", "8", "--sampling-hz", "2", "--mode", "peers"]);
    s.edit("study.toml", |t| {
        t.replace("permutations = 10000", "permutations = 500")
            .replace("bootstrap = 2000", "bootstrap = 100")
    });
    let out = s.dir.path().join("out");
    let o = s.run_into(&out, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    let pairs = std::fs::read_to_string(out.join("pairs.tsv")).unwrap();
    // One adult is recorded in two dyads: that candidate is the same participant twice.
    assert!(pairs.contains("excluded\tsame-participant"), "{pairs}");
    let results = std::fs::read_to_string(out.join("results.tsv")).unwrap();
    assert_eq!(results.lines().count(), 1 + 2 * 18, "{results}");
}
