//! Events + recordings → one study-wide analysis window per block.
//!
//! The k-th block of a condition gets the same length and the same context in every member's
//! recording: the length is the shortest duration of that block across dyads, the context is
//! `context_s` shortened to what every recording has. Every member's segment for the block then
//! has the same number of samples, so one member's cached transform lines up with any partner's,
//! and a real pair is computed exactly like a pseudo-pair.

use std::collections::BTreeMap;
use std::ops::Range;
use std::path::Path;

use super::problem::{Problem, Problems};
use super::recordings::Recording;
use super::tables::{Dyad, Event, Member};
use crate::human;

/// Block durations that differ by more than this fraction across dyads are an error unless
/// the study allows truncated blocks.
pub const DURATION_SPREAD: f64 = 0.10;

/// What the window builder reads besides the tables and recordings.
pub struct WindowSettings<'a> {
    pub dt: f64,
    pub context_s: f64,
    pub allow_truncated_blocks: bool,
    /// The events table's `duration` column as the file writes it, for messages.
    pub duration_column: &'a str,
}

/// The study-wide window of one block.
#[derive(Clone, Debug, PartialEq)]
pub struct BlockWindow {
    /// 1-based within its condition.
    pub block: usize,
    /// Samples in the block itself.
    pub length: usize,
    /// Samples of context on each side.
    pub context: usize,
    /// Per member: the sample index where the block starts in that member's recording
    /// (`None` when the member's dyad has no such block).
    pub starts: Vec<Option<usize>>,
}

impl BlockWindow {
    pub fn segment_len(&self) -> usize {
        self.length + 2 * self.context
    }

    /// The member's segment (block plus context) as sample indices of its recording.
    pub fn segment(&self, member: usize) -> Option<Range<usize>> {
        let s = self.starts[member]?;
        Some(s - self.context..s + self.length + self.context)
    }

    /// The block inside a segment.
    pub fn block_in_segment(&self) -> Range<usize> {
        self.context..self.context + self.length
    }
}

#[derive(Clone, Debug, PartialEq)]
pub struct ConditionWindows {
    pub name: String,
    pub blocks: Vec<BlockWindow>,
}

/// Builds the windows. `recordings` has one entry per member; members without a readable
/// recording are skipped (their problem is already reported).
#[allow(clippy::too_many_arguments)]
pub fn build(
    events: &[Event],
    events_file: &Path,
    dyads: &[Dyad],
    members: &[Member],
    recordings: &[Option<Recording>],
    settings: &WindowSettings,
    problems: &mut Problems,
    warnings: &mut Vec<String>,
    allowances: &mut Vec<String>,
) -> Vec<ConditionWindows> {
    let WindowSettings {
        dt,
        context_s,
        allow_truncated_blocks,
        duration_column,
    } = *settings;
    let names = super::tables::condition_names(events);
    for (d, dyad) in dyads.iter().enumerate() {
        if !events.iter().any(|e| e.dyad == d) {
            problems.push(
                Problem::in_file(events_file, "dyad has no events")
                    .dyad(&dyad.id)
                    .hint("every dyad needs its blocks in the events table"),
            );
        }
    }
    let mut out = Vec::new();
    for name in names {
        // Per dyad, this condition's blocks in onset order.
        let mut per_dyad: BTreeMap<usize, Vec<&Event>> = BTreeMap::new();
        for e in events.iter().filter(|e| e.condition == name) {
            per_dyad.entry(e.dyad).or_default().push(e);
        }
        for list in per_dyad.values_mut() {
            list.sort_by(|a, b| a.onset.total_cmp(&b.onset));
        }
        // Dyads with fewer blocks were refused or allowed by `conditions::check`.
        let n_blocks = per_dyad.values().map(Vec::len).max().unwrap_or(0);
        let mut blocks = Vec::new();
        for k in 0..n_blocks {
            let evs: Vec<&Event> = per_dyad
                .values()
                .filter_map(|l| l.get(k).copied())
                .collect();
            let shortest_e = evs
                .iter()
                .min_by(|a, b| a.duration.total_cmp(&b.duration))
                .expect("a block has events");
            let longest_e = evs
                .iter()
                .max_by(|a, b| a.duration.total_cmp(&b.duration))
                .expect("a block has events");
            let (shortest, longest) = (shortest_e.duration, longest_e.duration);
            if longest > shortest * (1.0 + DURATION_SPREAD) {
                let what = format!(
                    "block {} of \"{name}\": durations range from {} s (row {}, dyad {}) to {} s (row {}, dyad {}), more than {}% apart; every pair uses the shortest, so the longer blocks lose their ends",
                    k + 1,
                    human::seconds_at(shortest, dt),
                    shortest_e.row,
                    dyads[shortest_e.dyad].id,
                    human::seconds_at(longest, dt),
                    longest_e.row,
                    dyads[longest_e.dyad].id,
                    DURATION_SPREAD * 100.0
                );
                if allow_truncated_blocks {
                    allowances.push(format!(
                        "{what} (allowed by [study] allow_truncated_blocks)"
                    ));
                } else {
                    problems.push(
                        Problem::in_file(events_file, what)
                            .column(duration_column.to_string())
                            .hint("make the durations equal, or say so in study.toml: [study] allow_truncated_blocks = true"),
                    );
                }
            }
            let length = ((shortest / dt) + 1e-9).floor() as usize;
            let mut starts = vec![None; members.len()];
            let mut context = (context_s / dt + 1e-9).floor() as usize;
            let wanted = context;
            let mut fits = true;
            for e in &evs {
                for &m in &dyads[e.dyad].members {
                    let Some(rec) = &recordings[m] else {
                        fits = false;
                        continue;
                    };
                    let end = e.onset + e.duration;
                    if e.onset < rec.t0 - 0.5 * rec.dt || end > rec.t_end() + 0.5 * rec.dt {
                        problems.push(
                            Problem::in_file(
                                events_file,
                                format!(
                                    "block {} of \"{name}\" ({} s to {} s) runs past the recording {} ({} s to {} s)",
                                    k + 1,
                                    human::seconds_at(e.onset, dt),
                                    human::seconds_at(end, dt),
                                    rec.path.display(),
                                    human::seconds_at(rec.t0, dt),
                                    human::seconds_at(rec.t_end(), dt)
                                ),
                            )
                            .row(e.row)
                            .dyad(&dyads[e.dyad].id)
                            .member(&members[m].id),
                        );
                        fits = false;
                        continue;
                    }
                    let i0 = ((e.onset - rec.t0) / rec.dt).round() as usize;
                    if i0 + length > rec.n {
                        fits = false;
                        continue;
                    }
                    context = context.min(i0).min(rec.n - i0 - length);
                    starts[m] = Some(i0);
                }
            }
            if !fits {
                continue;
            }
            if context < wanted {
                warnings.push(format!(
                    "block {} of \"{name}\": context shortened from {} s to {} s, the most every recording has",
                    k + 1,
                    human::seconds_at(context_s, dt),
                    human::seconds_at(context as f64 * dt, dt)
                ));
            }
            blocks.push(BlockWindow {
                block: k + 1,
                length,
                context,
                starts,
            });
        }
        out.push(ConditionWindows { name, blocks });
    }
    out
}

/// A NaN inside a good channel's segment is an input error naming file, row, column and time.
pub fn check_nan(
    windows: &[ConditionWindows],
    members: &[Member],
    recordings: &[Option<Recording>],
    column_names: &[String],
    bad: &[Vec<bool>],
    problems: &mut Problems,
) {
    for (m, (member, rec)) in members.iter().zip(recordings).enumerate() {
        let Some(rec) = rec else { continue };
        for (s, signal) in rec.signals.iter().enumerate() {
            let Some(signal) = signal else { continue };
            if bad[m][s] {
                continue;
            }
            'found: for cond in windows {
                for b in &cond.blocks {
                    let Some(range) = b.segment(m) else { continue };
                    if let Some(i) = range.clone().find(|&i| signal[i].is_nan()) {
                        problems.push(
                            Problem::in_file(
                                &rec.path,
                                format!(
                                    "NaN in block {} of \"{}\" (its window with context)",
                                    b.block, cond.name
                                ),
                            )
                            .row(i + 1)
                            .column(&column_names[s])
                            .member(&member.id)
                            .time(rec.time_of(i))
                            .hint("mark the channel bad in the quality table or repair the file"),
                        );
                        break 'found;
                    }
                }
            }
        }
    }
}
