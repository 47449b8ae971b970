//! A study in the shape a lab's own exports have (one CSV per person with `Time(s)` and
//! `S1-D1 HbO` columns, a participants sheet `pid, dyad_no, who, family_id`, a schedule
//! `dyad_no, condition, start_s, length_s`) is analysed from study.toml alone, exactly as the
//! same data in the plain layout; and each way such a study goes wrong is named precisely.

use std::collections::BTreeMap;
use std::path::Path;

use crate::util::{TempStudy, assert_fails_with, nevermet, stderr, stdout};

/// A lab's channel name for each demo channel (source–detector pairs).
fn lab_channel(plain: &str) -> String {
    let names = ["pf1", "pf2", "tp1", "tp2", "oc1", "oc2"];
    let i = names
        .iter()
        .position(|n| *n == plain)
        .unwrap_or_else(|| panic!("unexpected channel {plain}"));
    format!("S{}-D{}", i / 2 + 1, i % 2 + 1)
}

/// Rows of a TSV file as maps from header to cell.
fn rows(text: &str) -> (Vec<String>, Vec<BTreeMap<String, String>>) {
    let mut lines = text.lines();
    let header: Vec<String> = lines
        .next()
        .unwrap()
        .split('\t')
        .map(String::from)
        .collect();
    let rows = lines
        .map(|l| {
            header
                .iter()
                .cloned()
                .zip(l.split('\t').map(String::from))
                .collect()
        })
        .collect();
    (header, rows)
}

fn csv(header: &[&str], rows: &[Vec<String>]) -> String {
    let mut out = header.join(",") + "\n";
    for r in rows {
        out.push_str(&r.join(","));
        out.push('\n');
    }
    out
}

/// The study.toml lines that map the lab's names onto nevermet's.
const MAPPING: &str = r#"recording_pattern = "{participant}_session{session}.csv"

[inputs.columns]
dyad = "dyad_no"
participant = "pid"
role = "who"
onset = "start_s"
duration = "length_s"
trial_type = "condition"
channel = "channel_label"
roi = "region"

[inputs.recording_format]
time_column = "Time(s)"
column_pattern = "{channel} {chromophore}"
chromophore_labels = { hbo = "HbO", hbr = "HbR" }
"#;

/// Rewrites a demo study into a lab's own layout: other table names, column names, file names,
/// channel names and recording headers, with the same numbers.
fn to_lab_layout(s: &TempStudy) {
    let (_, members) = rows(&s.read("members.tsv"));
    let mut sessions: BTreeMap<String, usize> = BTreeMap::new();
    let mut people = Vec::new();
    std::fs::create_dir(s.path("exports")).unwrap();
    for m in &members {
        let pid = &m["participant"];
        let session = {
            let n = sessions.entry(pid.clone()).or_insert(0);
            *n += 1;
            *n
        };
        people.push(vec![
            pid.clone(),
            m["dyad"].clone(),
            m["role"].clone(),
            m["family"].clone(),
            m["site"].clone(),
            session.to_string(),
        ]);
        let old = s.read(&format!("recordings/{}", m["recording"]));
        let (header, body) = old.split_once('\n').unwrap();
        let header: Vec<String> = header
            .split(',')
            .map(|h| match h.split_once('.') {
                None => "Time(s)".to_string(),
                Some((ch, chrom)) => {
                    let label = match chrom {
                        "hbo" => "HbO",
                        "hbr" => "HbR",
                        other => panic!("unexpected chromophore {other}"),
                    };
                    format!("{} {label}", lab_channel(ch))
                }
            })
            .collect();
        s.write(
            &format!("exports/{pid}_session{session}.csv"),
            &format!("{}\n{body}", header.join(",")),
        );
    }
    std::fs::remove_dir_all(s.path("recordings")).unwrap();
    s.write(
        "participants.csv",
        &csv(
            &["pid", "dyad_no", "who", "family_id", "site", "session"],
            &people,
        ),
    );
    let (_, events) = rows(&s.read("events.tsv"));
    let schedule: Vec<Vec<String>> = events
        .iter()
        .map(|e| {
            vec![
                e["dyad"].clone(),
                e["trial_type"].clone(),
                e["onset"].clone(),
                e["duration"].clone(),
            ]
        })
        .collect();
    s.write(
        "schedule.csv",
        &csv(&["dyad_no", "condition", "start_s", "length_s"], &schedule),
    );
    let (_, channels) = rows(&s.read("channels.tsv"));
    let optodes: Vec<Vec<String>> = channels
        .iter()
        .map(|c| vec![lab_channel(&c["channel"]), c["roi"].clone()])
        .collect();
    s.write("optodes.csv", &csv(&["channel_label", "region"], &optodes));
    let (_, quality) = rows(&s.read("quality.tsv"));
    let marks: Vec<Vec<String>> = quality
        .iter()
        .map(|q| {
            vec![
                q["participant"].clone(),
                lab_channel(&q["channel"]),
                q["status"].clone(),
            ]
        })
        .collect();
    s.write(
        "channel_checks.csv",
        &csv(&["pid", "channel_label", "status"], &marks),
    );
    for old in ["members.tsv", "events.tsv", "channels.tsv", "quality.tsv"] {
        std::fs::remove_file(s.path(old)).unwrap();
    }
    s.edit("study.toml", |t| {
        t.replace(
            "members = \"members.tsv\"",
            "members = \"participants.csv\"",
        )
        .replace("events = \"events.tsv\"", "events = \"schedule.csv\"")
        .replace("channels = \"channels.tsv\"", "channels = \"optodes.csv\"")
        .replace(
            "quality = \"quality.tsv\"",
            "quality = \"channel_checks.csv\"",
        )
        .replace("recordings = \"recordings\"", "recordings = \"exports\"")
        .replace("keep_apart = [\"family\"]", "keep_apart = [\"family_id\"]")
        .replace("[pairing]", &format!("{MAPPING}\n[pairing]"))
        .replace(
            "name = \"tower-demo\"",
            "name = \"tower-demo\"\nconditions = [\"joint\", \"parallel\", \"rest\"]",
        )
    });
}

fn lab_study() -> TempStudy {
    let s = TempStudy::new();
    to_lab_layout(&s);
    s
}

fn fewer_permutations(s: &TempStudy) {
    s.edit("study.toml", |t| {
        t.replace("permutations = 10000", "permutations = 400")
            .replace("bootstrap = 2000", "bootstrap = 200")
    });
}

#[test]
fn a_lab_layout_mapped_in_study_toml_gives_the_plain_layouts_results() {
    let plain = TempStudy::new();
    let lab = lab_study();
    fewer_permutations(&plain);
    fewer_permutations(&lab);
    assert!(!lab.path("members.tsv").exists() && lab.path("exports").is_dir());
    let check = lab.check();
    assert!(check.status.success(), "{}", stderr(&check));
    assert!(
        stdout(&check).contains("the study is valid"),
        "{}",
        stdout(&check)
    );
    let (a, b) = (plain.dir.path().join("out"), lab.dir.path().join("out"));
    let o = plain.run_into(&a, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    let o = lab.run_into(&b, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    for file in ["results.tsv", "dyads.tsv", "contrasts.tsv"] {
        let (x, y) = (
            std::fs::read(a.join(file)).unwrap(),
            std::fs::read(b.join(file)).unwrap(),
        );
        assert!(!x.is_empty());
        assert!(
            x == y,
            "{file} differs between the plain and the lab layout"
        );
    }
    // The manifest records the mapping it was run with.
    let manifest = std::fs::read_to_string(b.join("manifest.json")).unwrap();
    assert!(manifest.contains("\"dyad_no\""), "{manifest}");
    assert!(manifest.contains("\"Time(s)\""), "{manifest}");
}

#[test]
fn an_unmapped_time_column_is_one_problem_naming_what_the_files_have() {
    let s = lab_study();
    s.edit("study.toml", |t| {
        t.replace("time_column = \"Time(s)\"\n", "")
    });
    let o = s.check();
    assert_fails_with(
        &o,
        &[
            "1 problem(s)",
            "16 files (",
            "no `time` column",
            "columns found: `Time(s)`, `S1-D1 HbO`",
            "time_column = \"Time(s)\"",
        ],
    );
    assert_eq!(stderr(&o).matches("no `time` column").count(), 1);
}

#[test]
fn channel_columns_differing_only_in_case_are_one_problem_that_says_so() {
    let s = TempStudy::new();
    let recordings: Vec<_> = std::fs::read_dir(s.path("recordings"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    for path in &recordings {
        let text = std::fs::read_to_string(path).unwrap();
        let (header, body) = text.split_once('\n').unwrap();
        let header = header
            .split(',')
            .map(|h| match h.split_once('.') {
                Some((ch, chrom)) => {
                    let label = if chrom == "hbo" { "HbO" } else { "HbR" };
                    format!("{}.{label}", lab_channel(ch))
                }
                None => h.to_string(),
            })
            .collect::<Vec<_>>()
            .join(",");
        std::fs::write(path, format!("{header}\n{body}")).unwrap();
    }
    s.edit("channels.tsv", |t| {
        let mut out = String::new();
        for (i, line) in t.lines().enumerate() {
            match line.split_once('\t') {
                Some((ch, roi)) if i > 0 => out.push_str(&format!("{}\t{roi}\n", lab_channel(ch))),
                _ => out.push_str(&format!("{line}\n")),
            }
        }
        out
    });
    s.edit("quality.tsv", |t| {
        let mut out = String::new();
        for (i, line) in t.lines().enumerate() {
            let cells: Vec<&str> = line.split('\t').collect();
            match i {
                0 => out.push_str(&format!("{line}\n")),
                _ => out.push_str(&format!(
                    "{}\t{}\t{}\n",
                    cells[0],
                    lab_channel(cells[1]),
                    cells[2]
                )),
            }
        }
        out
    });
    let o = s.check();
    assert_fails_with(
        &o,
        &[
            "1 problem(s)",
            "16 files (",
            "12 channel columns are missing: `S1-D1.hbo`",
            "differ only in case or separators (`S1-D1.HbO` for `S1-D1.hbo`)",
            "chromophore_labels",
        ],
    );
}

#[test]
fn a_misspelt_mapped_column_names_what_the_table_has() {
    let s = lab_study();
    s.edit("study.toml", |t| {
        t.replace("dyad = \"dyad_no\"", "dyad = \"dyad_nr\"")
    });
    let o = s.check();
    assert_fails_with(
        &o,
        &[
            "participants.csv",
            "missing column `dyad_nr` (nevermet's `dyad`, as mapped in [inputs.columns])",
            "the nearest is `dyad_no`",
            "schedule.csv",
        ],
    );
    // The one cause, once per table: no follow-on error about unknown dyads or events.
    assert!(!stderr(&o).contains("unknown dyad"), "{}", stderr(&o));
    assert!(stderr(&o).contains("2 problem(s)"), "{}", stderr(&o));
}

#[test]
fn a_recording_pattern_placeholder_must_be_a_members_column() {
    let s = lab_study();
    s.edit("study.toml", |t| {
        t.replace("{participant}_session", "{pid}_session")
    });
    assert_fails_with(
        &s.check(),
        &[
            "participants.csv",
            "names `{pid}`, which is not a column of the members table",
            "did you mean `{participant}`?",
        ],
    );
}

#[test]
fn a_label_in_another_case_than_the_listed_conditions_fails() {
    let s = lab_study();
    s.edit("schedule.csv", |t| {
        t.lines()
            .map(|l| {
                if l.starts_with("t03,joint") {
                    l.replacen("joint", "Joint", 1)
                } else {
                    l.to_string()
                }
            })
            .collect::<Vec<_>>()
            .join("\n")
            + "\n"
    });
    let o = s.check();
    assert_fails_with(
        &o,
        &[
            "schedule.csv",
            "column condition",
            "condition \"Joint\" (rows",
            "dyad t03)",
            "is the expected condition \"joint\" written differently",
        ],
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(!stdout(&o).contains("valid"), "{}", stdout(&o));
    let out = s.dir.path().join("out");
    let r = s.run_into(&out, &[]);
    assert_eq!(r.status.code(), Some(2), "{}", stderr(&r));
    assert!(!out.exists() || std::fs::read_dir(&out).unwrap().next().is_none());
}

/// The configs/ example of a mapped study parses, and names every key this test maps.
#[test]
fn the_mapped_example_config_parses() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("configs/mapped.toml");
    let text = std::fs::read_to_string(&path).unwrap();
    let c = nevermet::study::config::parse_config(&text, &path, "x").unwrap();
    assert_eq!(c.inputs.columns.in_files("dyad"), "dyad_no");
    assert_eq!(c.inputs.recording_format.time_column, "Time(s)");
    assert_eq!(
        c.inputs.recording_pattern.as_deref(),
        Some("{participant}_session1.csv")
    );
    let o = nevermet(&["check", path.to_str().unwrap()]);
    // The example's tables do not exist: the error names the first one, not a config key.
    assert_fails_with(&o, &["participants.csv: file not found"]);
}
