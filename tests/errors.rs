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

/// Rewrites the rows of one dyad in the events table through `f` (`None` drops the row).
fn edit_dyad_events(s: &TempStudy, dyad: &str, f: impl Fn(&str) -> Option<String>) {
    s.edit("events.tsv", |t| {
        let mut out = String::new();
        for line in t.lines() {
            let kept = if line.starts_with(&format!("{dyad}\t")) {
                f(line)
            } else {
                Some(line.to_string())
            };
            if let Some(l) = kept {
                out.push_str(&l);
                out.push('\n');
            }
        }
        out
    });
}

#[test]
fn a_condition_label_in_another_case_is_an_error_not_a_new_condition() {
    let s = TempStudy::new();
    edit_dyad_events(&s, "t03", |l| Some(l.replace("\tjoint", "\tJoint")));
    let o = s.check();
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert_fails_with(
        &o,
        &[
            "events.tsv",
            "column trial_type",
            "condition labels \"joint\" (rows 1, 4,",
            "and \"Joint\" (rows 19, 22 and 25; dyad t03)",
            "differ only in case, spaces, hyphens or underscores",
        ],
    );
    assert!(!stdout(&o).contains("valid"), "{}", stdout(&o));
    let out = s.dir.path().join("out");
    let r = s.run_into(&out, &[]);
    assert_eq!(r.status.code(), Some(2), "{}", stderr(&r));
    assert!(stderr(&r).contains("\"Joint\""), "{}", stderr(&r));
}

#[test]
fn a_condition_missing_from_one_dyad_is_an_error_unless_the_study_allows_it() {
    let s = TempStudy::new();
    edit_dyad_events(&s, "t03", |l| {
        (!l.ends_with("\trest")).then(|| l.to_string())
    });
    let o = s.check();
    assert_fails_with(
        &o,
        &[
            "events.tsv",
            "condition \"rest\" (rows",
            "has 3 block(s) in some dyads but fewer in others: dyad t03 has 0",
            "[study] allow_missing_blocks = true",
        ],
    );
    assert!(!stdout(&o).contains("valid"));
    s.edit("study.toml", |t| {
        t.replace(
            "name = \"tower-demo\"",
            "name = \"tower-demo\"\nallow_missing_blocks = true",
        )
        .replace("permutations = 10000", "permutations = 300")
    });
    let o = s.check();
    assert!(o.status.success(), "{}", stderr(&o));
    let summary = stdout(&o);
    assert!(
        summary.contains(
            "allowed        dyad t03 has 0 of the 3 blocks of \"rest\"; its missing blocks are left out (allowed by [study] allow_missing_blocks)"
        ),
        "{summary}"
    );
    let out = s.dir.path().join("out");
    let r = s.run_into(&out, &[]);
    assert!(r.status.success(), "{}", stderr(&r));
    let report = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(
        report.contains("explicitly allowed incomplete or unequal blocks: dyad t03 has 0 of the 3 blocks of &quot;rest&quot;"),
        "methods paragraph lacks the allowance"
    );
    let manifest = std::fs::read_to_string(out.join("manifest.json")).unwrap();
    assert!(manifest.contains("allow_missing_blocks"), "{manifest}");
}

#[test]
fn unequal_block_durations_are_an_error_unless_the_study_allows_them() {
    let s = TempStudy::new();
    // Row 1 is t01's first block of "joint" (30 s); 40 s is a third longer.
    s.set_cell("events.tsv", 1, 2, "40.0");
    assert_fails_with(
        &s.check(),
        &[
            "events.tsv",
            "column duration",
            "block 1 of \"joint\": durations range from 30 s (row 10, dyad t02) to 40 s (row 1, dyad t01)",
            "[study] allow_truncated_blocks = true",
        ],
    );
    s.edit("study.toml", |t| {
        t.replace(
            "name = \"tower-demo\"",
            "name = \"tower-demo\"\nallow_truncated_blocks = true",
        )
    });
    let o = s.check();
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        stdout(&o).contains("(allowed by [study] allow_truncated_blocks)"),
        "{}",
        stdout(&o)
    );
}

#[test]
fn a_misspelt_members_header_is_one_problem_without_follow_on_errors() {
    let s = TempStudy::new();
    s.edit("members.tsv", |t| t.replacen("dyad\t", "dyda\t", 1));
    let o = s.check();
    assert_fails_with(
        &o,
        &[
            "1 problem(s)",
            "members.tsv: missing required column `dyad`",
            "columns found: `dyda`, `role`",
            "the nearest is `dyda`",
            "[inputs.columns] dyad = \"dyda\"",
        ],
    );
    assert!(!stderr(&o).contains("unknown dyad"), "{}", stderr(&o));
}

/// Runs the binary with stdout and stderr both closed before it writes anything, as a
/// reader that stops early (`2>&1 | head -0`) leaves them.
fn with_closed_streams(args: &[&str]) -> std::process::Output {
    let mut child = std::process::Command::new(crate::util::bin())
        .args(args)
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take());
    drop(child.stderr.take());
    child.wait_with_output().unwrap()
}

#[test]
fn closed_stdout_and_stderr_keep_the_documented_exit_codes() {
    let s = TempStudy::new();
    let toml = s.toml();
    let toml = toml.to_str().unwrap();
    // Valid: 0, although neither the summary nor the verdict could be written.
    assert_eq!(with_closed_streams(&["check", toml]).status.code(), Some(0));
    // Invalid: 2, not a panic (101) and not a success.
    edit_dyad_events(&s, "t02", |l| Some(l.replace("\tparallel", "\tParallel")));
    assert_eq!(with_closed_streams(&["check", toml]).status.code(), Some(2));
    let out = s.dir.path().join("out");
    let o = with_closed_streams(&["run", toml, "--out", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    // Only stderr closed, the summary still read: no panic text anywhere, exit 2.
    let mut child = std::process::Command::new(crate::util::bin())
        .args(["check", toml])
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stderr.take());
    let o = child.wait_with_output().unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(stdout(&o).contains("study tower-demo"), "{}", stdout(&o));
    assert!(!stdout(&o).contains("panicked"));
}

#[test]
fn numbers_in_messages_and_the_methods_paragraph_have_no_float_tails() {
    // At 10 Hz the sampling interval is 0.1 s, which no binary float holds exactly.
    let s = TempStudy::with_args(&[
        "--dyads",
        "8",
        "--sampling-hz",
        "10",
        "--rois",
        "1",
        "--block-s",
        "60",
        "--blocks-per-condition",
        "1",
    ]);
    s.edit("study.toml", |t| {
        t.replace("context_s = 90", "context_s = 400")
            .replace("permutations = 10000", "permutations = 200")
            .replace("bootstrap = 2000", "bootstrap = 100")
    });
    let o = s.check();
    assert!(o.status.success(), "{}", stderr(&o));
    let err = stderr(&o);
    let warning = err
        .lines()
        .find(|l| l.contains("context shortened from 400 s to "))
        .unwrap_or_else(|| panic!("no shortened-context warning:\n{err}"));
    let to = warning
        .split("to ")
        .nth(1)
        .and_then(|r| r.split(" s,").next())
        .unwrap();
    let decimals = to.split('.').nth(1).map_or(0, str::len);
    assert!(decimals <= 1, "{warning}");
    assert!(
        stdout(&o).contains("the study is valid, with"),
        "{}",
        stdout(&o)
    );
    let out = s.dir.path().join("out");
    let r = s.run_into(&out, &[]);
    assert!(r.status.success(), "{}", stderr(&r));
    let report = std::fs::read_to_string(out.join("report.html")).unwrap();
    let methods = report
        .split("Interpersonal synchrony was quantified")
        .nth(1)
        .expect("methods paragraph");
    let methods = methods.split("</p>").next().unwrap();
    assert!(methods.contains("1 block of 60 s"), "{methods}");
    assert!(!methods.contains("00000"), "{methods}");
    assert!(!methods.contains("99999"), "{methods}");
}
