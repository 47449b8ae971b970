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
            place.push(format!("t = {t} s"));
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
