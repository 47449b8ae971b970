//! What `replay` checks, file by file: the output folder as it is now against its manifest
//! (the files a paper is written from), the inputs against the hashes the manifest recorded,
//! and a recomputation's outputs against the manifest's. Each check gives one finding per
//! file; printing them is the command's job.

use std::collections::BTreeSet;
use std::path::Path;

use anyhow::Context;

use crate::report::manifest::{self, Manifest};

/// The three checks, in the order replay runs them.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Check {
    Folder,
    Inputs,
    Recomputation,
}

impl Check {
    pub fn name(self) -> &'static str {
        match self {
            Check::Folder => "folder",
            Check::Inputs => "inputs",
            Check::Recomputation => "recomputation",
        }
    }
}

#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Verdict {
    /// The file's hash is the manifest's.
    Same,
    Changed,
    /// Listed in the manifest, not there.
    Missing,
    /// There, not listed in the manifest.
    NotInManifest,
    Unreadable(String),
}

/// One file's result under one check.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Finding {
    pub check: Check,
    pub file: String,
    pub verdict: Verdict,
}

impl Finding {
    pub fn ok(&self) -> bool {
        self.verdict == Verdict::Same
    }

    /// A short label (`OK`, `CHANGED`, ...) and what it means for this check.
    pub fn label(&self) -> (&'static str, String) {
        match (&self.verdict, self.check) {
            (Verdict::Same, _) => ("OK", String::new()),
            (Verdict::Changed, Check::Folder) => (
                "CHANGED",
                "edited since the run: its hash is not the manifest's".into(),
            ),
            (Verdict::Changed, Check::Inputs) => (
                "CHANGED",
                "input changed since the run: its hash is not the manifest's".into(),
            ),
            (Verdict::Changed, Check::Recomputation) => (
                "DIFFERS",
                "the recomputed file is not the one the manifest lists".into(),
            ),
            (Verdict::Missing, Check::Folder) => (
                "MISSING",
                "listed in the manifest, not in the folder".into(),
            ),
            (Verdict::Missing, Check::Inputs) => ("MISSING", "input not found".into()),
            (Verdict::Missing, Check::Recomputation) => (
                "MISSING",
                "listed in the manifest, not written by the recomputation".into(),
            ),
            (Verdict::NotInManifest, Check::Recomputation) => (
                "EXTRA",
                "written by the recomputation, not in the manifest".into(),
            ),
            (Verdict::NotInManifest, _) => ("EXTRA", "not in the manifest".into()),
            (Verdict::Unreadable(e), _) => ("UNREADABLE", e.clone()),
        }
    }
}

fn finding(check: Check, file: &str, verdict: Verdict) -> Finding {
    Finding {
        check,
        file: file.to_string(),
        verdict,
    }
}

/// The hash of `path` against `want`.
fn verdict_of(path: &Path, want: &str) -> Verdict {
    match manifest::sha256_file(path) {
        Ok(h) if h == want => Verdict::Same,
        Ok(_) => Verdict::Changed,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Verdict::Missing,
        Err(e) => Verdict::Unreadable(e.to_string()),
    }
}

/// The output folder `dir` against its manifest: every listed file is hashed, and every other
/// file in the folder (at any depth; `manifest.json` and `timings.json` themselves aside) is
/// one the manifest does not vouch for.
pub fn check_folder(dir: &Path, m: &Manifest) -> anyhow::Result<Vec<Finding>> {
    let mut present = BTreeSet::new();
    list_files(dir, "", &mut present)?;
    present.remove(manifest::MANIFEST);
    present.remove(manifest::TIMINGS);
    let mut out: Vec<Finding> = m
        .outputs
        .iter()
        .map(|(rel, want)| {
            let v = if present.contains(rel) {
                verdict_of(&dir.join(rel), want)
            } else {
                Verdict::Missing
            };
            finding(Check::Folder, rel, v)
        })
        .collect();
    out.extend(
        present
            .iter()
            .filter(|f| !m.outputs.contains_key(*f))
            .map(|f| finding(Check::Folder, f, Verdict::NotInManifest)),
    );
    Ok(out)
}

/// Every file under `dir`, `/`-separated relative to the folder the walk started in.
fn list_files(dir: &Path, prefix: &str, out: &mut BTreeSet<String>) -> anyhow::Result<()> {
    let entries = std::fs::read_dir(dir).with_context(|| format!("listing {}", dir.display()))?;
    for entry in entries {
        let entry = entry.with_context(|| format!("listing {}", dir.display()))?;
        let name = format!("{prefix}{}", entry.file_name().to_string_lossy());
        let path = entry.path();
        if path.is_dir() {
            list_files(&path, &format!("{name}/"), out)?;
        } else {
            out.insert(name);
        }
    }
    Ok(())
}

/// The inputs of `study` (a `study.toml`) against the manifest's hashes. Inputs are found
/// relative to the study's folder; the study file itself is `study` whatever its name now.
pub fn check_inputs(study: &Path, m: &Manifest) -> Vec<Finding> {
    let root = match study.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let recorded_name = Path::new(&m.study)
        .file_name()
        .map(|n| n.to_string_lossy().into_owned());
    m.inputs
        .iter()
        .map(|(rel, want)| {
            let path = if Some(rel) == recorded_name.as_ref() {
                study.to_path_buf()
            } else {
                root.join(rel)
            };
            finding(Check::Inputs, rel, verdict_of(&path, want))
        })
        .collect()
}

/// A recomputation's output hashes against the manifest's.
pub fn compare_outputs(m: &Manifest, recomputed: &Manifest) -> Vec<Finding> {
    let mut out: Vec<Finding> = m
        .outputs
        .iter()
        .map(|(rel, want)| {
            let v = match recomputed.outputs.get(rel) {
                Some(got) if got == want => Verdict::Same,
                Some(_) => Verdict::Changed,
                None => Verdict::Missing,
            };
            finding(Check::Recomputation, rel, v)
        })
        .collect();
    out.extend(
        recomputed
            .outputs
            .keys()
            .filter(|k| !m.outputs.contains_key(*k))
            .map(|k| finding(Check::Recomputation, k, Verdict::NotInManifest)),
    );
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::collections::BTreeMap;

    fn manifest(outputs: &[(&str, &str)]) -> Manifest {
        Manifest {
            tool: "nevermet".into(),
            version: "0".into(),
            study: "../study/study.toml".into(),
            seed: 1,
            threads: 1,
            memory_gib: 1.0,
            sampler: serde_json::Value::Null,
            config: serde_json::Value::Null,
            counts: BTreeMap::new(),
            inputs: BTreeMap::new(),
            outputs: outputs
                .iter()
                .map(|(k, v)| (k.to_string(), v.to_string()))
                .collect(),
            warnings: Vec::new(),
        }
    }

    // SHA-256("abc"), FIPS 180-2 appendix B.1.
    const ABC: &str = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad";

    #[test]
    fn the_folder_check_names_changed_missing_and_unlisted_files() {
        let dir = tempfile::tempdir().unwrap();
        let d = dir.path();
        for f in ["a.tsv", "b.tsv", "manifest.json", "timings.json"] {
            std::fs::write(d.join(f), "abc").unwrap();
        }
        std::fs::write(d.join("b.tsv"), "abd").unwrap();
        std::fs::create_dir(d.join("sub")).unwrap();
        std::fs::write(d.join("sub/notes.txt"), "x").unwrap();
        let m = manifest(&[("a.tsv", ABC), ("b.tsv", ABC), ("c.tsv", ABC)]);
        let got: Vec<(String, Verdict)> = check_folder(d, &m)
            .unwrap()
            .into_iter()
            .map(|f| (f.file, f.verdict))
            .collect();
        let want = [
            ("a.tsv", Verdict::Same),
            ("b.tsv", Verdict::Changed),
            ("c.tsv", Verdict::Missing),
            ("sub/notes.txt", Verdict::NotInManifest),
        ];
        let want: Vec<(String, Verdict)> =
            want.into_iter().map(|(f, v)| (f.to_string(), v)).collect();
        assert_eq!(got, want);
    }

    #[test]
    fn a_recomputation_is_compared_both_ways() {
        let m = manifest(&[("a", "1"), ("b", "2")]);
        let r = manifest(&[("a", "1"), ("b", "3"), ("c", "4")]);
        let v: Vec<Verdict> = compare_outputs(&m, &r)
            .into_iter()
            .map(|f| f.verdict)
            .collect();
        assert_eq!(v, [Verdict::Same, Verdict::Changed, Verdict::NotInManifest]);
        let v: Vec<Verdict> = compare_outputs(&r, &m)
            .into_iter()
            .map(|f| f.verdict)
            .collect();
        assert_eq!(v, [Verdict::Same, Verdict::Changed, Verdict::Missing]);
    }
}
