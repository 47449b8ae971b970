//! The members, events, channels and quality tables → plain typed rows.
//!
//! Each reader checks its own table (required columns, duplicates, numbers, allowed values)
//! and pushes every problem with its file, row and column. Cross-table checks (an event naming
//! an unknown dyad, a quality row naming an unknown channel) happen here too, given the tables
//! already read, so the loader in `mod.rs` only sequences them.

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

use super::config::{Config, PairingMode};
use super::layout;
use super::names::{self, Nearest};
use super::problem::{Problem, Problems};
use crate::table::{RawTable, read_table};

/// One person's recording within one dyad.
#[derive(Clone, Debug, PartialEq)]
pub struct Member {
    /// `<dyad>:<participant>`, unique in the study.
    pub id: String,
    pub dyad: usize,
    pub participant: String,
    pub role: Option<String>,
    /// The recording file, relative to the recordings folder as written in the table.
    pub recording: String,
    pub attrs: BTreeMap<String, String>,
    /// 1-based data row in the members table.
    pub row: usize,
}

/// Two people recorded together. `members[0]` is the row-role member in roles mode.
#[derive(Clone, Debug, PartialEq)]
pub struct Dyad {
    pub id: String,
    pub members: [usize; 2],
}

/// One block of the events table.
#[derive(Clone, Debug, PartialEq)]
pub struct Event {
    pub dyad: usize,
    pub onset: f64,
    pub duration: f64,
    pub condition: String,
    pub row: usize,
}

#[derive(Clone, Debug, PartialEq)]
pub struct Channel {
    pub name: String,
    pub roi: String,
}

/// A channel marked bad in the quality table, for a participant or one recording.
#[derive(Clone, Debug, PartialEq)]
pub enum QualityTarget {
    Participant(String),
    Recording(String),
}

#[derive(Clone, Debug, PartialEq)]
pub struct QualityMark {
    pub target: QualityTarget,
    pub channel: String,
    pub bad: bool,
    pub row: usize,
}

/// Reads a table and gives its mapped columns nevermet's names, turning a read failure into a
/// problem.
pub fn read(
    path: &Path,
    what: &str,
    columns: &[(&str, &str)],
    problems: &mut Problems,
) -> Option<RawTable> {
    match read_table(path) {
        Ok(mut t) => {
            for (ours, theirs) in t.map_columns(columns) {
                problems.push(
                    Problem::in_file(
                        path,
                        format!(
                            "has both a column `{theirs}` (mapped to `{ours}` by [inputs.columns]) and a column `{ours}`"
                        ),
                    )
                    .hint("rename or remove one of them, so it is clear which one to read"),
                );
            }
            Some(t)
        }
        Err(e) => {
            problems.push(
                Problem::new(e.to_string())
                    .hint(format!("check `{what}` under [inputs] in study.toml")),
            );
            None
        }
    }
}

/// Pushes a problem for every required column the table lacks, with the columns found and the
/// nearest of them; true when all are present.
pub fn require_columns(table: &RawTable, cols: &[&str], problems: &mut Problems) -> bool {
    let mut ok = true;
    let found = table.written_headers();
    for c in cols {
        if table.has(c) {
            continue;
        }
        ok = false;
        let written = table.written_name(c);
        let what = if written == *c {
            format!("missing required column `{c}`")
        } else {
            format!("missing column `{written}` (nevermet's `{c}`, as mapped in [inputs.columns])")
        };
        problems.push(Problem::in_file(&table.path, what).hint(column_hint(c, written, &found)));
    }
    ok
}

/// The columns found, and what to do about the nearest one.
pub fn column_hint(ours: &str, written: &str, found: &[String]) -> String {
    let list = names::found_list(found, 12);
    let how = |f: &str| {
        format!(
            "rename it to `{written}` in the file, or map it in study.toml: [inputs.columns] {ours} = \"{f}\""
        )
    };
    match names::nearest_name(written, found) {
        Some(Nearest::Spelling(f)) => {
            format!(
                "{list}; `{f}` differs only in case or separators: {}",
                how(f)
            )
        }
        Some(Nearest::Close(f)) => format!("{list}; the nearest is `{f}`: {}", how(f)),
        None => {
            format!("{list}; map your own column in study.toml: [inputs.columns] {ours} = \"...\"")
        }
    }
}

fn text_cell(table: &RawTable, col: &str, row: usize) -> Option<String> {
    table.column(col).and_then(|c| c.text(row))
}

/// A required text cell; an empty one is a problem.
fn required_cell(
    table: &RawTable,
    col: &str,
    row: usize,
    problems: &mut Problems,
) -> Option<String> {
    let v = text_cell(table, col, row);
    if v.is_none() {
        problems.push(
            Problem::in_file(&table.path, "empty cell")
                .row(row + 1)
                .column(table.written_name(col)),
        );
    }
    v
}

/// A required numeric cell; text is a problem naming the value.
fn number_cell(table: &RawTable, col: &str, row: usize, problems: &mut Problems) -> Option<f64> {
    match table.column(col)? {
        crate::table::RawColumn::Number(v) => match v[row] {
            Some(x) => Some(x),
            None => {
                problems.push(
                    Problem::in_file(&table.path, "empty cell")
                        .row(row + 1)
                        .column(table.written_name(col)),
                );
                None
            }
        },
        crate::table::RawColumn::Text(v) => match &v[row] {
            None => {
                problems.push(
                    Problem::in_file(&table.path, "empty cell")
                        .row(row + 1)
                        .column(table.written_name(col)),
                );
                None
            }
            Some(s) => match s.parse::<f64>() {
                Ok(x) if x.is_finite() => Some(x),
                _ => {
                    problems.push(
                        Problem::in_file(&table.path, format!("\"{s}\" is not a number"))
                            .row(row + 1)
                            .column(table.written_name(col)),
                    );
                    None
                }
            },
        },
    }
}

const MEMBER_COLUMNS: &[&str] = &["dyad", "role", "participant", "recording"];

/// Every placeholder of `[inputs] recording_pattern` must be a members-table column (named as
/// after the mapping).
fn pattern_fields_are_columns(
    table: &RawTable,
    pattern: &str,
    pieces: &[layout::Piece],
    problems: &mut Problems,
) -> bool {
    let mut ok = true;
    for field in layout::fields(pieces) {
        if table.has(field) {
            continue;
        }
        ok = false;
        let mut names: Vec<String> = table.headers.clone();
        names.sort();
        // The file's own name of a mapped column is a likely slip: the pattern uses ours.
        let mapped = table.aliases.iter().find(|(_, theirs)| theirs == field);
        let near = match (mapped, names::nearest_name(field, &names)) {
            (Some((ours, _)), _) => format!(
                "; did you mean `{{{ours}}}`? (`{field}` is mapped to `{ours}` by [inputs.columns])"
            ),
            (None, Some(Nearest::Spelling(f) | Nearest::Close(f))) => {
                format!("; did you mean `{{{f}}}`?")
            }
            (None, None) => String::new(),
        };
        problems.push(
            Problem::in_file(
                &table.path,
                format!(
                    "`[inputs] recording_pattern` (\"{pattern}\") names `{{{field}}}`, which is not a column of the members table"
                ),
            )
            .hint(format!(
                "placeholders are members-table columns by nevermet's names after [inputs.columns] (columns: {}){near}",
                table.headers.join(", ")
            )),
        );
    }
    ok
}

/// A member's recording file, built from the pattern and the row's cells.
fn pattern_recording(
    table: &RawTable,
    pieces: &[layout::Piece],
    r: usize,
    problems: &mut Problems,
) -> Option<String> {
    match layout::fill(pieces, |f| text_cell(table, f, r)) {
        Ok(name) => Some(name),
        Err(field) => {
            problems.push(
                Problem::in_file(
                    &table.path,
                    "empty cell, needed by [inputs] recording_pattern",
                )
                .row(r + 1)
                .column(table.written_name(&field)),
            );
            None
        }
    }
}

/// Members and dyads. In roles mode each dyad must have one member of each configured role;
/// in peers mode exactly two members.
pub fn members(
    table: &RawTable,
    config: &Config,
    problems: &mut Problems,
) -> (Vec<Member>, Vec<Dyad>) {
    let roles_mode = config.pairing.mode == PairingMode::Roles;
    let pattern = config.inputs.recording_pattern.as_deref();
    let mut required = vec!["dyad", "participant"];
    if pattern.is_none() {
        required.push("recording");
    }
    if roles_mode {
        required.push("role");
    }
    if !require_columns(table, &required, problems) {
        return (Vec::new(), Vec::new());
    }
    let pieces = match pattern.map(layout::parse_pattern) {
        // A malformed pattern is reported with study.toml.
        Some(Err(_)) => return (Vec::new(), Vec::new()),
        Some(Ok(pieces)) => {
            if !pattern_fields_are_columns(table, pattern.unwrap_or_default(), &pieces, problems) {
                return (Vec::new(), Vec::new());
            }
            Some(pieces)
        }
        None => None,
    };
    let path = &table.path;
    let attr_cols: Vec<&String> = table
        .headers
        .iter()
        .filter(|h| !MEMBER_COLUMNS.contains(&h.as_str()))
        .collect();
    let mut dyad_index: BTreeMap<String, usize> = BTreeMap::new();
    let mut dyad_ids: Vec<String> = Vec::new();
    let mut by_dyad: Vec<Vec<usize>> = Vec::new();
    let mut members: Vec<Member> = Vec::new();
    let mut seen_participant: BTreeMap<(String, String), usize> = BTreeMap::new();
    let mut seen_role: BTreeMap<(String, String), usize> = BTreeMap::new();
    for r in 0..table.height() {
        let row = r + 1;
        let recording = match &pieces {
            Some(pieces) => pattern_recording(table, pieces, r, problems),
            None => required_cell(table, "recording", r, problems),
        };
        let (Some(dyad), Some(participant), Some(recording)) = (
            required_cell(table, "dyad", r, problems),
            required_cell(table, "participant", r, problems),
            recording,
        ) else {
            continue;
        };
        let role = if roles_mode {
            match required_cell(table, "role", r, problems) {
                Some(role) => Some(role),
                None => continue,
            }
        } else {
            text_cell(table, "role", r)
        };
        if let Some(first) = seen_participant.insert((dyad.clone(), participant.clone()), row) {
            problems.push(
                Problem::in_file(path, format!("duplicate member: participant {participant} appears twice in this dyad (first at row {first})"))
                    .row(row)
                    .column(table.written_name("participant"))
                    .dyad(&dyad),
            );
            continue;
        }
        if roles_mode {
            let role = role.clone().unwrap_or_default();
            if let Some(first) = seen_role.insert((dyad.clone(), role.clone()), row) {
                problems.push(
                    Problem::in_file(path, format!("duplicate member: role {role} appears twice in this dyad (first at row {first})"))
                        .row(row)
                        .column(table.written_name("role"))
                        .dyad(&dyad),
                );
                continue;
            }
            if !config.pairing.roles.contains(&role) {
                problems.push(
                    Problem::in_file(path, format!("role \"{role}\" is not one of pairing.roles"))
                        .row(row)
                        .column(table.written_name("role"))
                        .dyad(&dyad)
                        .hint(format!("pairing.roles = {:?}", config.pairing.roles)),
                );
                continue;
            }
        }
        let d = *dyad_index.entry(dyad.clone()).or_insert_with(|| {
            dyad_ids.push(dyad.clone());
            by_dyad.push(Vec::new());
            dyad_ids.len() - 1
        });
        let attrs = attr_cols
            .iter()
            .map(|c| ((*c).clone(), text_cell(table, c, r).unwrap_or_default()))
            .collect();
        by_dyad[d].push(members.len());
        members.push(Member {
            id: format!("{dyad}:{participant}"),
            dyad: d,
            participant,
            role,
            recording,
            attrs,
            row,
        });
    }
    for attr in config
        .pairing
        .keep_apart
        .iter()
        .chain(&config.pairing.pair_within)
    {
        if !table.has(attr) {
            problems.push(
                Problem::in_file(
                    path,
                    format!("pairing rule names attribute `{attr}`, which is not a column"),
                )
                .hint(attribute_hint(attr, &table.headers)),
            );
        }
    }
    if roles_mode {
        for role in &config.pairing.roles {
            if !members.iter().any(|m| m.role.as_deref() == Some(role)) {
                problems.push(
                    Problem::in_file(
                        path,
                        format!("no member has role \"{role}\", named in pairing.roles"),
                    )
                    .column(table.written_name("role")),
                );
            }
        }
    }
    let mut dyads = Vec::new();
    for (d, ids) in by_dyad.iter().enumerate() {
        let id = &dyad_ids[d];
        if ids.len() != 2 {
            problems.push(
                Problem::in_file(
                    path,
                    format!("dyad has {} member(s); a dyad has exactly two", ids.len()),
                )
                .dyad(id)
                .row(members[ids[0]].row),
            );
        }
        // Kept even when malformed, so dyad indices stay aligned with `Member::dyad`; the
        // problem above stops the load.
        let mut pair = [ids[0], *ids.get(1).unwrap_or(&ids[0])];
        if roles_mode && members[pair[0]].role.as_deref() != Some(config.pairing.roles[0].as_str())
        {
            pair.swap(0, 1);
        }
        dyads.push(Dyad {
            id: id.clone(),
            members: pair,
        });
    }
    if members.is_empty() && problems.is_empty() {
        problems.push(Problem::in_file(path, "the members table has no rows"));
    }
    (members, dyads)
}

/// The columns found, and the nearest to a misspelt attribute.
fn attribute_hint(attr: &str, headers: &[String]) -> String {
    let list = names::found_list(headers, 12);
    match names::nearest_name(attr, headers) {
        Some(Nearest::Spelling(f) | Nearest::Close(f)) => {
            format!(
                "{list}; did you mean `{f}`? (pairing rules name attributes as the members table writes them)"
            )
        }
        None => list,
    }
}

/// Events, checked against the dyads. When the members table gave no dyads (its own problem
/// is reported), no event is called an unknown dyad: that would only repeat the one cause.
pub fn events(table: &RawTable, dyads: &[Dyad], problems: &mut Problems) -> Vec<Event> {
    if !require_columns(
        table,
        &["dyad", "onset", "duration", "trial_type"],
        problems,
    ) {
        return Vec::new();
    }
    let path = &table.path;
    if table.height() == 0 {
        problems.push(
            Problem::in_file(path, "the events table is empty")
                .hint("add one row per block: dyad, onset, duration, trial_type"),
        );
        return Vec::new();
    }
    let index: BTreeMap<&str, usize> = dyads
        .iter()
        .enumerate()
        .map(|(i, d)| (d.id.as_str(), i))
        .collect();
    let mut out = Vec::new();
    for r in 0..table.height() {
        let row = r + 1;
        let dyad = required_cell(table, "dyad", r, problems);
        let onset = number_cell(table, "onset", r, problems);
        let duration = number_cell(table, "duration", r, problems);
        let condition = required_cell(table, "trial_type", r, problems);
        let (Some(dyad), Some(onset), Some(duration), Some(condition)) =
            (dyad, onset, duration, condition)
        else {
            continue;
        };
        if duration <= 0.0 {
            problems.push(
                Problem::in_file(path, format!("duration {duration} s must be positive"))
                    .row(row)
                    .column(table.written_name("duration"))
                    .dyad(&dyad),
            );
            continue;
        }
        let Some(&d) = index.get(dyad.as_str()) else {
            if dyads.is_empty() {
                continue;
            }
            problems.push(
                Problem::in_file(path, format!("unknown dyad \"{dyad}\""))
                    .row(row)
                    .column(table.written_name("dyad"))
                    .hint("every dyad in the events table must appear in the members table"),
            );
            continue;
        };
        out.push(Event {
            dyad: d,
            onset,
            duration,
            condition,
            row,
        });
    }
    out
}

/// Condition names in order of first appearance in the events table; the order every output
/// lists conditions in.
pub fn condition_names(events: &[Event]) -> Vec<String> {
    let mut names: Vec<String> = Vec::new();
    for e in events {
        if !names.contains(&e.condition) {
            names.push(e.condition.clone());
        }
    }
    names
}

/// Channels in table order, each with its ROI.
pub fn channels(table: &RawTable, plain_columns: bool, problems: &mut Problems) -> Vec<Channel> {
    if !require_columns(table, &["channel", "roi"], problems) {
        return Vec::new();
    }
    let mut out: Vec<Channel> = Vec::new();
    let mut seen = BTreeSet::new();
    for r in 0..table.height() {
        let (Some(name), Some(roi)) = (
            required_cell(table, "channel", r, problems),
            required_cell(table, "roi", r, problems),
        ) else {
            continue;
        };
        if plain_columns && name.contains('.') {
            problems.push(
                Problem::in_file(&table.path, format!("channel name \"{name}\" contains a dot"))
                    .row(r + 1)
                    .column(table.written_name("channel"))
                    .hint("recording columns are named <channel>.<chromophore>, so a channel name cannot contain '.'"),
            );
            continue;
        }
        if !seen.insert(name.clone()) {
            problems.push(
                Problem::in_file(&table.path, format!("channel \"{name}\" is listed twice"))
                    .row(r + 1)
                    .column(table.written_name("channel")),
            );
            continue;
        }
        out.push(Channel { name, roi });
    }
    if out.is_empty() && problems.is_empty() {
        problems.push(Problem::in_file(
            &table.path,
            "the channels table has no rows",
        ));
    }
    out
}

/// Quality marks, checked against participants, recordings and channels.
pub fn quality(
    table: &RawTable,
    members: &[Member],
    channels: &[Channel],
    problems: &mut Problems,
) -> Vec<QualityMark> {
    let path: PathBuf = table.path.clone();
    let by_participant = table.has("participant");
    let by_recording = table.has("recording");
    if !by_participant && !by_recording {
        problems.push(Problem::in_file(
            &path,
            "missing required column `participant` or `recording`",
        ));
        return Vec::new();
    }
    if !require_columns(table, &["channel", "status"], problems) {
        return Vec::new();
    }
    let mut out = Vec::new();
    for r in 0..table.height() {
        let row = r + 1;
        let target = match (
            text_cell(table, "participant", r),
            text_cell(table, "recording", r),
        ) {
            (Some(p), _) => {
                if !members.is_empty() && !members.iter().any(|m| m.participant == p) {
                    problems.push(
                        Problem::in_file(&path, format!("unknown participant \"{p}\""))
                            .row(row)
                            .column(table.written_name("participant")),
                    );
                    continue;
                }
                QualityTarget::Participant(p)
            }
            (None, Some(rec)) => {
                if !members.is_empty() && !members.iter().any(|m| m.recording == rec) {
                    problems.push(
                        Problem::in_file(&path, format!("unknown recording \"{rec}\""))
                            .row(row)
                            .column(table.written_name("recording")),
                    );
                    continue;
                }
                QualityTarget::Recording(rec)
            }
            (None, None) => {
                problems.push(
                    Problem::in_file(&path, "row names neither a participant nor a recording")
                        .row(row),
                );
                continue;
            }
        };
        let Some(channel) = required_cell(table, "channel", r, problems) else {
            continue;
        };
        if !channels.iter().any(|c| c.name == channel) {
            problems.push(
                Problem::in_file(&path, format!("unknown channel \"{channel}\""))
                    .row(row)
                    .column(table.written_name("channel"))
                    .hint("channels must be listed in the channels table"),
            );
            continue;
        }
        let Some(status) = required_cell(table, "status", r, problems) else {
            continue;
        };
        let bad = match status.as_str() {
            "good" => false,
            "bad" => true,
            other => {
                problems.push(
                    Problem::in_file(&path, format!("status \"{other}\" must be good or bad"))
                        .row(row)
                        .column(table.written_name("status")),
                );
                continue;
            }
        };
        out.push(QualityMark {
            target,
            channel,
            bad,
            row,
        });
    }
    out
}
