//! `manifest.json` (what was run, on what, with which result files) and `timings.json`.
//!
//! The manifest holds everything replay needs and nothing that varies between identical runs
//! except the thread count it records; wall times go to `timings.json`, which no hash covers.
//! It holds no absolute path: the study is named relative to the manifest's own folder, and
//! every input relative to the study's folder, so a study and its output folder moved together
//! (to another folder or another machine) still replay, and the file does not disclose the
//! layout of the machine that wrote it.

use std::collections::BTreeMap;
use std::io::Read;
use std::path::{Component, Path, PathBuf};

use anyhow::Context;
use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use crate::pipeline::Analysis;
use crate::report::plan::PlanAudit;
use crate::study::Config;

pub const MANIFEST: &str = "manifest.json";
pub const TIMINGS: &str = "timings.json";

#[derive(Clone, Debug, Serialize, Deserialize, PartialEq)]
pub struct Manifest {
    pub tool: String,
    pub version: String,
    /// The study file, relative to the folder holding this manifest, `/`-separated (an older
    /// manifest may hold an absolute path, which replay still reads).
    pub study: String,
    pub seed: u64,
    pub threads: usize,
    pub memory_gib: f64,
    pub sampler: serde_json::Value,
    /// The configuration as used, defaults filled in.
    pub config: serde_json::Value,
    pub counts: BTreeMap<String, serde_json::Value>,
    /// Input file (relative to the study folder) → SHA-256.
    pub inputs: BTreeMap<String, String>,
    /// Output file (relative to the output folder) → SHA-256.
    pub outputs: BTreeMap<String, String>,
    pub warnings: Vec<String>,
}

impl Manifest {
    pub fn resolved_config(config: &Config) -> serde_json::Value {
        serde_json::to_value(config).expect("config serialises")
    }

    /// The study file this manifest names, for a manifest read from `manifest_dir`.
    pub fn study_path(&self, manifest_dir: &Path) -> PathBuf {
        manifest_dir.join(&self.study)
    }
}

/// How an execution was asked for: what the manifest records besides the analysis itself.
#[derive(Clone, Copy, Debug)]
pub struct RunSettings {
    pub seed: u64,
    pub threads: usize,
    pub memory_gib: f64,
}

/// The manifest of a finished analysis whose outputs were written into `dir`.
///
/// `study` is the study file's path relative to `home`, the folder the manifest will finally
/// live in (the output folder, not the staging folder it is written into first).
#[allow(clippy::too_many_arguments)]
pub fn build(
    analysis: &Analysis,
    audit: &PlanAudit,
    warnings: &[String],
    settings: RunSettings,
    study: String,
    dir: &Path,
    outputs: &[PathBuf],
) -> anyhow::Result<Manifest> {
    let root = &analysis.study.root;
    let inputs = hash_files(root, &analysis.study.input_files).context("hashing the inputs")?;
    let outputs = hash_files(dir, outputs).context("hashing the outputs")?;
    let mut counts = BTreeMap::new();
    counts.insert("dyads".into(), analysis.study.dyads.len().into());
    counts.insert("members".into(), analysis.study.members.len().into());
    counts.insert("candidates".into(), audit.candidates.into());
    counts.insert("admissible_pairs".into(), audit.admissible_pairs.into());
    counts.insert("excluded".into(), audit.excluded.into());
    counts.insert("repairings_drawn".into(), analysis.repairings.len().into());
    counts.insert("cells".into(), analysis.cells.len().into());
    counts.insert("pair_blocks".into(), audit.cost.pair_blocks.into());
    Ok(Manifest {
        tool: "nevermet".into(),
        version: env!("CARGO_PKG_VERSION").into(),
        study,
        seed: settings.seed,
        threads: settings.threads,
        memory_gib: settings.memory_gib,
        sampler: serde_json::json!({
            "reference": analysis.null.reference,
            "reference_size": audit.repairings.size,
            "method": analysis.repairings.method,
            "description": analysis.repairings.method.to_string(),
            "exact": analysis.repairings.exact,
            "compared_with": analysis.repairings.len(),
            "reason": analysis.null.reason,
        }),
        config: Manifest::resolved_config(&analysis.study.config),
        counts,
        inputs,
        outputs,
        warnings: warnings.to_vec(),
    })
}

/// The wall time per stage, for `timings.json`.
pub fn timings(analysis: &Analysis, threads: usize) -> serde_json::Value {
    let ordered: Vec<serde_json::Value> = analysis
        .timings
        .iter()
        .map(|(k, v)| serde_json::json!({"stage": k, "seconds": v}))
        .collect();
    serde_json::json!({ "threads": threads, "stages": ordered })
}

/// `file` relative to the folder `home`, `/`-separated, through `..` where needed. Both are
/// resolved first (symbolic links included), so the result holds between the real
/// locations; `home` need not exist yet when its parent does.
pub fn relative_to(file: &Path, home: &Path) -> anyhow::Result<String> {
    let file =
        std::fs::canonicalize(file).with_context(|| format!("resolving {}", file.display()))?;
    let home = resolve_folder(home)?;
    let (f, h): (Vec<Component>, Vec<Component>) =
        (file.components().collect(), home.components().collect());
    anyhow::ensure!(
        f.first() == h.first(),
        "{} and {} have no relative path between them (different drives)",
        file.display(),
        home.display()
    );
    let common = f.iter().zip(&h).take_while(|(a, b)| a == b).count();
    let mut parts: Vec<String> = vec!["..".to_string(); h.len() - common];
    parts.extend(
        f[common..]
            .iter()
            .map(|c| c.as_os_str().to_string_lossy().into_owned()),
    );
    Ok(parts.join("/"))
}

/// The absolute form of a folder that may not exist yet (its parent must).
fn resolve_folder(dir: &Path) -> anyhow::Result<PathBuf> {
    if let Ok(p) = std::fs::canonicalize(dir) {
        return Ok(p);
    }
    let name = dir
        .file_name()
        .with_context(|| format!("{}: not a folder name", dir.display()))?;
    let parent = match dir.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let parent =
        std::fs::canonicalize(parent).with_context(|| format!("resolving {}", parent.display()))?;
    Ok(parent.join(name))
}

/// SHA-256 of a file, in lowercase hex.
pub fn sha256_file(path: &Path) -> std::io::Result<String> {
    let mut file = std::fs::File::open(path)?;
    let mut hasher = Sha256::new();
    let mut buf = vec![0u8; 1 << 16];
    loop {
        let n = file.read(&mut buf)?;
        if n == 0 {
            break;
        }
        hasher.update(&buf[..n]);
    }
    Ok(hex(&hasher.finalize()))
}

fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

/// Hashes of the given files, keyed by their path relative to `base`.
pub fn hash_files(base: &Path, files: &[PathBuf]) -> std::io::Result<BTreeMap<String, String>> {
    let mut out = BTreeMap::new();
    for f in files {
        let key = f
            .strip_prefix(base)
            .unwrap_or(f)
            .to_string_lossy()
            .replace('\\', "/");
        let key = key.strip_prefix("./").unwrap_or(&key).to_string();
        out.insert(key, sha256_file(f)?);
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn relative_paths_climb_and_descend_between_real_locations() {
        let dir = tempfile::tempdir().unwrap();
        let study = dir.path().join("a/study");
        std::fs::create_dir_all(&study).unwrap();
        std::fs::create_dir_all(dir.path().join("b/c")).unwrap();
        std::fs::write(study.join("study.toml"), "").unwrap();
        let toml = study.join("study.toml");
        let rel = |home: &Path| relative_to(&toml, home).unwrap();
        // Written out by hand from the folder layout above.
        assert_eq!(rel(&dir.path().join("out")), "../a/study/study.toml");
        assert_eq!(
            rel(&dir.path().join("b/c/out")),
            "../../../a/study/study.toml"
        );
        assert_eq!(rel(&study), "study.toml");
        assert_eq!(rel(&study.join("out")), "../study.toml");
        assert!(relative_to(&toml, &dir.path().join("no/such/out")).is_err());
    }

    #[test]
    fn sha256_matches_the_published_test_vector() {
        // FIPS 180-2, appendix B.1: SHA-256("abc").
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("abc");
        std::fs::write(&p, "abc").unwrap();
        assert_eq!(
            sha256_file(&p).unwrap(),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }
}
