//! How a lab's own tables and exports map onto nevermet's names: `[inputs.columns]` (a column
//! of ours = the name in the lab's tables), `[inputs] recording_pattern` (a recording's file
//! name built from members-table columns) and `[inputs.recording_format]` (the time column and
//! how channel columns are named). With none of them, the plain layout of the README applies.
//!
//! This module holds the resolved settings and the small pattern language they share; the
//! tables and recordings readers apply them, so that everything after loading sees only
//! nevermet's own names and a mapped study is analysed exactly like a plain one.

use std::collections::BTreeMap;

use serde::Serialize;

/// Column names of nevermet's tables that a study may map, with the tables that have them.
pub const MAPPABLE: &[(&str, &[Table])] = &[
    ("dyad", &[Table::Members, Table::Events]),
    ("role", &[Table::Members]),
    ("participant", &[Table::Members, Table::Quality]),
    ("recording", &[Table::Members, Table::Quality]),
    ("onset", &[Table::Events]),
    ("duration", &[Table::Events]),
    ("trial_type", &[Table::Events]),
    ("channel", &[Table::Channels, Table::Quality]),
    ("roi", &[Table::Channels]),
    ("status", &[Table::Quality]),
];

/// The input tables, for deciding which mapped names apply where.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Table {
    Members,
    Events,
    Channels,
    Quality,
}

/// `[inputs.columns]`: nevermet's column name → the name in the study's tables. Only the
/// names written in study.toml are kept; any other column keeps its own name.
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
#[serde(transparent)]
pub struct ColumnMap(pub BTreeMap<String, String>);

impl ColumnMap {
    /// The name a column of ours has in the study's files.
    pub fn in_files<'a>(&'a self, ours: &'a str) -> &'a str {
        self.0.get(ours).map_or(ours, String::as_str)
    }

    /// The (ours, theirs) pairs that apply to one table.
    pub fn for_table(&self, table: Table) -> Vec<(&str, &str)> {
        MAPPABLE
            .iter()
            .filter(|(_, tables)| tables.contains(&table))
            .filter_map(|(ours, _)| {
                self.0
                    .get_key_value(*ours)
                    .map(|(k, v)| (k.as_str(), v.as_str()))
            })
            .collect()
    }
}

/// `[inputs.recording_format]`: how a recording names its time column and its channel columns.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct RecordingFormat {
    pub time_column: String,
    /// With the placeholders `{channel}` and `{chromophore}`.
    pub column_pattern: String,
    /// Chromophore (`hbo`, `hbr`, `hbt`) → how the files write it.
    pub chromophore_labels: BTreeMap<String, String>,
}

/// The plain layout's column pattern.
pub const DEFAULT_COLUMN_PATTERN: &str = "{channel}.{chromophore}";
/// The plain layout's time column.
pub const DEFAULT_TIME_COLUMN: &str = "time";

impl Default for RecordingFormat {
    fn default() -> Self {
        RecordingFormat {
            time_column: DEFAULT_TIME_COLUMN.to_string(),
            column_pattern: DEFAULT_COLUMN_PATTERN.to_string(),
            chromophore_labels: BTreeMap::new(),
        }
    }
}

impl RecordingFormat {
    /// The column of one channel and chromophore in a recording file.
    pub fn column(&self, channel: &str, chromophore: &str) -> String {
        let label = self
            .chromophore_labels
            .get(chromophore)
            .map_or(chromophore, String::as_str);
        self.column_pattern
            .replace("{channel}", channel)
            .replace("{chromophore}", label)
    }

    /// True for the plain layout's `<channel>.<chromophore>`, where a dot in a channel name
    /// would make column names ambiguous to a reader of the file.
    pub fn is_plain(&self) -> bool {
        self.column_pattern == DEFAULT_COLUMN_PATTERN
    }
}

/// One piece of a pattern such as `{participant}_session1.csv`.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Piece {
    Text(String),
    Field(String),
}

/// Splits a pattern into literal text and `{field}` placeholders; an unbalanced brace or an
/// empty placeholder is an error message.
pub fn parse_pattern(pattern: &str) -> Result<Vec<Piece>, String> {
    let mut pieces = Vec::new();
    let mut rest = pattern;
    while let Some(open) = rest.find(['{', '}']) {
        if rest[open..].starts_with('}') {
            return Err(format!("a `}}` without its `{{` in \"{pattern}\""));
        }
        if open > 0 {
            pieces.push(Piece::Text(rest[..open].to_string()));
        }
        let after = &rest[open + 1..];
        let Some(close) = after.find('}') else {
            return Err(format!("a `{{` without its `}}` in \"{pattern}\""));
        };
        let name = after[..close].trim();
        if name.is_empty() || name.contains('{') {
            return Err(format!("an empty or nested placeholder in \"{pattern}\""));
        }
        pieces.push(Piece::Field(name.to_string()));
        rest = &after[close + 1..];
    }
    if !rest.is_empty() {
        pieces.push(Piece::Text(rest.to_string()));
    }
    Ok(pieces)
}

/// The placeholders of a parsed pattern, in order.
pub fn fields(pieces: &[Piece]) -> Vec<&str> {
    pieces
        .iter()
        .filter_map(|p| match p {
            Piece::Field(f) => Some(f.as_str()),
            Piece::Text(_) => None,
        })
        .collect()
}

/// Fills a parsed pattern; `Err(field)` names the first placeholder that has no value.
pub fn fill(pieces: &[Piece], value: impl Fn(&str) -> Option<String>) -> Result<String, String> {
    let mut out = String::new();
    for p in pieces {
        match p {
            Piece::Text(t) => out.push_str(t),
            Piece::Field(f) => out.push_str(&value(f).ok_or_else(|| f.clone())?),
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn patterns_split_into_text_and_fields() {
        let p = parse_pattern("{participant}_session{session}.csv").unwrap();
        assert_eq!(
            p,
            vec![
                Piece::Field("participant".into()),
                Piece::Text("_session".into()),
                Piece::Field("session".into()),
                Piece::Text(".csv".into()),
            ]
        );
        assert_eq!(fields(&p), vec!["participant", "session"]);
        let filled = fill(&p, |f| {
            Some(if f == "participant" { "p07" } else { "2" }.into())
        });
        assert_eq!(filled.unwrap(), "p07_session2.csv");
        assert_eq!(fill(&p, |_| None).unwrap_err(), "participant");
        assert!(parse_pattern("{participant_session1.csv").is_err());
        assert!(parse_pattern("participant}.csv").is_err());
        assert!(parse_pattern("{}.csv").is_err());
    }

    #[test]
    fn channel_columns_follow_the_pattern_and_labels() {
        let plain = RecordingFormat::default();
        assert_eq!(plain.column("pf1", "hbo"), "pf1.hbo");
        assert!(plain.is_plain());
        let lab = RecordingFormat {
            time_column: "Time(s)".into(),
            column_pattern: "{channel} {chromophore}".into(),
            chromophore_labels: [("hbo".to_string(), "HbO".to_string())].into(),
        };
        assert_eq!(lab.column("S1-D1", "hbo"), "S1-D1 HbO");
        // A chromophore without a label is written as nevermet names it.
        assert_eq!(lab.column("S1-D1", "hbr"), "S1-D1 hbr");
    }

    #[test]
    fn a_mapped_name_applies_only_to_the_tables_that_have_the_column() {
        let map = ColumnMap(
            [
                ("dyad".to_string(), "dyad_no".to_string()),
                ("onset".to_string(), "start_s".to_string()),
            ]
            .into(),
        );
        assert_eq!(map.for_table(Table::Members), vec![("dyad", "dyad_no")]);
        assert_eq!(
            map.for_table(Table::Events),
            vec![("dyad", "dyad_no"), ("onset", "start_s")]
        );
        assert!(map.for_table(Table::Channels).is_empty());
        assert_eq!(map.in_files("onset"), "start_s");
        assert_eq!(map.in_files("roi"), "roi");
    }
}
