//! Recording files → per-member signals on a checked, uniform time axis.
//!
//! A recording is wide: a `time` column in seconds, then `<channel>.<chromophore>` columns.
//! Only the channels of the channels table and the configured chromophores are kept. A column
//! that is entirely empty marks a bad channel; a NaN inside an analysis window is checked later,
//! once the windows are known. Files are read in parallel, problems merged in member order.

use std::path::{Path, PathBuf};

use rayon::prelude::*;

use super::problem::{Problem, Problems};
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

/// Reads every member's recording. Returns one entry per member (`None` when unreadable).
pub fn read_all(
    members: &[Member],
    members_file: &Path,
    folder: &Path,
    channels: &[Channel],
    chromophores: &[String],
    problems: &mut Problems,
) -> Vec<Option<Recording>> {
    let results: Vec<(Option<Recording>, Problems)> = members
        .par_iter()
        .map(|m| {
            let mut p = Problems::default();
            let rec = read_one(m, members_file, folder, channels, chromophores, &mut p);
            (rec, p)
        })
        .collect();
    let mut out = Vec::with_capacity(results.len());
    for (rec, p) in results {
        problems.0.extend(p.0);
        out.push(rec);
    }
    out
}

fn read_one(
    m: &Member,
    members_file: &Path,
    folder: &Path,
    channels: &[Channel],
    chromophores: &[String],
    problems: &mut Problems,
) -> Option<Recording> {
    let path = folder.join(&m.recording);
    if !path.is_file() {
        problems.push(
            Problem::in_file(
                members_file,
                format!("recording file not found: {}", path.display()),
            )
            .row(m.row)
            .column("recording")
            .member(&m.id)
            .hint("paths in the members table are relative to [inputs] recordings"),
        );
        return None;
    }
    let table = match read_numeric_table(&path) {
        Ok(t) => t,
        Err(e) => {
            problems.push(Problem::new(e.to_string()).member(&m.id));
            return None;
        }
    };
    let Some(time_col) = table.column("time") else {
        problems.push(
            Problem::in_file(&path, "no `time` column")
                .member(&m.id)
                .hint("the first column of a recording is `time`, in seconds"),
        );
        return None;
    };
    let time = numbers(&table, "time", time_col, problems)?;
    let (t0, dt) = check_time(&path, &time, problems)?;
    let mut signals = Vec::with_capacity(channels.len() * chromophores.len());
    let mut ok = true;
    for ch in channels {
        for chrom in chromophores {
            let name = format!("{}.{}", ch.name, chrom);
            match table.column(&name) {
                None => {
                    ok = false;
                    problems.push(
                        Problem::in_file(&path, format!("channel column `{name}` is missing"))
                            .member(&m.id)
                            .hint("every channel of the channels table needs one column per chromophore; leave it empty to mark a bad channel"),
                    );
                }
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
    ok.then_some(Recording {
        path,
        t0,
        dt,
        n: time.len(),
        signals,
    })
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
fn check_time(path: &Path, time: &[f64], problems: &mut Problems) -> Option<(f64, f64)> {
    if time.len() < 2 {
        problems.push(
            Problem::in_file(
                path,
                format!(
                    "only {} sample(s); a recording needs at least two",
                    time.len()
                ),
            )
            .column("time"),
        );
        return None;
    }
    if let Some(i) = time.iter().position(|t| t.is_nan()) {
        problems.push(
            Problem::in_file(path, "empty time value")
                .row(i + 1)
                .column("time"),
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
                .column("time"),
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
                        "irregular sampling: interval of {d} s where the recording's interval is {dt_median} s (more than {}% off)",
                        SAMPLING_TOLERANCE * 100.0
                    ),
                )
                .row(i + 2)
                .column("time")
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
