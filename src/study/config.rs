//! `study.toml` → [`Config`]: strict parsing of the study configuration.
//!
//! The file is read as a TOML tree and walked against the schema below rather than handed to a
//! serde derive, because a researcher needs to hear *which* key is unknown, in *which* section,
//! and what they probably meant, and every such mistake at once. Defaults are filled in here so
//! the manifest can record the configuration as it was actually used. This module reads nothing
//! but the TOML text.

use std::collections::BTreeSet;
use std::path::Path;

use serde::Serialize;
use toml::Value;

use super::layout::{self, ColumnMap, RecordingFormat};
use super::problem::{Problem, Problems};
use crate::pairing::Reference;

/// The kinds of value a key may hold, for messages and checks.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Kind {
    Text,
    Number,
    Integer,
    TextList,
    Bool,
    /// A sub-table (`[inputs.columns]`, or an inline `{ hbo = "HbO" }`) with its own keys,
    /// checked as strictly as a section.
    Table(&'static [Key]),
}

impl Kind {
    fn describe(self) -> &'static str {
        match self {
            Kind::Text => "a string",
            Kind::Number => "a number",
            Kind::Integer => "an integer",
            Kind::TextList => "an array of strings",
            Kind::Bool => "true or false",
            Kind::Table(_) => "a table",
        }
    }
}

/// A key of a section or sub-table, and the kind of value it holds.
type Key = (&'static str, Kind);

/// The schema: every section, whether it is an array of tables, and its keys.
/// A section: its name, whether it is an array of tables, and its keys with their kinds.
type Section = (&'static str, bool, &'static [Key]);

/// `[inputs.columns]`: every column name of nevermet's tables that a study may map to its own.
const COLUMN_KEYS: &[Key] = &[
    ("dyad", Kind::Text),
    ("role", Kind::Text),
    ("participant", Kind::Text),
    ("recording", Kind::Text),
    ("onset", Kind::Text),
    ("duration", Kind::Text),
    ("trial_type", Kind::Text),
    ("channel", Kind::Text),
    ("roi", Kind::Text),
    ("status", Kind::Text),
];

/// `chromophore_labels`: how each chromophore is written in the recordings' column names.
const CHROMOPHORE_KEYS: &[Key] = &[
    ("hbo", Kind::Text),
    ("hbr", Kind::Text),
    ("hbt", Kind::Text),
];

/// `[inputs.recording_format]`: how a recording file names its columns.
const RECORDING_FORMAT_KEYS: &[Key] = &[
    ("time_column", Kind::Text),
    ("column_pattern", Kind::Text),
    ("chromophore_labels", Kind::Table(CHROMOPHORE_KEYS)),
];

/// Keys of earlier versions, with what replaced them, so an old study.toml gets a precise
/// message instead of a nearest-key guess.
const RETIRED: &[(&str, &str, &str)] = &[(
    "inference",
    "null_includes_real",
    "replaced by `reference`: \"all\" (the default: re-pairings may keep real pairs) or \"pseudo-only\"",
)];

const SECTIONS: &[Section] = &[
    (
        "study",
        false,
        &[
            ("name", Kind::Text),
            ("description", Kind::Text),
            ("conditions", Kind::TextList),
            ("allow_missing_blocks", Kind::Bool),
            ("allow_truncated_blocks", Kind::Bool),
        ],
    ),
    (
        "inputs",
        false,
        &[
            ("members", Kind::Text),
            ("events", Kind::Text),
            ("channels", Kind::Text),
            ("quality", Kind::Text),
            ("recordings", Kind::Text),
            ("recording_pattern", Kind::Text),
            ("columns", Kind::Table(COLUMN_KEYS)),
            ("recording_format", Kind::Table(RECORDING_FORMAT_KEYS)),
        ],
    ),
    (
        "pairing",
        false,
        &[
            ("mode", Kind::Text),
            ("roles", Kind::TextList),
            ("keep_apart", Kind::TextList),
            ("pair_within", Kind::TextList),
        ],
    ),
    (
        "synchrony",
        false,
        &[
            ("measure", Kind::Text),
            ("chromophores", Kind::TextList),
            ("channel_pairs", Kind::Text),
            ("omega0", Kind::Number),
            ("scales_per_octave", Kind::Integer),
            ("context_s", Kind::Number),
            ("time_grid", Kind::Text),
            ("min_channels_per_roi", Kind::Integer),
        ],
    ),
    (
        "bands",
        true,
        &[
            ("name", Kind::Text),
            ("min_period_s", Kind::Number),
            ("max_period_s", Kind::Number),
        ],
    ),
    (
        "inference",
        false,
        &[
            ("permutations", Kind::Integer),
            ("seed", Kind::Integer),
            ("alpha", Kind::Number),
            ("correction", Kind::Text),
            ("family", Kind::TextList),
            ("bootstrap", Kind::Integer),
            ("alternative", Kind::Text),
            ("reference", Kind::Text),
        ],
    ),
    (
        "contrasts",
        true,
        &[("name", Kind::Text), ("conditions", Kind::TextList)],
    ),
];

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum PairingMode {
    Roles,
    Peers,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Measure {
    Wtc,
    Corr,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum ChannelPairs {
    Same,
    All,
}

/// Where WTC is evaluated in time: every sample (`full`), or only as densely as the band's
/// periods need (`coarse`, within 10⁻³ of `full` in block-mean R², many times faster).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum TimeGrid {
    Coarse,
    Full,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum CorrectionName {
    Maxstat,
    Holm,
    Bh,
    By,
    Bonferroni,
    None,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Axis {
    Band,
    Roi,
    Chromophore,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum AlternativeName {
    Greater,
    TwoSided,
}

#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Band {
    pub name: String,
    pub min_period_s: f64,
    pub max_period_s: f64,
}

#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Contrast {
    pub name: String,
    pub conditions: [String; 2],
}

#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Inputs {
    pub members: String,
    pub events: String,
    pub channels: String,
    pub quality: Option<String>,
    pub recordings: String,
    /// A recording's file name built from members-table columns, in place of a `recording`
    /// column.
    pub recording_pattern: Option<String>,
    /// nevermet's column names → the names in the study's tables.
    pub columns: ColumnMap,
    pub recording_format: RecordingFormat,
}

#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Pairing {
    pub mode: PairingMode,
    pub roles: Vec<String>,
    pub keep_apart: Vec<String>,
    pub pair_within: Vec<String>,
}

#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Synchrony {
    pub measure: Measure,
    pub chromophores: Vec<String>,
    pub channel_pairs: ChannelPairs,
    pub omega0: f64,
    pub scales_per_octave: usize,
    pub context_s: f64,
    pub time_grid: TimeGrid,
    pub min_channels_per_roi: usize,
}

#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Inference {
    pub permutations: usize,
    pub seed: u64,
    pub alpha: f64,
    pub correction: CorrectionName,
    pub family: Vec<Axis>,
    pub bootstrap: usize,
    pub alternative: AlternativeName,
    /// The group test's reference set: every re-pairing (default; it contains the observed
    /// pairing) or re-pairings of pseudo-pairs only.
    pub reference: Reference,
}

impl Inference {
    /// The correction as written in the configuration.
    pub fn correction_label(&self) -> &'static str {
        match self.correction {
            CorrectionName::Maxstat => "maxstat",
            CorrectionName::Holm => "holm",
            CorrectionName::Bh => "bh",
            CorrectionName::By => "by",
            CorrectionName::Bonferroni => "bonferroni",
            CorrectionName::None => "none",
        }
    }
}

/// The resolved configuration: every value checked, every default filled in.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Config {
    pub name: String,
    pub description: Option<String>,
    /// The conditions the events table must use, when the study lists them.
    pub conditions: Option<Vec<String>>,
    /// Dyads may lack blocks that other dyads have (those blocks are left out for them).
    pub allow_missing_blocks: bool,
    /// Durations of one block may differ across dyads by more than 10 % (every pair then
    /// uses the shortest, cutting the end of the longer ones).
    pub allow_truncated_blocks: bool,
    pub inputs: Inputs,
    pub pairing: Pairing,
    pub synchrony: Synchrony,
    pub bands: Vec<Band>,
    pub inference: Inference,
    pub contrasts: Vec<Contrast>,
}

/// The default seed, so a study without one still replays identically.
pub const DEFAULT_SEED: u64 = 20261201;

/// Parses and checks `study.toml`. `fallback_name` names the study when `[study] name` is absent.
pub fn parse_config(text: &str, file: &Path, fallback_name: &str) -> Result<Config, Problems> {
    let mut problems = Problems::default();
    let root: toml::Table = match text.parse::<toml::Table>() {
        Ok(t) => t,
        Err(e) => {
            problems.push(
                Problem::in_file(file, format!("not valid TOML: {}", e.message()))
                    .hint(describe_span(text, e.span())),
            );
            return Err(problems);
        }
    };
    check_schema(&root, file, &mut problems);
    let mut r = Reader {
        file,
        problems: &mut problems,
    };
    let config = r.resolve(&root, fallback_name);
    if problems.is_empty() {
        Ok(config)
    } else {
        Err(problems)
    }
}

fn describe_span(text: &str, span: Option<std::ops::Range<usize>>) -> String {
    match span {
        Some(s) => {
            let line = text[..s.start.min(text.len())].matches('\n').count() + 1;
            format!("see line {line}")
        }
        None => "check the file's syntax".to_string(),
    }
}

/// Unknown sections and keys, with the nearest valid name.
fn check_schema(root: &toml::Table, file: &Path, problems: &mut Problems) {
    let section_names: Vec<&str> = SECTIONS.iter().map(|s| s.0).collect();
    for (name, value) in root {
        let Some((_, is_array, keys)) = SECTIONS.iter().find(|s| s.0 == name) else {
            problems.push(
                Problem::in_file(file, format!("unknown section [{name}]"))
                    .hint(nearest_hint(name, &section_names)),
            );
            continue;
        };
        let tables: Vec<&toml::Table> = match (value, is_array) {
            (Value::Table(t), false) => vec![t],
            (Value::Array(items), true) => {
                let mut out = Vec::new();
                for item in items {
                    match item {
                        Value::Table(t) => out.push(t),
                        _ => problems.push(Problem::in_file(
                            file,
                            format!("[[{name}]] must be an array of tables, as [[{name}]] blocks"),
                        )),
                    }
                }
                out
            }
            (_, true) => {
                problems.push(Problem::in_file(
                    file,
                    format!("{name} must be written as one or more [[{name}]] blocks"),
                ));
                continue;
            }
            (_, false) => {
                problems.push(Problem::in_file(
                    file,
                    format!("{name} must be a section, written [{name}]"),
                ));
                continue;
            }
        };
        let shown = if *is_array {
            format!("[[{name}]]")
        } else {
            format!("[{name}]")
        };
        for table in tables {
            check_keys(table, name, &shown, keys, file, problems);
        }
    }
}

/// Unknown keys of one table (a section, or a sub-table `path` of one), with the nearest valid
/// key; sub-tables are walked with the same strictness.
fn check_keys(
    table: &toml::Table,
    path: &str,
    shown: &str,
    keys: &[Key],
    file: &Path,
    problems: &mut Problems,
) {
    let key_names: Vec<&str> = keys.iter().map(|k| k.0).collect();
    for (key, value) in table {
        let Some((_, kind)) = keys.iter().find(|k| k.0 == key.as_str()) else {
            if let Some((_, _, why)) = RETIRED.iter().find(|r| r.0 == path && r.1 == key.as_str()) {
                problems.push(Problem::in_file(
                    file,
                    format!("key `{key}` in section {shown} was {why}"),
                ));
                continue;
            }
            problems.push(
                Problem::in_file(file, format!("unknown key `{key}` in section {shown}"))
                    .hint(nearest_hint(key, &key_names)),
            );
            continue;
        };
        if let Kind::Table(sub) = kind {
            let sub_path = format!("{path}.{key}");
            match value {
                Value::Table(t) => {
                    check_keys(t, &sub_path, &format!("[{sub_path}]"), sub, file, problems)
                }
                other => problems.push(
                    Problem::in_file(
                        file,
                        format!(
                            "key `{sub_path}` must be a table, found {} ({other})",
                            other.type_str()
                        ),
                    )
                    .hint(format!(
                        "write it as a [{sub_path}] section, or inline as {{ key = \"value\" }}"
                    )),
                ),
            }
        }
    }
}

fn nearest_hint(word: &str, candidates: &[&str]) -> String {
    match nearest(word, candidates) {
        Some(best) => format!("did you mean `{best}`? (valid: {})", candidates.join(", ")),
        None => format!("valid: {}", candidates.join(", ")),
    }
}

/// The candidate with the smallest edit distance, when it is close enough to be a typo.
pub fn nearest<'a>(word: &str, candidates: &[&'a str]) -> Option<&'a str> {
    candidates
        .iter()
        .map(|c| (edit_distance(word, c), *c))
        .min()
        .filter(|(d, c)| *d <= (c.len().max(word.len()) / 2).max(2))
        .map(|(_, c)| c)
}

/// Levenshtein distance (insertions, deletions, substitutions).
pub fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for i in 1..=a.len() {
        let mut cur = vec![i; b.len() + 1];
        for j in 1..=b.len() {
            let sub = prev[j - 1] + usize::from(a[i - 1] != b[j - 1]);
            cur[j] = sub.min(prev[j] + 1).min(cur[j - 1] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

struct Reader<'a> {
    file: &'a Path,
    problems: &'a mut Problems,
}

impl Reader<'_> {
    fn wrong_type(&mut self, key: &str, kind: Kind, got: &Value) {
        self.problems.push(Problem::in_file(
            self.file,
            format!(
                "key `{key}` must be {}, found {} ({})",
                kind.describe(),
                got.type_str(),
                got
            ),
        ));
    }

    fn text(&mut self, t: Option<&toml::Table>, section: &str, key: &str) -> Option<String> {
        let v = t?.get(key)?;
        match v {
            Value::String(s) => Some(s.clone()),
            other => {
                self.wrong_type(&format!("{section}.{key}"), Kind::Text, other);
                None
            }
        }
    }

    fn number(&mut self, t: Option<&toml::Table>, section: &str, key: &str) -> Option<f64> {
        let v = t?.get(key)?;
        match v {
            Value::Float(x) => Some(*x),
            Value::Integer(i) => Some(*i as f64),
            other => {
                self.wrong_type(&format!("{section}.{key}"), Kind::Number, other);
                None
            }
        }
    }

    fn integer(&mut self, t: Option<&toml::Table>, section: &str, key: &str) -> Option<i64> {
        let v = t?.get(key)?;
        match v {
            Value::Integer(i) => Some(*i),
            other => {
                self.wrong_type(&format!("{section}.{key}"), Kind::Integer, other);
                None
            }
        }
    }

    fn text_list(
        &mut self,
        t: Option<&toml::Table>,
        section: &str,
        key: &str,
    ) -> Option<Vec<String>> {
        let v = t?.get(key)?;
        let full = format!("{section}.{key}");
        match v {
            Value::Array(items) => {
                let mut out = Vec::new();
                for item in items {
                    match item {
                        Value::String(s) => out.push(s.clone()),
                        other => {
                            self.wrong_type(&full, Kind::TextList, other);
                            return None;
                        }
                    }
                }
                Some(out)
            }
            other => {
                self.wrong_type(&full, Kind::TextList, other);
                None
            }
        }
    }

    fn count(
        &mut self,
        t: Option<&toml::Table>,
        section: &str,
        key: &str,
        default: usize,
        min: usize,
    ) -> usize {
        match self.integer(t, section, key) {
            None => default,
            Some(v) if v < min as i64 => {
                self.problems.push(Problem::in_file(
                    self.file,
                    format!("key `{section}.{key}` must be at least {min}, found {v}"),
                ));
                default
            }
            Some(v) => v as usize,
        }
    }

    fn boolean(&mut self, t: Option<&toml::Table>, section: &str, key: &str) -> Option<bool> {
        let v = t?.get(key)?;
        match v {
            Value::Boolean(b) => Some(*b),
            other => {
                self.wrong_type(&format!("{section}.{key}"), Kind::Bool, other);
                None
            }
        }
    }

    /// A sub-table such as `[inputs.columns]`; a value of another type was reported by the
    /// schema walk.
    fn sub_table<'t>(t: Option<&'t toml::Table>, key: &str) -> Option<&'t toml::Table> {
        t?.get(key)?.as_table()
    }

    /// `[study] conditions`: non-empty, each label once, no two labels one spelling apart.
    fn conditions(&mut self, study: Option<&toml::Table>) -> Option<Vec<String>> {
        let list = self.text_list(study, "study", "conditions")?;
        if list.is_empty() {
            self.problems.push(
                Problem::in_file(self.file, "key `study.conditions` is empty")
                    .hint("list the conditions of the events table, or remove the key"),
            );
        }
        for (i, a) in list.iter().enumerate() {
            for b in &list[..i] {
                if super::names::same_label(a, b) {
                    self.problems.push(Problem::in_file(
                        self.file,
                        format!(
                            "key `study.conditions` names \"{b}\" and \"{a}\", which differ only in case, spaces, hyphens or underscores"
                        ),
                    ));
                }
            }
        }
        Some(list)
    }

    fn recording_pattern(&mut self, inputs: Option<&toml::Table>) -> Option<String> {
        let pattern = self.text(inputs, "inputs", "recording_pattern")?;
        match layout::parse_pattern(&pattern) {
            Err(why) => self.problems.push(
                Problem::in_file(self.file, format!("key `inputs.recording_pattern` has {why}"))
                    .hint("e.g. recording_pattern = \"{participant}_session1.csv\""),
            ),
            Ok(pieces) if layout::fields(&pieces).is_empty() => self.problems.push(
                Problem::in_file(
                    self.file,
                    format!("key `inputs.recording_pattern` (\"{pattern}\") has no placeholder, so every member would get the same file"),
                )
                .hint("name members-table columns in braces, e.g. \"{participant}_session1.csv\""),
            ),
            Ok(_) => {}
        }
        let columns = Self::sub_table(inputs, "columns");
        if columns.is_some_and(|c| c.contains_key("recording")) {
            self.problems.push(
                Problem::in_file(
                    self.file,
                    "both `inputs.recording_pattern` and `inputs.columns.recording` name the recordings",
                )
                .hint("keep one: the pattern builds the file name, the column holds it"),
            );
        }
        Some(pattern)
    }

    fn columns(&mut self, inputs: Option<&toml::Table>) -> ColumnMap {
        let t = Self::sub_table(inputs, "columns");
        let mut map = ColumnMap::default();
        for (ours, _) in layout::MAPPABLE {
            let Some(theirs) = self.text(t, "inputs.columns", ours) else {
                continue;
            };
            if theirs.trim().is_empty() {
                self.problems.push(Problem::in_file(
                    self.file,
                    format!("key `inputs.columns.{ours}` is empty"),
                ));
                continue;
            }
            if let Some((other, _)) = map.0.iter().find(|(_, v)| **v == theirs) {
                self.problems.push(Problem::in_file(
                    self.file,
                    format!(
                        "keys `inputs.columns.{other}` and `inputs.columns.{ours}` both name the column `{theirs}`"
                    ),
                ));
            }
            map.0.insert((*ours).to_string(), theirs);
        }
        map
    }

    fn recording_format(&mut self, inputs: Option<&toml::Table>) -> RecordingFormat {
        let section = "inputs.recording_format";
        let t = Self::sub_table(inputs, "recording_format");
        let mut format = RecordingFormat::default();
        if let Some(time) = self.text(t, section, "time_column") {
            if time.trim().is_empty() {
                self.problems.push(Problem::in_file(
                    self.file,
                    format!("key `{section}.time_column` is empty"),
                ));
            }
            format.time_column = time;
        }
        if let Some(pattern) = self.text(t, section, "column_pattern") {
            let mut fields = match layout::parse_pattern(&pattern) {
                Ok(p) => layout::fields(&p).into_iter().map(String::from).collect(),
                Err(why) => {
                    self.problems.push(Problem::in_file(
                        self.file,
                        format!("key `{section}.column_pattern` has {why}"),
                    ));
                    vec!["channel".to_string(), "chromophore".to_string()]
                }
            };
            fields.sort();
            if fields != ["channel", "chromophore"] {
                self.problems.push(
                    Problem::in_file(
                        self.file,
                        format!(
                            "key `{section}.column_pattern` (\"{pattern}\") must hold {{channel}} and {{chromophore}} once each, found {}",
                            if fields.is_empty() { "none".to_string() } else { fields.iter().map(|f| format!("{{{f}}}")).collect::<Vec<_>>().join(", ") }
                        ),
                    )
                    .hint("e.g. column_pattern = \"{channel} {chromophore}\""),
                );
            }
            format.column_pattern = pattern;
        }
        let labels_t = Self::sub_table(t, "chromophore_labels");
        let label_section = format!("{section}.chromophore_labels");
        for c in ["hbo", "hbr", "hbt"] {
            let Some(label) = self.text(labels_t, &label_section, c) else {
                continue;
            };
            if label.trim().is_empty() {
                self.problems.push(Problem::in_file(
                    self.file,
                    format!("key `{label_section}.{c}` is empty"),
                ));
            } else if let Some((other, _)) =
                format.chromophore_labels.iter().find(|(_, v)| **v == label)
            {
                self.problems.push(Problem::in_file(
                    self.file,
                    format!("chromophores {other} and {c} are both labelled \"{label}\" in `{label_section}`"),
                ));
            }
            format.chromophore_labels.insert(c.to_string(), label);
        }
        format
    }

    fn choice<T: Copy>(
        &mut self,
        t: Option<&toml::Table>,
        section: &str,
        key: &str,
        options: &[(&str, T)],
        default: T,
    ) -> T {
        let Some(value) = self.text(t, section, key) else {
            return default;
        };
        if let Some((_, v)) = options.iter().find(|(n, _)| *n == value) {
            return *v;
        }
        let names: Vec<&str> = options.iter().map(|o| o.0).collect();
        self.problems.push(
            Problem::in_file(
                self.file,
                format!("key `{section}.{key}` has unknown value \"{value}\""),
            )
            .hint(nearest_hint(&value, &names)),
        );
        default
    }

    fn required_text(
        &mut self,
        t: Option<&toml::Table>,
        section: &str,
        key: &str,
        default: Option<&str>,
    ) -> String {
        let present = t.is_some_and(|t| t.contains_key(key));
        match (self.text(t, section, key), default) {
            (Some(v), _) => v,
            (None, Some(d)) if !present => d.to_string(),
            (None, _) => {
                if !present {
                    self.problems.push(
                        Problem::in_file(self.file, format!("missing key `{section}.{key}`"))
                            .hint(format!("add `{key} = \"...\"` under [{section}]")),
                    );
                }
                String::new()
            }
        }
    }

    fn resolve(&mut self, root: &toml::Table, fallback_name: &str) -> Config {
        let section = |name: &str| root.get(name).and_then(Value::as_table);
        let study = section("study");
        let name = self
            .text(study, "study", "name")
            .unwrap_or_else(|| fallback_name.to_string());
        let description = self.text(study, "study", "description");
        let conditions = self.conditions(study);
        let allow_missing_blocks = self
            .boolean(study, "study", "allow_missing_blocks")
            .unwrap_or(false);
        let allow_truncated_blocks = self
            .boolean(study, "study", "allow_truncated_blocks")
            .unwrap_or(false);

        let inputs_t = section("inputs");
        if inputs_t.is_none() {
            self.problems.push(
                Problem::in_file(self.file, "missing section [inputs]")
                    .hint("name the members, events and channels tables under [inputs]"),
            );
        }
        let inputs = Inputs {
            members: self.required_text(inputs_t, "inputs", "members", None),
            events: self.required_text(inputs_t, "inputs", "events", None),
            channels: self.required_text(inputs_t, "inputs", "channels", None),
            quality: self.text(inputs_t, "inputs", "quality"),
            recordings: self.required_text(inputs_t, "inputs", "recordings", Some("recordings")),
            recording_pattern: self.recording_pattern(inputs_t),
            columns: self.columns(inputs_t),
            recording_format: self.recording_format(inputs_t),
        };

        let p = section("pairing");
        let mode = self.choice(
            p,
            "pairing",
            "mode",
            &[("roles", PairingMode::Roles), ("peers", PairingMode::Peers)],
            PairingMode::Roles,
        );
        let roles = self.text_list(p, "pairing", "roles").unwrap_or_default();
        match mode {
            PairingMode::Roles if roles.len() != 2 => self.problems.push(
                Problem::in_file(
                    self.file,
                    format!(
                        "key `pairing.roles` must name exactly two roles in roles mode, found {}",
                        roles.len()
                    ),
                )
                .hint("e.g. roles = [\"caregiver\", \"child\"]; the first is the row side"),
            ),
            PairingMode::Roles if roles[0] == roles[1] => self.problems.push(Problem::in_file(
                self.file,
                format!("key `pairing.roles` names \"{}\" twice", roles[0]),
            )),
            PairingMode::Peers if !roles.is_empty() => self.problems.push(
                Problem::in_file(self.file, "key `pairing.roles` is only used in roles mode")
                    .hint("remove it, or set mode = \"roles\""),
            ),
            _ => {}
        }
        let pairing = Pairing {
            mode,
            roles,
            keep_apart: self
                .text_list(p, "pairing", "keep_apart")
                .unwrap_or_default(),
            pair_within: self
                .text_list(p, "pairing", "pair_within")
                .unwrap_or_default(),
        };

        let s = section("synchrony");
        let measure = self.choice(
            s,
            "synchrony",
            "measure",
            &[("wtc", Measure::Wtc), ("corr", Measure::Corr)],
            Measure::Wtc,
        );
        let chromophores = self
            .text_list(s, "synchrony", "chromophores")
            .unwrap_or_else(|| vec!["hbo".into(), "hbr".into()]);
        let mut seen = BTreeSet::new();
        for c in &chromophores {
            if !["hbo", "hbr", "hbt"].contains(&c.as_str()) {
                self.problems.push(
                    Problem::in_file(
                        self.file,
                        format!("key `synchrony.chromophores` has unknown chromophore \"{c}\""),
                    )
                    .hint("use hbo, hbr or hbt (lowercase)"),
                );
            }
            if !seen.insert(c.clone()) {
                self.problems.push(Problem::in_file(
                    self.file,
                    format!("key `synchrony.chromophores` names \"{c}\" twice"),
                ));
            }
        }
        if chromophores.is_empty() {
            self.problems.push(Problem::in_file(
                self.file,
                "key `synchrony.chromophores` is empty",
            ));
        }
        let channel_pairs = self.choice(
            s,
            "synchrony",
            "channel_pairs",
            &[("same", ChannelPairs::Same), ("all", ChannelPairs::All)],
            ChannelPairs::Same,
        );
        let omega0 = self.number(s, "synchrony", "omega0").unwrap_or(6.0);
        if !(5.0..=20.0).contains(&omega0) {
            self.problems.push(
                Problem::in_file(
                    self.file,
                    format!("key `synchrony.omega0` must be between 5 and 20, found {omega0}"),
                )
                .hint("6 is the usual Morlet choice; below about 5 the wavelet is not admissible"),
            );
        }
        let scales_per_octave = self.count(s, "synchrony", "scales_per_octave", 12, 1);
        let context_s = self.number(s, "synchrony", "context_s").unwrap_or(90.0);
        if !(context_s >= 0.0 && context_s.is_finite()) {
            self.problems.push(Problem::in_file(
                self.file,
                format!("key `synchrony.context_s` must be zero or positive, found {context_s}"),
            ));
        }
        let time_grid = self.choice(
            s,
            "synchrony",
            "time_grid",
            &[("coarse", TimeGrid::Coarse), ("full", TimeGrid::Full)],
            TimeGrid::Coarse,
        );
        let synchrony = Synchrony {
            measure,
            chromophores,
            channel_pairs,
            omega0,
            scales_per_octave,
            context_s,
            time_grid,
            min_channels_per_roi: self.count(s, "synchrony", "min_channels_per_roi", 2, 1),
        };

        let bands = self.bands(root);

        let i = section("inference");
        let seed = match self.integer(i, "inference", "seed") {
            Some(v) if v < 0 => {
                self.problems.push(Problem::in_file(
                    self.file,
                    format!("key `inference.seed` must be zero or positive, found {v}"),
                ));
                DEFAULT_SEED
            }
            Some(v) => v as u64,
            None => DEFAULT_SEED,
        };
        let alpha = self.number(i, "inference", "alpha").unwrap_or(0.05);
        if !(alpha > 0.0 && alpha < 1.0) {
            self.problems.push(Problem::in_file(
                self.file,
                format!("key `inference.alpha` must lie strictly between 0 and 1, found {alpha}"),
            ));
        }
        let family_names = self
            .text_list(i, "inference", "family")
            .unwrap_or_else(|| vec!["band".into(), "roi".into(), "chromophore".into()]);
        let mut family = Vec::new();
        for f in &family_names {
            let axis = match f.as_str() {
                "band" => Axis::Band,
                "roi" => Axis::Roi,
                "chromophore" => Axis::Chromophore,
                other => {
                    self.problems.push(
                        Problem::in_file(
                            self.file,
                            format!("key `inference.family` has unknown axis \"{other}\""),
                        )
                        .hint(nearest_hint(other, &["band", "roi", "chromophore"])),
                    );
                    continue;
                }
            };
            if !family.contains(&axis) {
                family.push(axis);
            }
        }
        let inference = Inference {
            permutations: self.count(i, "inference", "permutations", 10_000, 1),
            seed,
            alpha,
            correction: self.choice(
                i,
                "inference",
                "correction",
                &[
                    ("maxstat", CorrectionName::Maxstat),
                    ("holm", CorrectionName::Holm),
                    ("bh", CorrectionName::Bh),
                    ("by", CorrectionName::By),
                    ("bonferroni", CorrectionName::Bonferroni),
                    ("none", CorrectionName::None),
                ],
                CorrectionName::Maxstat,
            ),
            family,
            bootstrap: self.count(i, "inference", "bootstrap", 2000, 0),
            alternative: self.choice(
                i,
                "inference",
                "alternative",
                &[
                    ("greater", AlternativeName::Greater),
                    ("two-sided", AlternativeName::TwoSided),
                ],
                AlternativeName::Greater,
            ),
            reference: self.choice(
                i,
                "inference",
                "reference",
                &Reference::NAMES,
                Reference::All,
            ),
        };

        let contrasts = self.contrasts(root);
        Config {
            name,
            description,
            conditions,
            allow_missing_blocks,
            allow_truncated_blocks,
            inputs,
            pairing,
            synchrony,
            bands,
            inference,
            contrasts,
        }
    }

    fn bands(&mut self, root: &toml::Table) -> Vec<Band> {
        let Some(Value::Array(items)) = root.get("bands") else {
            return vec![Band {
                name: "task".into(),
                min_period_s: 10.0,
                max_period_s: 50.0,
            }];
        };
        let mut bands: Vec<Band> = Vec::new();
        for (k, item) in items.iter().enumerate() {
            let t = item.as_table();
            let label = format!("bands[{}]", k + 1);
            let name = self.required_text(t, &label, "name", None);
            let (Some(lo), Some(hi)) = (
                self.number(t, &label, "min_period_s"),
                self.number(t, &label, "max_period_s"),
            ) else {
                if !t.is_some_and(|t| {
                    t.contains_key("min_period_s") && t.contains_key("max_period_s")
                }) {
                    self.problems.push(Problem::in_file(
                        self.file,
                        format!("band \"{name}\" needs both min_period_s and max_period_s"),
                    ));
                }
                continue;
            };
            if lo.is_nan() || lo <= 0.0 || lo >= hi {
                self.problems.push(
                    Problem::in_file(
                        self.file,
                        format!(
                            "band \"{name}\": min_period_s ({lo}) must be positive and below \
                             max_period_s ({hi})"
                        ),
                    )
                    .hint("periods are in seconds; e.g. min_period_s = 10, max_period_s = 50"),
                );
            }
            if bands.iter().any(|b| b.name == name) {
                self.problems.push(Problem::in_file(
                    self.file,
                    format!("band name \"{name}\" is used twice"),
                ));
            }
            bands.push(Band {
                name,
                min_period_s: lo,
                max_period_s: hi,
            });
        }
        if bands.is_empty() && self.problems.is_empty() {
            self.problems
                .push(Problem::in_file(self.file, "no [[bands]] defined"));
        }
        bands
    }

    fn contrasts(&mut self, root: &toml::Table) -> Vec<Contrast> {
        let Some(Value::Array(items)) = root.get("contrasts") else {
            return Vec::new();
        };
        let mut out: Vec<Contrast> = Vec::new();
        for (k, item) in items.iter().enumerate() {
            let t = item.as_table();
            let label = format!("contrasts[{}]", k + 1);
            let name = self.required_text(t, &label, "name", None);
            let Some(conds) = self.text_list(t, &label, "conditions") else {
                if !t.is_some_and(|t| t.contains_key("conditions")) {
                    self.problems.push(Problem::in_file(
                        self.file,
                        format!("contrast \"{name}\" needs conditions = [\"a\", \"b\"]"),
                    ));
                }
                continue;
            };
            if conds.len() != 2 || conds[0] == conds[1] {
                self.problems.push(Problem::in_file(
                    self.file,
                    format!(
                        "contrast \"{name}\" must name two different conditions, found {conds:?}"
                    ),
                ));
                continue;
            }
            if out.iter().any(|c| c.name == name) {
                self.problems.push(Problem::in_file(
                    self.file,
                    format!("contrast name \"{name}\" is used twice"),
                ));
            }
            out.push(Contrast {
                name,
                conditions: [conds[0].clone(), conds[1].clone()],
            });
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const BASE: &str = r#"
[inputs]
members = "members.tsv"
events = "events.tsv"
channels = "channels.tsv"
[pairing]
roles = ["caregiver", "child"]
"#;

    /// BASE with `extra` written at the end of its [inputs] section.
    fn inputs_extra(extra: &str) -> String {
        BASE.replace("[pairing]", &format!("{extra}\n[pairing]"))
    }

    fn parse(text: &str) -> Result<Config, Problems> {
        parse_config(text, Path::new("study.toml"), "folder")
    }

    #[test]
    fn defaults_are_filled_in() {
        let c = parse(BASE).unwrap();
        assert_eq!(c.name, "folder");
        assert_eq!(c.inputs.recordings, "recordings");
        assert_eq!(c.synchrony.omega0, 6.0);
        assert_eq!(c.synchrony.scales_per_octave, 12);
        assert_eq!(c.bands.len(), 1);
        assert_eq!(c.inference.permutations, 10_000);
        assert_eq!(c.inference.correction, CorrectionName::Maxstat);
        assert_eq!(
            c.inference.family,
            vec![Axis::Band, Axis::Roi, Axis::Chromophore]
        );
    }

    #[test]
    fn unknown_key_names_section_and_nearest_key() {
        let text = format!("{BASE}\n[synchrony]\nomgea0 = 6.0\n");
        let err = parse(&text).unwrap_err().to_string();
        assert!(
            err.contains("unknown key `omgea0` in section [synchrony]"),
            "{err}"
        );
        assert!(err.contains("did you mean `omega0`?"), "{err}");
    }

    #[test]
    fn wrong_type_names_key_and_expected_type() {
        let text = format!("{BASE}\n[inference]\npermutations = \"many\"\n");
        let err = parse(&text).unwrap_err().to_string();
        assert!(
            err.contains("key `inference.permutations` must be an integer, found string"),
            "{err}"
        );
    }

    #[test]
    fn the_reference_set_is_every_re_pairing_unless_chosen() {
        assert_eq!(parse(BASE).unwrap().inference.reference, Reference::All);
        let p = parse(&format!(
            "{BASE}\n[inference]\nreference = \"pseudo-only\"\n"
        ))
        .unwrap();
        assert_eq!(p.inference.reference, Reference::PseudoOnly);
        let err = parse(&format!("{BASE}\n[inference]\nreference = \"pseudo\"\n"))
            .unwrap_err()
            .to_string();
        assert!(err.contains("did you mean `pseudo-only`?"), "{err}");
        let err = parse(&format!("{BASE}\n[inference]\nnull_includes_real = true\n"))
            .unwrap_err()
            .to_string();
        assert!(
            err.contains(
                "key `null_includes_real` in section [inference] was replaced by `reference`"
            ),
            "{err}"
        );
    }

    #[test]
    fn every_problem_is_collected() {
        let text = format!(
            "{BASE}\n[synchrony]\nmeasure = \"wct\"\nfoo = 1\n[[bands]]\nname = \"b\"\nmin_period_s = 50\nmax_period_s = 10\n"
        );
        let err = parse(&text).unwrap_err();
        assert_eq!(err.len(), 3, "{err}");
    }

    #[test]
    fn a_lab_layout_is_read_from_its_sub_tables() {
        let text = inputs_extra(
            "recording_pattern = \"{participant}_session1.csv\"\n\
             [inputs.columns]\ndyad = \"dyad_no\"\nonset = \"start_s\"\n\
             [inputs.recording_format]\ntime_column = \"Time(s)\"\n\
             column_pattern = \"{channel} {chromophore}\"\n\
             chromophore_labels = { hbo = \"HbO\", hbr = \"HbR\" }\n\
             [study]\nconditions = [\"together\", \"apart\"]\nallow_missing_blocks = true\n",
        );
        let c = parse(&text).unwrap();
        let i = &c.inputs;
        assert_eq!(
            i.recording_pattern.as_deref(),
            Some("{participant}_session1.csv")
        );
        assert_eq!(i.columns.in_files("dyad"), "dyad_no");
        assert_eq!(i.columns.in_files("onset"), "start_s");
        assert_eq!(i.columns.in_files("role"), "role");
        assert_eq!(i.recording_format.time_column, "Time(s)");
        assert_eq!(i.recording_format.column("S1-D1", "hbr"), "S1-D1 HbR");
        assert_eq!(c.conditions, Some(vec!["together".into(), "apart".into()]));
        assert!(c.allow_missing_blocks && !c.allow_truncated_blocks);
        // The plain layout when nothing is mapped.
        let plain = parse(BASE).unwrap();
        assert!(plain.inputs.columns.0.is_empty() && plain.inputs.recording_format.is_plain());
        assert_eq!(plain.conditions, None);
    }

    #[test]
    fn sub_tables_are_checked_as_strictly_as_sections() {
        let err = |extra: &str| parse(&inputs_extra(extra)).unwrap_err().to_string();
        let e = err("[inputs.columns]\ndyd = \"dyad_no\"\n");
        assert!(
            e.contains("unknown key `dyd` in section [inputs.columns]"),
            "{e}"
        );
        assert!(e.contains("did you mean `dyad`?"), "{e}");
        let e = err("[inputs.recording_format]\ntime_colum = \"t\"\n");
        assert!(
            e.contains("unknown key `time_colum` in section [inputs.recording_format]"),
            "{e}"
        );
        assert!(e.contains("did you mean `time_column`?"), "{e}");
        let e = err("[inputs.recording_format]\nchromophore_labels = { hb0 = \"HbO\" }\n");
        assert!(
            e.contains("unknown key `hb0` in section [inputs.recording_format.chromophore_labels]"),
            "{e}"
        );
        assert!(e.contains("did you mean `hbo`?"), "{e}");
        let e = err("columns = \"dyad_no\"\n");
        assert!(e.contains("key `inputs.columns` must be a table"), "{e}");
        let e = err("[inputs.columns]\ndyad = 3\n");
        assert!(
            e.contains("key `inputs.columns.dyad` must be a string"),
            "{e}"
        );
        let e = err("[inputs.recording_format]\ncolumn_pattern = \"{channel}_HbO\"\n");
        assert!(
            e.contains("must hold {channel} and {chromophore} once each"),
            "{e}"
        );
        let e = err("recording_pattern = \"{participant_session1.csv\"\n");
        assert!(e.contains("a `{` without its `}`"), "{e}");
        let e = err("[inputs.columns]\nparticipant = \"pid\"\nrecording = \"pid\"\n");
        assert!(e.contains("both name the column `pid`"), "{e}");
        let e = err("[study]\nallow_missing_blocks = \"yes\"\n");
        assert!(
            e.contains("key `study.allow_missing_blocks` must be true or false"),
            "{e}"
        );
        let e = err("[study]\nconditions = [\"free play\", \"free_play\"]\n");
        assert!(e.contains("differ only in case"), "{e}");
    }

    #[test]
    fn edit_distance_matches_known_values() {
        // Classic textbook pair: kitten → sitting needs 3 edits.
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("same", "same"), 0);
    }
}
