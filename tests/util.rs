//! Test helpers: temporary study folders, the binary under test, and the Python reference
//! environment.

#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::sync::OnceLock;

/// The binary under test.
pub fn bin() -> PathBuf {
    PathBuf::from(env!("CARGO_BIN_EXE_nevermet"))
}

/// Runs the binary with arguments.
pub fn nevermet(args: &[&str]) -> Output {
    Command::new(bin())
        .args(args)
        .output()
        .expect("run nevermet")
}

pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// A small valid study (the demo generator at a low rate), written into a fresh temp folder.
pub struct TempStudy {
    pub dir: tempfile::TempDir,
}

impl TempStudy {
    pub fn new() -> Self {
        Self::with_args(&["--dyads", "8", "--sampling-hz", "2"])
    }

    pub fn with_args(extra: &[&str]) -> Self {
        let dir = tempfile::tempdir().expect("temp dir");
        let out = dir.path().join("study");
        let mut args = vec!["demo", "--out", out.to_str().unwrap()];
        args.extend_from_slice(extra);
        let o = nevermet(&args);
        assert!(o.status.success(), "demo failed: {}", stderr(&o));
        TempStudy { dir }
    }

    pub fn root(&self) -> PathBuf {
        self.dir.path().join("study")
    }

    pub fn toml(&self) -> PathBuf {
        self.root().join("study.toml")
    }

    pub fn path(&self, rel: &str) -> PathBuf {
        self.root().join(rel)
    }

    pub fn read(&self, rel: &str) -> String {
        std::fs::read_to_string(self.path(rel)).expect("read study file")
    }

    pub fn write(&self, rel: &str, text: &str) {
        std::fs::write(self.path(rel), text).expect("write study file");
    }

    /// Rewrites one file through `f`.
    pub fn edit(&self, rel: &str, f: impl FnOnce(String) -> String) {
        let text = self.read(rel);
        self.write(rel, &f(text));
    }

    /// Replaces one whole line (0-based, header = 0) of a file.
    pub fn set_line(&self, rel: &str, line: usize, new: &str) {
        self.edit(rel, |t| {
            let mut lines: Vec<String> = t.lines().map(str::to_string).collect();
            lines[line] = new.to_string();
            lines.join("\n") + "\n"
        });
    }

    /// Replaces one cell (0-based line, header = 0; 0-based column) of a TSV or CSV file.
    pub fn set_cell(&self, rel: &str, line: usize, col: usize, value: &str) {
        let sep = if rel.ends_with(".csv") { ',' } else { '\t' };
        let mut cells: Vec<String> = self.line(rel, line).split(sep).map(String::from).collect();
        cells[col] = value.to_string();
        self.set_line(rel, line, &cells.join(&sep.to_string()));
    }

    /// One cell (0-based line and column) of a TSV or CSV file.
    pub fn cell(&self, rel: &str, line: usize, col: usize) -> String {
        let sep = if rel.ends_with(".csv") { ',' } else { '\t' };
        self.line(rel, line)
            .split(sep)
            .nth(col)
            .expect("column")
            .to_string()
    }

    pub fn line(&self, rel: &str, line: usize) -> String {
        self.read(rel).lines().nth(line).expect("line").to_string()
    }

    /// The recording file of the first member.
    pub fn first_recording(&self) -> String {
        let members = self.read("members.tsv");
        let header: Vec<&str> = members.lines().next().unwrap().split('\t').collect();
        let col = header.iter().position(|h| *h == "recording").unwrap();
        let row: Vec<&str> = members.lines().nth(1).unwrap().split('\t').collect();
        format!("recordings/{}", row[col])
    }

    /// Runs `run` on the study into `out`, quietly, with extra options.
    pub fn run_into(&self, out: &Path, extra: &[&str]) -> Output {
        let toml = self.toml();
        let mut args = vec![
            "run",
            toml.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
            "--quiet",
        ];
        args.extend_from_slice(extra);
        nevermet(&args)
    }

    /// Runs `check` on the study.
    pub fn check(&self) -> Output {
        nevermet(&["check", self.toml().to_str().unwrap()])
    }
}

/// Asserts a failed run whose stderr contains every phrase.
pub fn assert_fails_with(o: &Output, phrases: &[&str]) {
    let err = stderr(o);
    assert!(
        !o.status.success(),
        "expected failure, got success; stderr:\n{err}"
    );
    for p in phrases {
        assert!(err.contains(p), "stderr lacks {p:?}:\n{err}");
    }
}

/// Packages of the Python reference environment: numpy, scipy and statsmodels for the
/// project's own reference scripts, pycwt as an outside wavelet library (it brings matplotlib
/// and tqdm along). Nothing is pinned; pycwt is published as pre-releases only, which pip
/// takes when a package has no final release.
const PY_PACKAGES: [&str; 4] = ["numpy", "scipy", "statsmodels", "pycwt"];

/// A Python interpreter with [`PY_PACKAGES`], in a virtual environment under `target/` created
/// on first use, so `cargo test --release` alone works on a fresh machine. The stamp file
/// names the packages installed; an environment whose stamp names others (one made before a
/// package was added) gets the missing ones installed in place.
pub fn python() -> &'static Path {
    static PY: OnceLock<PathBuf> = OnceLock::new();
    PY.get_or_init(|| {
        let target = Path::new(env!("CARGO_MANIFEST_DIR")).join("target");
        let venv = target.join("pyref-venv");
        let py = venv.join("bin").join("python");
        let stamp = venv.join(".nevermet-ready");
        let want = PY_PACKAGES.join(" ");
        let ready = std::fs::read_to_string(&stamp).is_ok_and(|s| s.trim() == want);
        if !ready {
            if !py.exists() {
                let ok = Command::new("python3")
                    .args(["-m", "venv", venv.to_str().unwrap()])
                    .status()
                    .expect("python3 -m venv")
                    .success();
                assert!(ok, "could not create the Python reference environment");
            }
            let ok = Command::new(&py)
                .args(["-m", "pip", "install", "--quiet"])
                .args(PY_PACKAGES)
                .status()
                .expect("pip install")
                .success();
            assert!(ok, "could not install {want}");
            std::fs::write(&stamp, &want).unwrap();
        }
        py
    })
}

/// Runs a reference script from `tests/reference/` on a JSON input, returning its JSON output.
pub fn reference(script: &str, input: &serde_json::Value) -> serde_json::Value {
    let dir = tempfile::tempdir().unwrap();
    let inp = dir.path().join("in.json");
    let out = dir.path().join("out.json");
    std::fs::write(&inp, serde_json::to_vec(input).unwrap()).unwrap();
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/reference")
        .join(script);
    let o = Command::new(python())
        .arg(&path)
        .arg(&inp)
        .arg(&out)
        .output()
        .expect("run reference script");
    assert!(
        o.status.success(),
        "{script} failed: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    serde_json::from_slice(&std::fs::read(&out).unwrap()).unwrap()
}
