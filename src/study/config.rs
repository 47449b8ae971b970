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

use super::problem::{Problem, Problems};
use crate::pairing::Reference;

/// The kinds of value a key may hold, for messages and checks.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Kind {
    Text,
    Number,
    Integer,
    TextList,
}

impl Kind {
    fn describe(self) -> &'static str {
        match self {
            Kind::Text => "a string",
            Kind::Number => "a number",
            Kind::Integer => "an integer",
            Kind::TextList => "an array of strings",
        }
    }
}

/// The schema: every section, whether it is an array of tables, and its keys.
/// A section: its name, whether it is an array of tables, and its keys with their kinds.
type Section = (&'static str, bool, &'static [(&'static str, Kind)]);

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
        &[("name", Kind::Text), ("description", Kind::Text)],
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
        let key_names: Vec<&str> = keys.iter().map(|k| k.0).collect();
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
        for table in tables {
            for key in table.keys() {
                if !key_names.contains(&key.as_str()) {
                    let shown = if *is_array {
                        format!("[[{name}]]")
                    } else {
                        format!("[{name}]")
                    };
                    if let Some((_, _, why)) =
                        RETIRED.iter().find(|r| r.0 == name && r.1 == key.as_str())
                    {
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
                }
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
    fn edit_distance_matches_known_values() {
        // Classic textbook pair: kitten → sitting needs 3 edits.
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("same", "same"), 0);
    }
}
