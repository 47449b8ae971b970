//! Problems found while loading a study, and the list that collects them.
//!
//! Validation never stops at the first problem: every check pushes into a [`Problems`] list and
//! the loader fails once at the end, so a researcher fixes a study in one pass. Each problem
//! names its place (file, row, column, dyad, member, time) so an editor can jump there.

use std::fmt;
use std::path::{Path, PathBuf};

/// One thing wrong with the inputs, with where it is and how to fix it.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Problem {
    pub file: Option<PathBuf>,
    /// The same problem in several files, reported once (see [`merge_across_files`]).
    pub files: Vec<PathBuf>,
    /// 1-based data row (the header is not counted); the file line is `row + 1`.
    pub row: Option<usize>,
    pub column: Option<String>,
    pub dyad: Option<String>,
    pub member: Option<String>,
    pub time: Option<f64>,
    pub message: String,
    pub hint: Option<String>,
}

impl Problem {
    pub fn new(message: impl Into<String>) -> Self {
        Problem {
            message: message.into(),
            ..Problem::default()
        }
    }

    pub fn in_file(file: &Path, message: impl Into<String>) -> Self {
        Problem::new(message).file(file)
    }

    pub fn file(mut self, file: &Path) -> Self {
        self.file = Some(file.to_path_buf());
        self
    }

    pub fn row(mut self, row: usize) -> Self {
        self.row = Some(row);
        self
    }

    pub fn column(mut self, column: impl Into<String>) -> Self {
        self.column = Some(column.into());
        self
    }

    pub fn dyad(mut self, dyad: impl Into<String>) -> Self {
        self.dyad = Some(dyad.into());
        self
    }

    pub fn member(mut self, member: impl Into<String>) -> Self {
        self.member = Some(member.into());
        self
    }

    pub fn time(mut self, time: f64) -> Self {
        self.time = Some(time);
        self
    }

    pub fn hint(mut self, hint: impl Into<String>) -> Self {
        self.hint = Some(hint.into());
        self
    }
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let mut place = Vec::new();
        if let Some(file) = &self.file {
            place.push(file.display().to_string());
        }
        if !self.files.is_empty() {
            const SHOWN: usize = 10;
            let names: Vec<String> = self
                .files
                .iter()
                .take(SHOWN)
                .map(|f| f.display().to_string())
                .collect();
            let more = if self.files.len() > SHOWN {
                format!(" and {} more", self.files.len() - SHOWN)
            } else {
                String::new()
            };
            place.push(format!(
                "{} files ({}{more})",
                self.files.len(),
                names.join(", ")
            ));
        }
        if let Some(row) = self.row {
            place.push(format!("row {row} (line {})", row + 1));
        }
        if let Some(col) = &self.column {
            place.push(format!("column {col}"));
        }
        if let Some(d) = &self.dyad {
            place.push(format!("dyad {d}"));
        }
        if let Some(m) = &self.member {
            place.push(format!("member {m}"));
        }
        if let Some(t) = self.time {
            // Rounded to a microsecond: a time computed as t0 + i·dt has a binary-float tail.
            place.push(format!("t = {} s", crate::human::trimmed(t, 6)));
        }
        if !place.is_empty() {
            write!(f, "{}: ", place.join(", "))?;
        }
        write!(f, "{}", self.message)?;
        if let Some(h) = &self.hint {
            write!(f, "; {h}")?;
        }
        Ok(())
    }
}

/// Every problem found so far.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Problems(pub Vec<Problem>);

impl Problems {
    pub fn push(&mut self, p: Problem) {
        self.0.push(p);
    }

    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    pub fn len(&self) -> usize {
        self.0.len()
    }

    pub fn iter(&self) -> impl Iterator<Item = &Problem> {
        self.0.iter()
    }
}

impl fmt::Display for Problems {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for p in &self.0 {
            writeln!(f, "  - {p}")?;
        }
        Ok(())
    }
}

/// Problems that differ only in their file (and member) become one problem listing the files,
/// so one cause repeated in every recording is read once. Order: first appearance.
pub fn merge_across_files(list: Vec<Problem>) -> Vec<Problem> {
    let mut out: Vec<Problem> = Vec::new();
    for p in list {
        if p.file.is_none() {
            out.push(p);
            continue;
        }
        let found = out.iter_mut().find(|q| {
            (q.file.is_some() || !q.files.is_empty())
                && q.file != p.file
                && !q.files.contains(p.file.as_ref().expect("checked"))
                && q.message == p.message
                && q.hint == p.hint
                && q.row == p.row
                && q.column == p.column
                && q.time == p.time
                && q.dyad == p.dyad
        });
        match found {
            Some(q) => {
                if let Some(f) = q.file.take() {
                    q.files.push(f);
                    q.member = None;
                }
                q.files.extend(p.file);
            }
            None => out.push(p),
        }
    }
    out
}

/// The error a failed load returns: the summary it could still build, and every problem.
#[derive(Debug, thiserror::Error)]
#[error("{} problem(s) in the study:\n{problems}", problems.len())]
pub struct StudyError {
    pub problems: Problems,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_problem_in_many_files_is_reported_once() {
        let each = |f: &str, m: &str| {
            Problem::in_file(Path::new(f), "no `time` column")
                .member(m)
                .hint("columns found: `Time(s)`")
        };
        let merged = merge_across_files(vec![
            each("a.csv", "d1:p1"),
            each("b.csv", "d1:p2"),
            Problem::in_file(Path::new("a.csv"), "something else"),
            each("c.csv", "d2:p3"),
        ]);
        assert_eq!(merged.len(), 2);
        assert_eq!(
            merged[0].to_string(),
            "3 files (a.csv, b.csv, c.csv): no `time` column; columns found: `Time(s)`"
        );
        assert_eq!(merged[1].to_string(), "a.csv: something else");
    }

    #[test]
    fn display_names_place_problem_and_fix() {
        let p = Problem::in_file(
            Path::new("recordings/d07-b.csv"),
            "NaN in block 2 of \"joint\"",
        )
        .row(412)
        .column("pfc3.hbo")
        .time(183.4)
        .hint("mark the channel bad in quality.tsv or repair the file");
        assert_eq!(
            p.to_string(),
            "recordings/d07-b.csv, row 412 (line 413), column pfc3.hbo, t = 183.4 s: NaN in block 2 \
             of \"joint\"; mark the channel bad in quality.tsv or repair the file"
        );
    }
}
