//! `manifest.json` (what was run, on what, with which result files) and `timings.json`.
//!
//! The manifest holds everything replay needs and nothing that varies between identical runs
//! except the thread count it records; wall times go to `timings.json`, which no hash covers.

use std::collections::BTreeMap;
use std::io::Read;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use crate::study::Config;

pub const MANIFEST: &str = "manifest.json";
pub const TIMINGS: &str = "timings.json";

#[derive(Clone, Debug, Serialize, Deserialize, PartialEq)]
pub struct Manifest {
    pub tool: String,
    pub version: String,
    /// The study file, as an absolute path.
    pub study: PathBuf,
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
