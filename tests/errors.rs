//! Every class of bad input: a valid study broken in one place must fail `check` with a
//! message that names the file and the offending key, column, row, dyad or value.

use crate::util::{TempStudy, assert_fails_with, stderr, stdout};

#[test]
fn the_valid_base_passes() {
    let s = TempStudy::new();
    let o = s.check();
    assert!(o.status.success(), "{}", stderr(&o));
    let out = stdout(&o);
    assert!(out.contains("dyads          8"), "{out}");
    assert!(out.contains("the study is valid"));
}

#[test]
fn missing_file_is_named() {
    let s = TempStudy::new();
    std::fs::remove_file(s.path("channels.tsv")).unwrap();
    assert_fails_with(&s.check(), &["channels.tsv: file not found"]);
}

#[test]
fn missing_required_column_is_named() {
    let s = TempStudy::new();
    s.set_line("events.tsv", 0, "dyad\tonset\tlength\ttrial_type");
    assert_fails_with(
        &s.check(),
        &["events.tsv", "missing required column `duration`"],
    );
}

#[test]
fn duplicate_participant_in_a_dyad() {
    let s = TempStudy::new();
    // Row 2 is the first dyad's second member; give it the first member's participant.
    let first_participant = s.cell("members.tsv", 1, 2);
    s.set_cell("members.tsv", 2, 2, &first_participant);
    assert_fails_with(
        &s.check(),
        &[
            "members.tsv",
            "row 2 (line 3)",
            "column participant",
            "duplicate member",
        ],
    );
}

#[test]
fn duplicate_role_in_a_dyad() {
    let s = TempStudy::new();
    s.set_cell("members.tsv", 2, 1, "grandparent");
    assert_fails_with(
        &s.check(),
        &[
            "members.tsv",
            "row 2",
            "column role",
            "role grandparent appears twice",
        ],
    );
}

#[test]
fn recording_not_found() {
    let s = TempStudy::new();
    let rec = s.first_recording();
    std::fs::remove_file(s.path(&rec)).unwrap();
    assert_fails_with(
        &s.check(),
        &[
            "members.tsv",
            "row 1",
            "column recording",
            "recording file not found",
        ],
    );
}

#[test]
fn no_time_column() {
    let s = TempStudy::new();
    let rec = s.first_recording();
    s.edit(&rec, |t| t.replacen("time,", "seconds,", 1));
    assert_fails_with(&s.check(), &[&rec, "no `time` column"]);
}

#[test]
fn non_increasing_time() {
    let s = TempStudy::new();
    let rec = s.first_recording();
    let row3 = s.line(&rec, 3);
    s.set_line(&rec, 4, &row3);
    assert_fails_with(
        &s.check(),
        &[&rec, "row 4 (line 5)", "column time", "not increasing"],
    );
}

#[test]
fn irregular_sampling() {
    let s = TempStudy::new();
    let rec = s.first_recording();
    // Shift one time stamp by 5 % of the 0.5 s interval.
    let t: f64 = s.cell(&rec, 11, 0).parse().unwrap();
    s.set_cell(&rec, 11, 0, &format!("{:.4}", t + 0.025));
    assert_fails_with(&s.check(), &[&rec, "column time", "irregular sampling"]);
}

#[test]
fn sampling_rates_differ() {
    let s = TempStudy::new();
    let rec = s.first_recording();
    // Stretch the whole time axis by 2 %: uniform, but at another rate.
    s.edit(&rec, |t| {
        let mut out = String::new();
        for (i, line) in t.lines().enumerate() {
            if i == 0 {
                out.push_str(line);
            } else {
                let (time, rest) = line.split_once(',').unwrap();
                let v: f64 = time.parse().unwrap();
                out.push_str(&format!("{:.4},{rest}", v * 1.02));
            }
            out.push('\n');
        }
        out
    });
    assert_fails_with(&s.check(), &[&rec, "sampled at 1.9608 Hz", "resample"]);
}

#[test]
fn text_in_a_numeric_column() {
    let s = TempStudy::new();
    let rec = s.first_recording();
    s.set_cell(&rec, 7, 1, "n/a");
    assert_fails_with(
        &s.check(),
        &[&rec, "row 7", "column pf1.hbo", "text \"n/a\""],
    );
}

#[test]
fn text_in_an_events_number() {
    let s = TempStudy::new();
    s.set_cell("events.tsv", 3, 1, "soon");
    assert_fails_with(
        &s.check(),
        &[
            "events.tsv",
            "row 3",
            "column onset",
            "\"soon\" is not a number",
        ],
    );
}

#[test]
fn nan_inside_an_analysis_window() {
    let s = TempStudy::new();
    let rec = s.first_recording();
    // The first block starts after at least 90 s of lead-in; 2 Hz → row 200 is at 99.5 s,
    // inside the first block's window (block plus context).
    s.set_cell(&rec, 200, 3, "NaN");
    assert_fails_with(
        &s.check(),
        &[
            &rec,
            "row 200",
            "column pf2.hbo",
            "t = 99.5 s",
            "NaN in block",
        ],
    );
}

#[test]
fn channel_missing_from_a_recording() {
    let s = TempStudy::new();
    let rec = s.first_recording();
    s.edit(&rec, |t| t.replacen("tp2.hbr", "tp9.hbr", 1));
    assert_fails_with(&s.check(), &[&rec, "channel column `tp2.hbr` is missing"]);
}

#[test]
fn events_naming_an_unknown_dyad() {
    let s = TempStudy::new();
    s.set_cell("events.tsv", 2, 0, "zz99");
    assert_fails_with(
        &s.check(),
        &[
            "events.tsv",
            "row 2",
            "column dyad",
            "unknown dyad \"zz99\"",
        ],
    );
}

#[test]
fn block_running_past_the_end() {
    let s = TempStudy::new();
    s.set_cell("events.tsv", 1, 1, "5000");
    assert_fails_with(
        &s.check(),
        &["events.tsv", "row 1", "runs past the recording"],
    );
}

#[test]
fn zero_or_negative_duration() {
    for bad in ["0", "-3"] {
        let s = TempStudy::new();
        s.set_cell("events.tsv", 2, 2, bad);
        assert_fails_with(
            &s.check(),
            &["events.tsv", "row 2", "column duration", "must be positive"],
        );
    }
}

#[test]
fn empty_events_table() {
    let s = TempStudy::new();
    s.write("events.tsv", "dyad\tonset\tduration\ttrial_type\n");
    assert_fails_with(&s.check(), &["events.tsv", "the events table is empty"]);
}

#[test]
fn contrast_naming_an_unknown_condition() {
    let s = TempStudy::new();
    s.edit("study.toml", |t| {
        t.replace(
            "conditions = [\"joint\", \"parallel\"]",
            "conditions = [\"joint\", \"paralel\"]",
        )
    });
    assert_fails_with(&s.check(), &["study.toml", "unknown condition \"paralel\""]);
}

#[test]
fn band_with_min_not_below_max() {
    let s = TempStudy::new();
    s.edit("study.toml", |t| {
        t.replace("min_period_s = 10", "min_period_s = 60")
    });
    assert_fails_with(
        &s.check(),
        &[
            "study.toml",
            "band \"task\"",
            "must be positive and below max_period_s",
        ],
    );
}

#[test]
fn band_that_the_block_cannot_resolve() {
    let s = TempStudy::new();
    s.edit("study.toml", |t| {
        t.replace("max_period_s = 50", "max_period_s = 400")
    });
    assert_fails_with(
        &s.check(),
        &[
            "study.toml",
            "band \"task\"",
            "cone of influence covers the whole block",
        ],
    );
}

#[test]
fn role_that_no_member_has() {
    let s = TempStudy::new();
    s.edit("study.toml", |t| {
        t.replace(
            "roles = [\"grandparent\", \"child\"]",
            "roles = [\"grandparent\", \"pupil\"]",
        )
    });
    assert_fails_with(&s.check(), &["no member has role \"pupil\""]);
}

#[test]
fn unknown_key_names_section_and_nearest_key() {
    let s = TempStudy::new();
    s.edit("study.toml", |t| t.replace("context_s =", "contxt_s ="));
    assert_fails_with(
        &s.check(),
        &[
            "study.toml",
            "unknown key `contxt_s` in section [synchrony]",
            "did you mean `context_s`?",
        ],
    );
}

#[test]
fn wrong_type_names_key_and_expected_type() {
    let s = TempStudy::new();
    s.edit("study.toml", |t| {
        t.replace("permutations = 10000", "permutations = \"lots\"")
    });
    assert_fails_with(
        &s.check(),
        &["key `inference.permutations` must be an integer"],
    );
}

#[test]
fn every_problem_is_reported_not_only_the_first() {
    let s = TempStudy::new();
    let rec = s.first_recording();
    s.edit(&rec, |t| t.replacen("tp2.hbr", "tp9.hbr", 1));
    s.set_cell("events.tsv", 2, 0, "zz99");
    assert_fails_with(&s.check(), &["tp2.hbr", "zz99", "2 problem(s)"]);
}

#[test]
fn a_member_left_without_admissible_partners_is_named() {
    let s = TempStudy::new();
    // Put every member in one family: keep_apart then forbids every pseudo-pair.
    let rows = s.read("members.tsv").lines().count();
    for line in 1..rows {
        s.set_cell("members.tsv", line, 4, "f-all");
    }
    let o = s.check();
    assert_fails_with(&o, &["keep_apart:family"]);
    let first_member = format!(
        "{}:{}",
        s.cell("members.tsv", 1, 0),
        s.cell("members.tsv", 1, 2)
    );
    assert!(stderr(&o).contains(&first_member), "{}", stderr(&o));
}

#[test]
fn a_closed_stdout_is_not_a_failure() {
    let s = TempStudy::new();
    let mut child = std::process::Command::new(crate::util::bin())
        .args(["check", s.toml().to_str().unwrap()])
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    // Close the reading end before the study is loaded, as `| head -0` would.
    drop(child.stdout.take());
    let out = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(out.status.success(), "{err}");
    assert!(!err.contains("panicked"), "{err}");
}
