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
    for check in ["folder", "recomputation"] {
        assert!(
            text.contains(&replay_line(check, "OK", "results.tsv")),
            "{text}"
        );
    }
    assert!(
        text.contains(&replay_line("inputs", "OK", "study.toml")),
        "{text}"
    );
    assert!(!text.contains("DIFFERS"), "{text}");
}

/// One line of replay's file-by-file report: the check, the verdict, the file.
fn replay_line(check: &str, verdict: &str, file: &str) -> String {
    format!("{check:<14} {verdict:<10} {file}")
}

fn replay(manifest: &Path, extra: &[&str]) -> std::process::Output {
    let mut args = vec!["replay", manifest.to_str().unwrap(), "--quiet"];
    args.extend_from_slice(extra);
    nevermet(&args)
}

#[test]
fn replay_checks_the_files_in_the_output_folder_first() {
    let s = quick_study();
    let out = s.dir.path().join("out");
    let o = s.run_into(&out, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    let manifest = out.join("manifest.json");
    let results = std::fs::read(out.join("results.tsv")).unwrap();
    let dyads = std::fs::read(out.join("dyads.tsv")).unwrap();

    // One byte appended to a result table: the folder check fails, the recomputation agrees.
    let mut edited = results.clone();
    edited.push(b'\n');
    std::fs::write(out.join("results.tsv"), &edited).unwrap();
    let o = replay(&manifest, &[]);
    let text = stdout(&o);
    assert_eq!(o.status.code(), Some(1), "{text}{}", stderr(&o));
    assert!(
        text.contains(&replay_line("folder", "CHANGED", "results.tsv")),
        "{text}"
    );
    assert!(
        text.contains(&replay_line("folder", "OK", "dyads.tsv")),
        "{text}"
    );
    assert!(
        text.contains(&replay_line("inputs", "OK", "events.tsv")),
        "{text}"
    );
    assert!(
        text.contains(&replay_line("recomputation", "OK", "results.tsv")),
        "{text}"
    );
    assert!(
        text.contains("replay: folder         FAILED, 1 file(s): results.tsv"),
        "{text}"
    );
    assert!(
        stderr(&o).contains("found differences (folder)"),
        "{}",
        stderr(&o)
    );
    std::fs::write(out.join("results.tsv"), &results).unwrap();

    // A deleted one.
    std::fs::remove_file(out.join("dyads.tsv")).unwrap();
    let o = replay(&manifest, &[]);
    let text = stdout(&o);
    assert_eq!(o.status.code(), Some(1), "{text}");
    assert!(
        text.contains(&replay_line("folder", "MISSING", "dyads.tsv")),
        "{text}"
    );
    std::fs::write(out.join("dyads.tsv"), &dyads).unwrap();

    // One the manifest does not list; the manifest's own timings are not such a file.
    std::fs::write(out.join("results-final.tsv"), &results).unwrap();
    let o = replay(&manifest, &[]);
    let text = stdout(&o);
    assert_eq!(o.status.code(), Some(1), "{text}");
    assert!(
        text.contains(&replay_line("folder", "EXTRA", "results-final.tsv")),
        "{text}"
    );
    assert!(!text.contains("timings.json"), "{text}");
    std::fs::remove_file(out.join("results-final.tsv")).unwrap();

    let o = replay(&manifest, &[]);
    assert!(o.status.success(), "{}{}", stdout(&o), stderr(&o));
}

#[test]
fn replay_names_a_changed_input_and_a_differing_output() {
    let s = quick_study();
    let out = s.dir.path().join("out");
    let o = s.run_into(&out, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    let manifest = out.join("manifest.json");
    // A tampered output hash: the folder's file and the recomputed one both differ from it.
    let original = std::fs::read_to_string(&manifest).unwrap();
    let mut m: serde_json::Value = serde_json::from_str(&original).unwrap();
    m["outputs"]["results.tsv"] = serde_json::Value::String("0".repeat(64));
    std::fs::write(&manifest, serde_json::to_string_pretty(&m).unwrap()).unwrap();
    let o = replay(&manifest, &[]);
    let text = stdout(&o);
    assert_eq!(o.status.code(), Some(1), "{text}");
    assert!(
        text.contains(&replay_line("folder", "CHANGED", "results.tsv")),
        "{text}"
    );
    assert!(
        text.contains(&replay_line("recomputation", "DIFFERS", "results.tsv")),
        "{text}"
    );
    assert!(
        text.contains(&replay_line("recomputation", "OK", "dyads.tsv")),
        "{text}"
    );
    std::fs::write(&manifest, &original).unwrap();
    // A changed input is named, and nothing is recomputed from it.
    s.edit("events.tsv", |t| t + "\n");
    let o = replay(&manifest, &[]);
    let text = stdout(&o);
    assert_eq!(o.status.code(), Some(1), "{text}");
    assert!(
        text.contains(&replay_line("inputs", "CHANGED", "events.tsv")),
        "{text}"
    );
    assert!(
        text.contains(&replay_line("folder", "OK", "results.tsv")),
        "{text}"
    );
    assert!(text.contains("replay: recomputation  not run"), "{text}");
    assert!(
        !text.contains(&replay_line("recomputation", "OK", "results.tsv")),
        "{text}"
    );
}

/// Copies a folder tree.
fn copy_tree(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let dest = to.join(e.file_name());
        if e.file_type().unwrap().is_dir() {
            copy_tree(&e.path(), &dest);
        } else {
            std::fs::copy(e.path(), dest).unwrap();
        }
    }
}

#[test]
fn a_study_and_its_outputs_moved_together_still_replay() {
    let s = quick_study();
    let out = s.dir.path().join("results/first");
    std::fs::create_dir_all(out.parent().unwrap()).unwrap();
    let o = s.run_into(&out, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    let m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("manifest.json")).unwrap()).unwrap();
    assert_eq!(m["study"], "../../study/study.toml");
    // Both folders copied elsewhere, at another depth; the originals gone.
    let elsewhere = tempfile::tempdir().unwrap();
    let moved = elsewhere.path().join("archive/2026");
    copy_tree(&s.root(), &moved.join("study"));
    copy_tree(&out, &moved.join("results/first"));
    std::fs::remove_dir_all(s.root()).unwrap();
    std::fs::remove_dir_all(&out).unwrap();
    let o = replay(&moved.join("results/first/manifest.json"), &[]);
    assert!(o.status.success(), "{}{}", stdout(&o), stderr(&o));
    assert!(stdout(&o).contains(&replay_line("recomputation", "OK", "results.tsv")));
}

#[test]
fn a_study_moved_on_its_own_replays_with_study() {
    let s = quick_study();
    let out = s.dir.path().join("out");
    let o = s.run_into(&out, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    let manifest = out.join("manifest.json");
    let elsewhere = tempfile::tempdir().unwrap();
    let moved = elsewhere.path().join("kept");
    copy_tree(&s.root(), &moved);
    std::fs::remove_dir_all(s.root()).unwrap();
    let o = replay(&manifest, &[]);
    assert_eq!(o.status.code(), Some(2));
    let err = stderr(&o);
    assert!(
        err.contains("study.toml: the study file the manifest names"),
        "{err}"
    );
    assert!(err.contains("--study"), "{err}");
    let toml = moved.join("study.toml");
    let o = replay(&manifest, &["--study", toml.to_str().unwrap()]);
    assert!(o.status.success(), "{}{}", stdout(&o), stderr(&o));
    // The inputs of the moved study are still held to the manifest's hashes.
    let members = moved.join("members.tsv");
    let text = std::fs::read_to_string(&members).unwrap();
    std::fs::write(&members, text + "\n").unwrap();
    let o = replay(&manifest, &["--study", toml.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1), "{}", stdout(&o));
    assert!(stdout(&o).contains(&replay_line("inputs", "CHANGED", "members.tsv")));
}

/// The files under `dir` whose bytes hold `needle`.
fn files_holding(dir: &Path, needle: &str) -> Vec<PathBuf> {
    let mut hits = Vec::new();
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            hits.extend(files_holding(&p, needle));
        } else {
            let bytes = std::fs::read(&p).unwrap();
            if bytes.windows(needle.len()).any(|w| w == needle.as_bytes()) {
                hits.push(p);
            }
        }
    }
    hits
}

#[test]
fn no_output_file_holds_an_absolute_path_of_the_machine() {
    let s = quick_study();
    let out = s.dir.path().join("out");
    let audit = s.dir.path().join("audit");
    // Absolute paths on the command line, the way a script would give them.
    let o = s.run_into(&out, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(s.toml().is_absolute() && out.is_absolute());
    let o = nevermet(&[
        "plan",
        s.toml().to_str().unwrap(),
        "--out",
        audit.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let base = s.dir.path().to_str().unwrap().to_string();
    let real = std::fs::canonicalize(s.dir.path()).unwrap();
    for needle in [base.as_str(), real.to_str().unwrap()] {
        for dir in [&out, &audit] {
            let hits = files_holding(dir, needle);
            assert!(hits.is_empty(), "{needle} appears in {hits:?}");
        }
    }
    assert!(out.join("report.html").is_file() && audit.join("plan.json").is_file());
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

/// Starts `run` on the study into `out` in the background.
fn spawn_run(s: &TempStudy, out: &Path, extra: &[&str]) -> std::process::Child {
    Command::new(bin())
        .args([
            "run",
            s.toml().to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
            "--quiet",
        ])
        .args(extra)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap()
}

/// Waits until a staging folder appears in `dir` and returns it.
fn wait_for_staging(dir: &Path) -> PathBuf {
    let start = std::time::Instant::now();
    loop {
        if let Some(p) = leftovers(dir).pop() {
            return p;
        }
        assert!(start.elapsed().as_secs() < 30, "no staging folder appeared");
        std::thread::sleep(std::time::Duration::from_millis(10));
    }
}

#[test]
fn a_staging_folder_left_by_a_killed_run_is_removed_by_the_next_run() {
    let s = TempStudy::with_args(&["--dyads", "40"]);
    let out = s.dir.path().join("out");
    let mut child = spawn_run(&s, &out, &[]);
    let left = wait_for_staging(s.dir.path());
    std::thread::sleep(std::time::Duration::from_millis(100));
    child.kill().unwrap(); // SIGKILL: no handler runs
    child.wait().unwrap();
    assert!(
        left.is_dir(),
        "the killed run had no chance to remove {}",
        left.display()
    );
    assert!(!out.exists());
    let o = s.run_into(&out, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    let err = stderr(&o);
    let name = left.file_name().unwrap().to_string_lossy().into_owned();
    assert!(err.contains("nevermet: removed"), "{err}");
    assert!(err.contains(&name), "{err}");
    assert!(err.contains(&format!("(process {})", child.id())), "{err}");
    assert!(
        leftovers(s.dir.path()).is_empty(),
        "{:?}",
        leftovers(s.dir.path())
    );
    for f in OUTPUTS {
        assert!(out.join(f).is_file(), "missing {f}");
    }
}

#[test]
fn a_second_run_into_a_folder_being_written_is_refused() {
    let s = TempStudy::with_args(&["--dyads", "40"]);
    let out = s.dir.path().join("out");
    let mut first = spawn_run(&s, &out, &["--threads", "1"]);
    let staging = wait_for_staging(s.dir.path());
    let o = s.run_into(&out, &[]);
    assert!(
        first.try_wait().unwrap().is_none(),
        "the first run ended before the second was refused; the test proves nothing"
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    let err = stderr(&o);
    assert!(
        err.contains(&format!("another nevermet run (process {})", first.id())),
        "{err}"
    );
    assert!(
        err.contains(&staging.file_name().unwrap().to_string_lossy().into_owned()),
        "{err}"
    );
    assert!(
        staging.is_dir(),
        "the refused run must not touch the running one's folder"
    );
    let status = first.wait().unwrap();
    assert!(status.success(), "the first run failed");
    assert!(leftovers(s.dir.path()).is_empty());
    for f in OUTPUTS {
        assert!(out.join(f).is_file(), "missing {f}");
    }
}
