//! Condition labels and block counts, checked before any window is built.
//!
//! A label is a condition's only name, so a label written two ways (`Together`, `together`)
//! would silently become two conditions, and a dyad missing a condition would silently drop
//! out of it. Both are errors that name the labels, the file and the rows. A study whose
//! dyads really lack blocks says so with `[study] allow_missing_blocks`; the allowance is then
//! recorded as a note for `check`, the report and the methods paragraph.

use std::collections::BTreeMap;
use std::path::Path;

use super::config::{Config, nearest};
use super::names::{normalize, same_label};
use super::problem::{Problem, Problems};
use super::tables::{Dyad, Event};

/// Where a label is used: its rows (1-based data rows) and its dyads, in table order.
struct Usage {
    label: String,
    rows: Vec<usize>,
    dyads: Vec<usize>,
}

/// "row 5", "rows 5, 9 and 12", "rows 5, 9, 12, 14, 20, 22, … (9 rows)".
fn rows_text(rows: &[usize]) -> String {
    const SHOWN: usize = 6;
    match rows {
        [one] => format!("row {one}"),
        _ if rows.len() <= SHOWN => {
            let list: Vec<String> = rows.iter().map(ToString::to_string).collect();
            let (init, last) = list.split_at(list.len() - 1);
            format!("rows {} and {}", init.join(", "), last[0])
        }
        _ => {
            let list: Vec<String> = rows[..SHOWN].iter().map(ToString::to_string).collect();
            format!("rows {}, … ({} rows)", list.join(", "), rows.len())
        }
    }
}

/// "dyad t03" or "dyads t03, t05 and t09"; "12 dyads" when long.
fn dyads_text(ids: &[&str]) -> String {
    match ids {
        [one] => format!("dyad {one}"),
        _ if ids.len() <= 6 => {
            let (init, last) = ids.split_at(ids.len() - 1);
            format!("dyads {} and {}", init.join(", "), last[0])
        }
        _ => format!("{} dyads", ids.len()),
    }
}

fn usages(events: &[Event]) -> Vec<Usage> {
    let mut out: Vec<Usage> = Vec::new();
    for e in events {
        let i = match out.iter().position(|u| u.label == e.condition) {
            Some(i) => i,
            None => {
                out.push(Usage {
                    label: e.condition.clone(),
                    rows: Vec::new(),
                    dyads: Vec::new(),
                });
                out.len() - 1
            }
        };
        out[i].rows.push(e.row);
        if !out[i].dyads.contains(&e.dyad) {
            out[i].dyads.push(e.dyad);
        }
    }
    out
}

fn where_used(u: &Usage, dyads: &[Dyad]) -> String {
    let ids: Vec<&str> = u.dyads.iter().map(|&d| dyads[d].id.as_str()).collect();
    format!("{}; {}", rows_text(&u.rows), dyads_text(&ids))
}

/// Checks the labels and block counts. Block counts are checked only when `complete` (every
/// row of the events table was read): a row refused for its own problem would otherwise
/// reappear as a missing block. Returns the notes of the allowances used.
#[allow(clippy::too_many_arguments)]
pub fn check(
    events: &[Event],
    complete: bool,
    events_file: &Path,
    trial_type_column: &str,
    dyads: &[Dyad],
    config: &Config,
    config_file: &Path,
    problems: &mut Problems,
) -> Vec<String> {
    let used = usages(events);
    let mut doubtful: Vec<&str> = Vec::new();
    let problem = |message: String| {
        Problem::in_file(events_file, message).column(trial_type_column.to_string())
    };
    match &config.conditions {
        Some(expected) => {
            let names: Vec<&str> = expected.iter().map(String::as_str).collect();
            for u in used.iter().filter(|u| !expected.contains(&u.label)) {
                doubtful.push(&u.label);
                let p = match expected.iter().find(|e| same_label(e, &u.label)) {
                    Some(e) => problem(format!(
                        "condition \"{}\" ({}) is the expected condition \"{e}\" written differently (case, spaces, hyphens or underscores)",
                        u.label,
                        where_used(u, dyads)
                    ))
                    .hint(format!("write it \"{e}\", as [study] conditions in study.toml does")),
                    None => problem(format!(
                        "condition \"{}\" ({}) is not one of [study] conditions ({})",
                        u.label,
                        where_used(u, dyads),
                        names.join(", ")
                    ))
                    .hint(match nearest(&u.label, &names) {
                        Some(n) => format!("did you mean \"{n}\"? Otherwise add it to [study] conditions"),
                        None => "add it to [study] conditions, or correct the label".to_string(),
                    }),
                };
                problems.push(p);
            }
            // With rows refused for other reasons (or none read), absence proves nothing.
            for e in expected.iter().filter(|_| complete && !events.is_empty()) {
                if !used.iter().any(|u| &u.label == e) {
                    problems.push(
                        Problem::in_file(
                            config_file,
                            format!("[study] conditions names \"{e}\", which no row of the events table has"),
                        )
                        .hint(format!("events table: {}", events_file.display())),
                    );
                }
            }
        }
        None => {
            let mut groups: BTreeMap<String, Vec<&Usage>> = BTreeMap::new();
            for u in &used {
                groups.entry(normalize(&u.label)).or_default().push(u);
            }
            for u in &used {
                let group = &groups[&normalize(&u.label)];
                if group.len() < 2 || !std::ptr::eq(group[0], u) {
                    continue;
                }
                let listed: Vec<String> = group
                    .iter()
                    .map(|g| format!("\"{}\" ({})", g.label, where_used(g, dyads)))
                    .collect();
                doubtful.extend(group.iter().map(|g| g.label.as_str()));
                problems.push(
                    problem(format!(
                        "condition labels {} differ only in case, spaces, hyphens or underscores, so they would be analysed as different conditions",
                        listed.join(" and ")
                    ))
                    .hint("write one spelling in the events table; list the conditions in study.toml ([study] conditions = [...]) to have every label checked"),
                );
            }
        }
    }
    if !complete {
        return Vec::new();
    }
    block_counts(
        events,
        events_file,
        trial_type_column,
        dyads,
        config,
        &used,
        &doubtful,
        problems,
    )
}

/// Every dyad with events has as many blocks of each condition as the dyad that has most;
/// otherwise an error, or a note when the study allows missing blocks.
#[allow(clippy::too_many_arguments)]
fn block_counts(
    events: &[Event],
    events_file: &Path,
    trial_type_column: &str,
    dyads: &[Dyad],
    config: &Config,
    used: &[Usage],
    doubtful: &[&str],
    problems: &mut Problems,
) -> Vec<String> {
    let mut notes = Vec::new();
    let labels: Vec<&str> = used.iter().map(|u| u.label.as_str()).collect();
    let with_events: Vec<usize> = (0..dyads.len())
        .filter(|d| events.iter().any(|e| e.dyad == *d))
        .collect();
    for u in used
        .iter()
        .filter(|u| !doubtful.contains(&u.label.as_str()))
    {
        let count = |d: usize| {
            events
                .iter()
                .filter(|e| e.dyad == d && e.condition == u.label)
                .count()
        };
        let most = with_events.iter().map(|&d| count(d)).max().unwrap_or(0);
        let short: Vec<(usize, usize)> = with_events
            .iter()
            .map(|&d| (d, count(d)))
            .filter(|&(_, n)| n < most)
            .collect();
        if short.is_empty() {
            continue;
        }
        let listed: Vec<String> = short
            .iter()
            .map(|&(d, n)| format!("dyad {} has {n}", dyads[d].id))
            .collect();
        if config.allow_missing_blocks {
            for &(d, n) in &short {
                notes.push(format!(
                    "dyad {} has {n} of the {most} blocks of \"{}\"; its missing blocks are left out (allowed by [study] allow_missing_blocks)",
                    dyads[d].id, u.label
                ));
            }
            continue;
        }
        let others: Vec<&str> = labels.iter().copied().filter(|l| *l != u.label).collect();
        let typo = if u.dyads.len() * 2 <= with_events.len() {
            nearest(&u.label, &others)
                .map(|n| format!("is \"{}\" a misspelling of \"{n}\"? ", u.label))
                .unwrap_or_default()
        } else {
            String::new()
        };
        problems.push(
            Problem::in_file(
                events_file,
                format!(
                    "condition \"{}\" ({}) has {most} block(s) in some dyads but fewer in others: {}; those dyads would silently drop out of its blocks",
                    u.label,
                    where_used(u, dyads),
                    listed.join(", ")
                ),
            )
            .column(trial_type_column.to_string())
            .hint(format!(
                "{typo}if the blocks are really missing, say so in study.toml: [study] allow_missing_blocks = true"
            )),
        );
    }
    notes
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::study::config::parse_config;

    fn config(extra: &str) -> Config {
        let text = format!(
            "[study]\n{extra}\n[inputs]\nmembers = \"m.tsv\"\nevents = \"e.tsv\"\nchannels = \"c.tsv\"\n[pairing]\nroles = [\"a\", \"b\"]\n"
        );
        parse_config(&text, Path::new("study.toml"), "s").unwrap()
    }

    fn dyads(n: usize) -> Vec<Dyad> {
        (0..n)
            .map(|i| Dyad {
                id: format!("d{}", i + 1),
                members: [2 * i, 2 * i + 1],
            })
            .collect()
    }

    /// Two blocks of "together" and one of "apart" per dyad, rows in table order.
    fn events(labels: &[(usize, &str)]) -> Vec<Event> {
        labels
            .iter()
            .enumerate()
            .map(|(i, (d, c))| Event {
                dyad: *d,
                onset: 10.0 * i as f64,
                duration: 5.0,
                condition: (*c).to_string(),
                row: i + 1,
            })
            .collect()
    }

    fn run(evs: &[Event], cfg: &Config) -> (Problems, Vec<String>) {
        let mut p = Problems::default();
        let notes = check(
            evs,
            true,
            Path::new("events.tsv"),
            "trial_type",
            &dyads(3),
            cfg,
            Path::new("study.toml"),
            &mut p,
        );
        (p, notes)
    }

    fn base(third: &str) -> Vec<Event> {
        events(&[
            (0, "together"),
            (0, "apart"),
            (1, "together"),
            (1, "apart"),
            (2, third),
            (2, "apart"),
        ])
    }

    #[test]
    fn a_label_in_another_case_is_an_error_naming_both_and_their_rows() {
        let (p, _) = run(&base("Together"), &config(""));
        let text = p.to_string();
        assert_eq!(p.len(), 1, "{text}");
        assert!(
            text.contains("\"together\" (rows 1 and 3; dyads d1 and d2)"),
            "{text}"
        );
        assert!(text.contains("\"Together\" (row 5; dyad d3)"), "{text}");
        assert!(text.contains("differ only in case"), "{text}");
        assert!(text.contains("events.tsv"), "{text}");
    }

    #[test]
    fn listed_conditions_name_the_expected_spelling() {
        let cfg = config("conditions = [\"together\", \"apart\"]");
        let (p, _) = run(&base("Together"), &cfg);
        let text = p.to_string();
        assert!(
            text.contains("is the expected condition \"together\" written differently"),
            "{text}"
        );
        let (p, _) = run(&base("togethr"), &cfg);
        assert!(p.to_string().contains("did you mean \"together\"?"), "{p}");
        let (p, _) = run(
            &base("together"),
            &config("conditions = [\"together\", \"apart\", \"rest\"]"),
        );
        assert!(
            p.to_string().contains("names \"rest\", which no row"),
            "{p}"
        );
        assert!(run(&base("together"), &cfg).0.is_empty());
    }

    #[test]
    fn a_missing_block_is_an_error_unless_allowed() {
        let evs = events(&[
            (0, "together"),
            (0, "apart"),
            (1, "together"),
            (1, "apart"),
            (2, "apart"),
        ]);
        let (p, notes) = run(&evs, &config(""));
        let text = p.to_string();
        assert!(text.contains("condition \"together\" (rows 1 and 3; dyads d1 and d2) has 1 block(s) in some dyads but fewer in others: dyad d3 has 0"), "{text}");
        assert!(text.contains("allow_missing_blocks = true"), "{text}");
        assert!(notes.is_empty());
        let (p, notes) = run(&evs, &config("allow_missing_blocks = true"));
        assert!(p.is_empty(), "{p}");
        assert_eq!(
            notes,
            vec![
                "dyad d3 has 0 of the 1 blocks of \"together\"; its missing blocks are left out (allowed by [study] allow_missing_blocks)"
            ]
        );
    }

    #[test]
    fn row_lists_stay_short() {
        assert_eq!(rows_text(&[4]), "row 4");
        assert_eq!(rows_text(&[1, 2, 3]), "rows 1, 2 and 3");
        assert_eq!(
            rows_text(&[1, 2, 3, 4, 5, 6, 7, 8]),
            "rows 1, 2, 3, 4, 5, 6, … (8 rows)"
        );
    }
}
