//! Tables on disk: the one place that talks to polars.
//!
//! Every table nevermet reads (members, events, channels, quality, recordings) and writes
//! (results, pairs, dyads, synchrony, demo files) goes through here, so the rest of the code
//! handles plain Rust vectors and the file format (TSV, CSV, Parquet) is chosen by extension.
//! Reading keeps text as text: the loader parses numbers itself so that a bad cell can be
//! reported with its file, row and column instead of a generic parser message.

mod plain;

use std::fs::File;
use std::path::{Path, PathBuf};

use polars::prelude::*;

/// A table format, chosen from the file extension.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    Tsv,
    Csv,
    Parquet,
}

impl Format {
    /// The format a path's extension names, if it is one nevermet reads.
    pub fn from_path(path: &Path) -> Option<Format> {
        let ext = path.extension()?.to_str()?.to_ascii_lowercase();
        match ext.as_str() {
            "tsv" => Some(Format::Tsv),
            "csv" => Some(Format::Csv),
            "parquet" => Some(Format::Parquet),
            _ => None,
        }
    }
}

#[derive(Debug, thiserror::Error)]
pub enum TableError {
    #[error("{path}: file not found")]
    NotFound { path: PathBuf },
    #[error("{path}: unsupported extension (use .tsv, .csv or .parquet)")]
    UnknownFormat { path: PathBuf },
    #[error("{path}: cannot read table: {message}")]
    Read { path: PathBuf, message: String },
    #[error("{path}: cannot write table: {message}")]
    Write { path: PathBuf, message: String },
}

/// One column to write. Missing floats are NaN and are written as empty cells (null in Parquet),
/// which R and pandas read as NA.
#[derive(Clone, Debug, PartialEq)]
pub enum ColumnData {
    Text(Vec<String>),
    Float(Vec<f64>),
    Int(Vec<i64>),
    Bool(Vec<bool>),
}

impl ColumnData {
    pub fn len(&self) -> usize {
        match self {
            ColumnData::Text(v) => v.len(),
            ColumnData::Float(v) => v.len(),
            ColumnData::Int(v) => v.len(),
            ColumnData::Bool(v) => v.len(),
        }
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
}

/// An ordered set of named columns of equal length, ready to write.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Table {
    pub columns: Vec<(String, ColumnData)>,
}

impl Table {
    pub fn new() -> Self {
        Table::default()
    }

    pub fn text(mut self, name: &str, values: Vec<String>) -> Self {
        self.columns
            .push((name.to_string(), ColumnData::Text(values)));
        self
    }

    pub fn float(mut self, name: &str, values: Vec<f64>) -> Self {
        self.columns
            .push((name.to_string(), ColumnData::Float(values)));
        self
    }

    pub fn int(mut self, name: &str, values: Vec<i64>) -> Self {
        self.columns
            .push((name.to_string(), ColumnData::Int(values)));
        self
    }

    pub fn boolean(mut self, name: &str, values: Vec<bool>) -> Self {
        self.columns
            .push((name.to_string(), ColumnData::Bool(values)));
        self
    }

    pub fn height(&self) -> usize {
        self.columns.first().map_or(0, |(_, c)| c.len())
    }
}

/// How floats are written to text formats.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct WriteOptions {
    /// Digits after the decimal point; `None` writes the shortest text that reads back exactly.
    pub float_precision: Option<usize>,
}

/// Writes a table in the format its extension names.
pub fn write_table(table: &Table, path: &Path) -> Result<(), TableError> {
    write_table_with(table, path, WriteOptions::default())
}

pub fn write_table_with(
    table: &Table,
    path: &Path,
    options: WriteOptions,
) -> Result<(), TableError> {
    let format = Format::from_path(path).ok_or_else(|| TableError::UnknownFormat {
        path: path.to_path_buf(),
    })?;
    let write_err = |message: String| TableError::Write {
        path: path.to_path_buf(),
        message,
    };
    let mut df = to_frame(table).map_err(|e| write_err(e.to_string()))?;
    let file = File::create(path).map_err(|e| write_err(e.to_string()))?;
    match format {
        Format::Tsv | Format::Csv => {
            let sep = if format == Format::Tsv { b'\t' } else { b',' };
            let mut file = file;
            CsvWriter::new(&mut file)
                .include_header(true)
                .with_separator(sep)
                .with_float_precision(options.float_precision)
                .with_line_terminator("\n".into())
                .finish(&mut df)
                .map_err(|e| write_err(e.to_string()))?;
        }
        Format::Parquet => {
            ParquetWriter::new(file)
                .finish(&mut df)
                .map_err(|e| write_err(e.to_string()))?;
        }
    }
    Ok(())
}

fn to_frame(table: &Table) -> PolarsResult<DataFrame> {
    let height = table.height();
    let mut cols = Vec::with_capacity(table.columns.len());
    for (name, data) in &table.columns {
        let name: PlSmallStr = name.as_str().into();
        let col = match data {
            ColumnData::Text(v) => {
                // An empty string is written as an empty cell, not as `""`.
                let opt: Vec<Option<&str>> = v
                    .iter()
                    .map(|x| (!x.is_empty()).then_some(x.as_str()))
                    .collect();
                Column::new(name, opt)
            }
            ColumnData::Float(v) => {
                let opt: Vec<Option<f64>> = v
                    .iter()
                    .map(|x| if x.is_nan() { None } else { Some(*x) })
                    .collect();
                Column::new(name, opt)
            }
            ColumnData::Int(v) => Column::new(name, v.as_slice()),
            ColumnData::Bool(v) => Column::new(name, v.as_slice()),
        };
        cols.push(col);
    }
    DataFrame::new(height, cols)
}

/// A column as read: text tables give text, Parquet numeric columns give numbers.
#[derive(Clone, Debug, PartialEq)]
pub enum RawColumn {
    Text(Vec<Option<String>>),
    Number(Vec<Option<f64>>),
}

impl RawColumn {
    pub fn len(&self) -> usize {
        match self {
            RawColumn::Text(v) => v.len(),
            RawColumn::Number(v) => v.len(),
        }
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// The cell as text (numbers printed); `None` for an empty cell.
    pub fn text(&self, row: usize) -> Option<String> {
        match self {
            RawColumn::Text(v) => v[row].clone(),
            RawColumn::Number(v) => v[row].map(|x| x.to_string()),
        }
    }
}

/// A table as read from disk, before any validation.
#[derive(Clone, Debug, PartialEq)]
pub struct RawTable {
    pub path: PathBuf,
    pub headers: Vec<String>,
    pub columns: Vec<RawColumn>,
    /// A study's own names for this table's columns, as (nevermet's name, the file's name),
    /// after [`RawTable::map_columns`]; every message names a column as the file writes it.
    pub aliases: Vec<(String, String)>,
}

impl RawTable {
    pub fn height(&self) -> usize {
        self.columns.first().map_or(0, RawColumn::len)
    }

    pub fn column(&self, name: &str) -> Option<&RawColumn> {
        let i = self.headers.iter().position(|h| h == name)?;
        Some(&self.columns[i])
    }

    pub fn has(&self, name: &str) -> bool {
        self.headers.iter().any(|h| h == name)
    }

    /// Gives columns nevermet's names: each (ours, theirs) renames the file's column `theirs`
    /// to `ours`. Returns the mapped names that clash with a column of the file already
    /// called `ours` (neither is renamed then, so nothing is read from the wrong column).
    pub fn map_columns(&mut self, pairs: &[(&str, &str)]) -> Vec<(String, String)> {
        let mut clashes = Vec::new();
        for (ours, theirs) in pairs {
            if ours != theirs && self.has(ours) && self.has(theirs) {
                clashes.push((ours.to_string(), theirs.to_string()));
                continue;
            }
            self.aliases.push((ours.to_string(), theirs.to_string()));
            if let Some(h) = self.headers.iter_mut().find(|h| h == theirs) {
                *h = ours.to_string();
            }
        }
        clashes
    }

    /// The name the file gives a column of ours.
    pub fn written_name<'a>(&'a self, ours: &'a str) -> &'a str {
        self.aliases
            .iter()
            .find(|(o, _)| o == ours)
            .map_or(ours, |(_, t)| t.as_str())
    }

    /// The headers as the file writes them.
    pub fn written_headers(&self) -> Vec<String> {
        let mut out = self.headers.clone();
        for h in &mut out {
            if let Some((_, t)) = self.aliases.iter().find(|(o, _)| o == h) {
                *h = t.clone();
            }
        }
        out
    }
}

/// Reads a table in the format its extension names. Text formats are read with every column as
/// text (no type inference), so the caller decides what a number is.
pub fn read_table(path: &Path) -> Result<RawTable, TableError> {
    read_with(path, false)
}

/// As [`read_table`], for tables of numbers (recordings): a text column whose every non-empty
/// cell parses as a number comes back as numbers, without one string per cell; any other
/// column stays text, so the caller can still name the offending cell. A text file of numbers
/// only takes the one-pass path of [`plain`], which holds little more than the numbers.
pub fn read_numeric_table(path: &Path) -> Result<RawTable, TableError> {
    read_with(path, true)
}

fn read_with(path: &Path, numeric: bool) -> Result<RawTable, TableError> {
    if !path.is_file() {
        return Err(TableError::NotFound {
            path: path.to_path_buf(),
        });
    }
    let format = Format::from_path(path).ok_or_else(|| TableError::UnknownFormat {
        path: path.to_path_buf(),
    })?;
    let read_err = |message: String| TableError::Read {
        path: path.to_path_buf(),
        message,
    };
    if numeric && format != Format::Parquet {
        let text = std::fs::read_to_string(path).map_err(|e| read_err(e.to_string()))?;
        let sep = if format == Format::Tsv { '\t' } else { ',' };
        if let Some(t) = plain::parse(&text, sep) {
            return Ok(RawTable {
                path: path.to_path_buf(),
                headers: t.headers,
                columns: t.columns.into_iter().map(RawColumn::Number).collect(),
                aliases: Vec::new(),
            });
        }
    }
    let df = match format {
        Format::Tsv | Format::Csv => {
            let sep = if format == Format::Tsv { b'\t' } else { b',' };
            CsvReadOptions::default()
                .with_has_header(true)
                .with_infer_schema_length(Some(0))
                .with_raise_if_empty(false)
                .map_parse_options(|o| o.with_separator(sep))
                .try_into_reader_with_file_path(Some(path.to_path_buf()))
                .and_then(|r| r.finish())
                .map_err(|e| read_err(e.to_string()))?
        }
        Format::Parquet => {
            let file = File::open(path).map_err(|e| read_err(e.to_string()))?;
            ParquetReader::new(file)
                .finish()
                .map_err(|e| read_err(e.to_string()))?
        }
    };
    from_frame(path, &df, numeric).map_err(|e| read_err(e.to_string()))
}

fn from_frame(path: &Path, df: &DataFrame, numeric: bool) -> PolarsResult<RawTable> {
    let mut headers = Vec::with_capacity(df.width());
    let mut columns = Vec::with_capacity(df.width());
    for col in df.columns() {
        headers.push(col.name().trim().to_string());
        // A strict cast fails on any cell that is not a number; the text path then names it.
        let parsed = (numeric && col.dtype() == &DataType::String)
            .then(|| col.strict_cast(&DataType::Float64).ok())
            .flatten();
        let raw = if let Some(f) = parsed {
            RawColumn::Number(f.f64()?.iter().collect())
        } else if col.dtype().is_primitive_numeric() {
            let f = col.cast(&DataType::Float64)?;
            RawColumn::Number(f.f64()?.iter().collect())
        } else {
            let s = col.cast(&DataType::String)?;
            RawColumn::Text(
                s.str()?
                    .iter()
                    .map(|v| v.map(|x| x.trim().to_string()).filter(|x| !x.is_empty()))
                    .collect(),
            )
        };
        columns.push(raw);
    }
    Ok(RawTable {
        path: path.to_path_buf(),
        headers,
        columns,
        aliases: Vec::new(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample() -> Table {
        Table::new()
            .text("dyad", vec!["a".into(), "b".into()])
            .float("value", vec![0.25, f64::NAN])
            .int("block", vec![1, 2])
            .boolean("real", vec![true, false])
    }

    #[test]
    fn round_trip_in_every_format_gives_the_same_cells() {
        let dir = tempfile::tempdir().unwrap();
        let mut seen = Vec::new();
        for ext in ["tsv", "csv", "parquet"] {
            let path = dir.path().join(format!("t.{ext}"));
            write_table(&sample(), &path).unwrap();
            let raw = read_table(&path).unwrap();
            assert_eq!(raw.headers, vec!["dyad", "value", "block", "real"]);
            let cells: Vec<Vec<Option<String>>> = (0..raw.headers.len())
                .map(|c| (0..raw.height()).map(|r| raw.columns[c].text(r)).collect())
                .collect();
            seen.push(cells);
        }
        assert_eq!(seen[0], seen[1]);
        // Parquet keeps numbers as numbers; the text of each cell still agrees.
        assert_eq!(seen[0][0], seen[2][0]);
        assert_eq!(seen[0][1], seen[2][1]);
        assert_eq!(seen[0][1][1], None, "NaN is written as an empty cell");
    }

    #[test]
    fn tsv_text_is_plain() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("t.tsv");
        write_table(&sample(), &path).unwrap();
        let text = std::fs::read_to_string(&path).unwrap();
        assert_eq!(
            text,
            "dyad\tvalue\tblock\treal\na\t0.25\t1\ttrue\nb\t\t2\tfalse\n"
        );
    }

    #[test]
    fn mapped_columns_take_our_names_and_keep_theirs_for_messages() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("m.csv");
        std::fs::write(&path, "pid,dyad_no,dyad\np1,3,x\n").unwrap();
        let mut raw = read_table(&path).unwrap();
        let clashes = raw.map_columns(&[("participant", "pid"), ("dyad", "dyad_no")]);
        assert_eq!(clashes, vec![("dyad".to_string(), "dyad_no".to_string())]);
        assert_eq!(raw.headers, vec!["participant", "dyad_no", "dyad"]);
        assert_eq!(
            raw.column("participant").unwrap().text(0).as_deref(),
            Some("p1")
        );
        assert_eq!(raw.written_name("participant"), "pid");
        assert_eq!(raw.written_name("role"), "role");
        assert_eq!(raw.written_headers()[0], "pid");
    }

    #[test]
    fn missing_file_is_named() {
        let err = read_table(Path::new("/nonexistent/x.tsv")).unwrap_err();
        assert!(err.to_string().contains("/nonexistent/x.tsv"));
    }

    /// Numbers come back as numbers (empty cells missing); a column with any text stays text
    /// in full, so the caller can name the cell.
    #[test]
    fn numeric_reading_keeps_text_columns_as_text() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("r.csv");
        std::fs::write(&path, "time,a,b\n0,1.5,x\n0.5,,2\n1,-2e-3,3\n").unwrap();
        let raw = read_numeric_table(&path).unwrap();
        match &raw.columns[1] {
            RawColumn::Number(v) => assert_eq!(v, &vec![Some(1.5), None, Some(-0.002)]),
            other => panic!("expected numbers, got {other:?}"),
        }
        match &raw.columns[2] {
            RawColumn::Text(v) => assert_eq!(v[0].as_deref(), Some("x")),
            other => panic!("expected text, got {other:?}"),
        }
    }
}
