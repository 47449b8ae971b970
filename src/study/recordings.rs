//! Recording files → per-member signals on a checked, uniform time axis.
//!
//! A recording is wide: a time column in seconds, then one column per channel and chromophore,
//! named as `[inputs.recording_format]` says (`time` and `<channel>.<chromophore>` by default).
//! Only the channels of the channels table and the configured chromophores are kept. A column
//! that is entirely empty marks a bad channel; a NaN inside an analysis window is checked later,
//! once the windows are known. Files are read in parallel, problems merged in member order, and
//! a problem every file shares (a misnamed time column) is reported once with its files.

use std::path::{Path, PathBuf};

use rayon::prelude::*;

use super::layout::RecordingFormat;
use super::names::{self, Nearest};
use super::problem::{Problem, Problems, merge_across_files};
use super::tables::{Channel, Member};
use crate::table::{RawColumn, RawTable, read_numeric_table};

/// Allowed deviation of one sampling interval from the recording's typical interval.
pub const SAMPLING_TOLERANCE: f64 = 0.01;

/// One member's signals.
#[derive(Clone, Debug, PartialEq)]
pub struct Recording {
    pub path: PathBuf,
    pub t0: f64,
    pub dt: f64,
    pub n: usize,
    /// `signals[channel * n_chromophores + chromophore]`; `None` when the column is entirely empty.
    pub signals: Vec<Option<Vec<f64>>>,
}

impl Recording {
    pub fn t_end(&self) -> f64 {
        self.t0 + (self.n.saturating_sub(1)) as f64 * self.dt
    }

    pub fn time_of(&self, i: usize) -> f64 {
        self.t0 + i as f64 * self.dt
    }
}

/// Where the recordings are and how their columns are named.
pub struct Source<'a> {
    pub members_file: &'a Path,
    pub folder: &'a Path,
    /// `[inputs] recording_pattern`, when it names the files instead of a `recording` column.
    pub pattern: Option<&'a str>,
    /// The members table's `recording` column as the file writes it.
    pub recording_column: &'a str,
    pub format: &'a RecordingFormat,
}

/// Reads every member's recording. Returns one entry per member (`None` when unreadable).
pub fn read_all(
    members: &[Member],
    source: &Source,
    channels: &[Channel],
    chromophores: &[String],
    problems: &mut Problems,
) -> Vec<Option<Recording>> {
    let results: Vec<(Option<Recording>, Problems)> = members
        .par_iter()
        .map(|m| {
            let mut p = Problems::default();
            let rec = read_one(m, source, channels, chromophores, &mut p);
            (rec, p)
        })
        .collect();
    let mut out = Vec::with_capacity(results.len());
    let mut found = Vec::new();
    for (rec, p) in results {
        found.extend(p.0);
        out.push(rec);
    }
    problems.0.extend(merge_across_files(found));
    out
}

fn read_one(
    m: &Member,
    source: &Source,
    channels: &[Channel],
    chromophores: &[String],
    problems: &mut Problems,
) -> Option<Recording> {
    let path = source.folder.join(&m.recording);
    if !path.is_file() {
        let mut p = Problem::in_file(
            source.members_file,
            format!("recording file not found: {}", path.display()),
        )
        .row(m.row)
        .member(&m.id);
        p = match source.pattern {
            Some(pattern) => p.hint(format!(
                "the name comes from [inputs] recording_pattern = \"{pattern}\", relative to [inputs] recordings"
            )),
            None => p
                .column(source.recording_column)
                .hint("paths in the members table are relative to [inputs] recordings"),
        };
        problems.push(p);
        return None;
    }
    let table = match read_numeric_table(&path) {
        Ok(t) => t,
        Err(e) => {
            problems.push(Problem::new(e.to_string()).member(&m.id));
            return None;
        }
    };
    let time_name = source.format.time_column.as_str();
    let Some(time_col) = table.column(time_name) else {
        problems.push(
            Problem::in_file(&path, format!("no `{time_name}` column"))
                .member(&m.id)
                .hint(time_hint(time_name, &table.headers)),
        );
        return None;
    };
    let time = numbers(&table, time_name, time_col, problems)?;
    let (t0, dt) = check_time(&path, time_name, &time, problems)?;
    let mut signals = Vec::with_capacity(channels.len() * chromophores.len());
    let mut missing: Vec<String> = Vec::new();
    let mut ok = true;
    for ch in channels {
        for chrom in chromophores {
            let name = source.format.column(&ch.name, chrom);
            match table.column(&name) {
                None => missing.push(name),
                Some(col) => match numbers(&table, &name, col, problems) {
                    None => ok = false,
                    Some(values) => {
                        let all_missing = values.iter().all(|v| v.is_nan());
                        signals.push(if all_missing { None } else { Some(values) });
                    }
                },
            }
        }
    }
    if !missing.is_empty() {
        problems.push(missing_channels(&path, &missing, &table.headers).member(&m.id));
        ok = false;
    }
    ok.then_some(Recording {
        path,
        t0,
        dt,
        n: time.len(),
        signals,
    })
}

/// What the file has instead of the time column, and the key that names it.
fn time_hint(wanted: &str, headers: &[String]) -> String {
    let list = names::found_list(headers, 8);
    let set = "[inputs.recording_format] time_column";
    match names::nearest_name(wanted, headers) {
        Some(Nearest::Spelling(f) | Nearest::Close(f)) => {
            format!("{list}; if `{f}` is the time in seconds, set {set} = \"{f}\" in study.toml")
        }
        None => format!("{list}; name the time column (seconds) with {set} in study.toml"),
    }
}

/// One problem for every channel column a file lacks: which ones, what the file has, and,
/// when the file's names differ only in case or separators, which key maps them.
fn missing_channels(path: &Path, missing: &[String], headers: &[String]) -> Problem {
    let quoted: Vec<String> = missing.iter().take(6).map(|c| format!("`{c}`")).collect();
    let more = if missing.len() > 6 {
        format!(" and {} more", missing.len() - 6)
    } else {
        String::new()
    };
    let message = match missing {
        [one] => format!("channel column `{one}` is missing"),
        _ => format!(
            "{} channel columns are missing: {}{more}",
            missing.len(),
            quoted.join(", ")
        ),
    };
    let mut near: Vec<(String, String)> = Vec::new();
    let mut spelling = true;
    for c in missing {
        match names::nearest_name(c, headers) {
            Some(Nearest::Spelling(f)) => near.push((c.clone(), f.to_string())),
            Some(Nearest::Close(f)) => {
                spelling = false;
                near.push((c.clone(), f.to_string()));
            }
            None => spelling = false,
        }
    }
    let list = names::found_list(headers, 8);
    let hint = match near.first() {
        Some((want, have)) if spelling && near.len() == missing.len() => format!(
            "{list}; the file's names differ only in case or separators (`{have}` for `{want}`): set [inputs.recording_format] column_pattern and chromophore_labels in study.toml to match them"
        ),
        Some((want, have)) => format!(
            "{list}; the nearest to `{want}` is `{have}`; every channel of the channels table needs one column per chromophore (leave it empty to mark a bad channel)"
        ),
        None => format!(
            "{list}; every channel of the channels table needs one column per chromophore (leave it empty to mark a bad channel); [inputs.recording_format] column_pattern names them"
        ),
    };
    Problem::in_file(path, message).hint(hint)
}

/// The column as numbers, empty cells as NaN; text in a cell is a problem (first one named,
/// the rest counted, so a wrong file does not flood the report).
fn numbers(
    table: &RawTable,
    name: &str,
    col: &RawColumn,
    problems: &mut Problems,
) -> Option<Vec<f64>> {
    match col {
        RawColumn::Number(v) => Some(v.iter().map(|x| x.unwrap_or(f64::NAN)).collect()),
        RawColumn::Text(v) => {
            let mut out = Vec::with_capacity(v.len());
            let mut bad: Option<(usize, String)> = None;
            let mut n_bad = 0usize;
            for (i, cell) in v.iter().enumerate() {
                match cell {
                    None => out.push(f64::NAN),
                    Some(s) => match s.parse::<f64>() {
                        Ok(x) => out.push(x),
                        Err(_) => {
                            n_bad += 1;
                            if bad.is_none() {
                                bad = Some((i + 1, s.clone()));
                            }
                            out.push(f64::NAN);
                        }
                    },
                }
            }
            match bad {
                None => Some(out),
                Some((row, text)) => {
                    let more = if n_bad > 1 {
                        format!(" ({} more such cells in this column)", n_bad - 1)
                    } else {
                        String::new()
                    };
                    problems.push(
                        Problem::in_file(
                            &table.path,
                            format!("text \"{text}\" in a numeric column{more}"),
                        )
                        .row(row)
                        .column(name),
                    );
                    None
                }
            }
        }
    }
}

/// Checks the time axis: strictly increasing, uniform within [`SAMPLING_TOLERANCE`].
fn check_time(
    path: &Path,
    column: &str,
    time: &[f64],
    problems: &mut Problems,
) -> Option<(f64, f64)> {
    if time.len() < 2 {
        problems.push(
            Problem::in_file(
                path,
                format!(
                    "only {} sample(s); a recording needs at least two",
                    time.len()
                ),
            )
            .column(column),
        );
        return None;
    }
    if let Some(i) = time.iter().position(|t| t.is_nan()) {
        problems.push(
            Problem::in_file(path, "empty time value")
                .row(i + 1)
                .column(column),
        );
        return None;
    }
    for i in 1..time.len() {
        if time[i] <= time[i - 1] {
            problems.push(
                Problem::in_file(
                    path,
                    format!(
                        "time is not increasing ({} s follows {} s)",
                        time[i],
                        time[i - 1]
                    ),
                )
                .row(i + 1)
                .column(column),
            );
            return None;
        }
    }
    let diffs: Vec<f64> = time.windows(2).map(|w| w[1] - w[0]).collect();
    let n = diffs.len();
    let dt_median = {
        let mut sorted = diffs.clone();
        sorted.sort_by(f64::total_cmp);
        sorted[n / 2]
    };
    for (i, d) in diffs.iter().enumerate() {
        if (d - dt_median).abs() > SAMPLING_TOLERANCE * dt_median {
            problems.push(
                Problem::in_file(
                    path,
                    format!(
                        "irregular sampling: interval of {} s where the recording's interval is {} s (more than {}% off)",
                        crate::human::trimmed(*d, 6),
                        crate::human::trimmed(dt_median, 6),
                        SAMPLING_TOLERANCE * 100.0
                    ),
                )
                .row(i + 2)
                .column(column)
                .time(time[i + 1])
                .hint("gaps and jitter must be repaired (interpolated) before analysis"),
            );
            return None;
        }
    }
    // The interval used is the mean over the whole file: it maps sample index to time exactly at
    // both ends, where a median would drift on long recordings.
    let dt = (time[n] - time[0]) / n as f64;
    Some((time[0], dt))
}
