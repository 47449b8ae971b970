//! The study folder → a validated [`Study`].
//!
//! Loading runs every check before any heavy work and collects every problem (see
//! `problem.rs`). Stages: parse `study.toml` (`config.rs`), read the tables (`tables.rs`),
//! read the recordings (`recordings.rs`), build the study-wide block windows (`windows.rs`),
//! then the checks that need all of them (NaN in a window, sampling rates, bands against the
//! windows). A `Study` exists only when no problem remains, so later stages never re-check.

pub mod conditions;
pub mod config;
pub mod layout;
pub mod names;
pub mod problem;
pub mod recordings;
pub mod summary;
pub mod tables;
pub mod windows;

use std::path::{Path, PathBuf};

pub use config::Config;
pub use problem::{Problem, Problems, StudyError};
pub use recordings::Recording;
pub use tables::{Channel, Dyad, Event, Member};
pub use windows::{BlockWindow, ConditionWindows};

use tables::{QualityMark, QualityTarget};

/// Sampling rates of two recordings may differ by at most this fraction.
pub const RATE_TOLERANCE: f64 = 0.001;

/// A study whose inputs passed every check.
#[derive(Clone, Debug)]
pub struct Study {
    pub config_path: PathBuf,
    pub root: PathBuf,
    pub config: Config,
    pub members: Vec<Member>,
    pub dyads: Vec<Dyad>,
    pub channels: Vec<Channel>,
    /// ROIs in first-appearance order of the channels table.
    pub rois: Vec<String>,
    pub events: Vec<Event>,
    pub recordings: Vec<Recording>,
    /// `bad[member][channel * n_chromophores + chromophore]`
    pub bad: Vec<Vec<bool>>,
    pub conditions: Vec<ConditionWindows>,
    /// Sampling interval shared by all recordings (s).
    pub dt: f64,
    /// Every input file read, for the manifest's hashes.
    pub input_files: Vec<PathBuf>,
    /// Warnings, then the notes of the allowances used (`[study] allow_*`), for the report
    /// and the manifest.
    pub warnings: Vec<String>,
    /// What the study's allowances let through, for the methods paragraph.
    pub allowances: Vec<String>,
}

impl Study {
    pub fn n_chromophores(&self) -> usize {
        self.config.synchrony.chromophores.len()
    }

    /// Index of a (channel, chromophore) signal within a recording.
    pub fn signal_index(&self, channel: usize, chromophore: usize) -> usize {
        channel * self.n_chromophores() + chromophore
    }

    /// The member's signal for one channel and chromophore, unless it is bad.
    pub fn signal(&self, member: usize, channel: usize, chromophore: usize) -> Option<&[f64]> {
        let s = self.signal_index(channel, chromophore);
        if self.bad[member][s] {
            return None;
        }
        self.recordings[member].signals[s].as_deref()
    }

    /// A channel is good for a member when it is good in every chromophore analysed.
    pub fn channel_good(&self, member: usize, channel: usize) -> bool {
        (0..self.n_chromophores()).all(|c| self.signal(member, channel, c).is_some())
    }

    pub fn roi_of(&self, channel: usize) -> usize {
        let roi = &self.channels[channel].roi;
        self.rois.iter().position(|r| r == roi).expect("roi listed")
    }
}

/// What a load found: the study when valid, and what `check` prints either way.
pub struct LoadReport {
    pub study: Option<Study>,
    pub summary: summary::Summary,
    pub problems: Problems,
    pub warnings: Vec<String>,
}

/// Loads and validates, failing with every problem found.
pub fn load(config_path: &Path) -> Result<Study, StudyError> {
    let report = load_report(config_path);
    match report.study {
        Some(s) => Ok(s),
        None => Err(StudyError {
            problems: report.problems,
        }),
    }
}

/// Loads as far as the inputs allow, collecting every problem.
pub fn load_report(config_path: &Path) -> LoadReport {
    let mut problems = Problems::default();
    let mut warnings = Vec::new();
    let mut summary = summary::Summary::default();
    let fail = |problems: Problems, summary, warnings| LoadReport {
        study: None,
        summary,
        problems,
        warnings,
    };
    let text = match std::fs::read_to_string(config_path) {
        Ok(t) => t,
        Err(e) => {
            problems.push(Problem::in_file(
                config_path,
                format!("cannot read the study file: {e}"),
            ));
            return fail(problems, summary, warnings);
        }
    };
    let root = config_path
        .parent()
        .map(Path::to_path_buf)
        .unwrap_or_else(|| PathBuf::from("."));
    let root = if root.as_os_str().is_empty() {
        PathBuf::from(".")
    } else {
        root
    };
    let fallback = std::fs::canonicalize(&root)
        .ok()
        .and_then(|p| p.file_name().map(|n| n.to_string_lossy().into_owned()))
        .unwrap_or_else(|| "study".to_string());
    let config = match config::parse_config(&text, config_path, &fallback) {
        Ok(c) => c,
        Err(p) => return fail(p, summary, warnings),
    };
    summary.name = config.name.clone();
    let mut input_files = vec![config_path.to_path_buf()];
    let inputs = &config.inputs;
    let members_path = root.join(&inputs.members);
    let events_path = root.join(&inputs.events);
    let channels_path = root.join(&inputs.channels);
    let recordings_dir = root.join(&inputs.recordings);

    let map = &inputs.columns;
    let format = &inputs.recording_format;
    let members_t = tables::read(
        &members_path,
        "members",
        &map.for_table(layout::Table::Members),
        &mut problems,
    );
    let (members, dyads) = match &members_t {
        Some(t) => tables::members(t, &config, &mut problems),
        None => (Vec::new(), Vec::new()),
    };
    input_files.push(members_path.clone());
    let events_t = tables::read(
        &events_path,
        "events",
        &map.for_table(layout::Table::Events),
        &mut problems,
    );
    let events = match &events_t {
        Some(t) => tables::events(t, &dyads, &mut problems),
        None => Vec::new(),
    };
    input_files.push(events_path.clone());
    let channels = match tables::read(
        &channels_path,
        "channels",
        &map.for_table(layout::Table::Channels),
        &mut problems,
    ) {
        Some(t) => tables::channels(&t, format.is_plain(), &mut problems),
        None => Vec::new(),
    };
    input_files.push(channels_path.clone());
    let quality: Vec<QualityMark> = match &inputs.quality {
        Some(q) => {
            let path = root.join(q);
            input_files.push(path.clone());
            match tables::read(
                &path,
                "quality",
                &map.for_table(layout::Table::Quality),
                &mut problems,
            ) {
                Some(t) => tables::quality(&t, &members, &channels, &mut problems),
                None => Vec::new(),
            }
        }
        None => Vec::new(),
    };
    let mut rois: Vec<String> = Vec::new();
    for c in &channels {
        if !rois.contains(&c.roi) {
            rois.push(c.roi.clone());
        }
    }
    let conditions = tables::condition_names(&events);
    let events_complete = events_t
        .as_ref()
        .is_some_and(|t| t.height() == events.len());
    let mut allowances = conditions::check(
        &events,
        events_complete,
        &events_path,
        map.in_files("trial_type"),
        &dyads,
        &config,
        config_path,
        &mut problems,
    );
    for c in &config.contrasts {
        for cond in &c.conditions {
            if !events.is_empty() && !conditions.contains(cond) {
                problems.push(
                    Problem::in_file(
                        config_path,
                        format!("contrast \"{}\" names unknown condition \"{cond}\"", c.name),
                    )
                    .hint(format!(
                        "conditions in the events table: {}",
                        conditions.join(", ")
                    )),
                );
            }
        }
    }

    let chromophores = &config.synchrony.chromophores;
    let column_names: Vec<String> = channels
        .iter()
        .flat_map(|ch| chromophores.iter().map(|c| format.column(&ch.name, c)))
        .collect();
    let recordings = if !members.is_empty() && !channels.is_empty() {
        let source = recordings::Source {
            members_file: &members_path,
            folder: &recordings_dir,
            pattern: inputs.recording_pattern.as_deref(),
            recording_column: map.in_files("recording"),
            format,
        };
        recordings::read_all(&members, &source, &channels, chromophores, &mut problems)
    } else {
        Vec::new()
    };
    for m in &members {
        input_files.push(recordings_dir.join(&m.recording));
    }

    // One sampling interval for the whole study.
    let mut dt = f64::NAN;
    if let Some(first) = recordings.iter().flatten().next() {
        for rec in recordings.iter().flatten() {
            if ((rec.dt - first.dt) / first.dt).abs() > RATE_TOLERANCE {
                problems.push(
                    Problem::in_file(
                        &rec.path,
                        format!(
                            "sampled at {:.4} Hz where {} is sampled at {:.4} Hz",
                            1.0 / rec.dt,
                            first.path.display(),
                            1.0 / first.dt
                        ),
                    )
                    .column(format.time_column.as_str())
                    .hint("resample every recording to one rate before analysis"),
                );
            }
        }
        let sum: f64 = recordings.iter().flatten().map(|r| r.dt).sum();
        dt = sum / recordings.iter().flatten().count() as f64;
    }

    // Bad channels: marked in the quality table, or entirely empty in the file.
    let n_chrom = chromophores.len();
    let mut bad: Vec<Vec<bool>> = vec![vec![false; channels.len() * n_chrom]; members.len()];
    for mark in quality.iter().filter(|q| q.bad) {
        let ch = channels
            .iter()
            .position(|c| c.name == mark.channel)
            .expect("checked");
        for (m, member) in members.iter().enumerate() {
            let hit = match &mark.target {
                QualityTarget::Participant(p) => &member.participant == p,
                QualityTarget::Recording(r) => &member.recording == r,
            };
            if hit {
                for c in 0..n_chrom {
                    bad[m][ch * n_chrom + c] = true;
                }
            }
        }
    }
    for (m, rec) in recordings.iter().enumerate() {
        if let Some(rec) = rec {
            for (s, sig) in rec.signals.iter().enumerate() {
                if sig.is_none() {
                    bad[m][s] = true;
                }
            }
        }
    }

    let windows = if dt.is_finite() && !events.is_empty() {
        let settings = windows::WindowSettings {
            dt,
            context_s: config.synchrony.context_s,
            allow_truncated_blocks: config.allow_truncated_blocks,
            duration_column: map.in_files("duration"),
        };
        windows::build(
            &events,
            &events_path,
            &dyads,
            &members,
            &recordings,
            &settings,
            &mut problems,
            &mut warnings,
            &mut allowances,
        )
    } else {
        Vec::new()
    };
    windows::check_nan(
        &windows,
        &members,
        &recordings,
        &column_names,
        &bad,
        &mut problems,
    );
    if dt.is_finite() {
        check_bands(&config, config_path, &windows, dt, &mut problems);
    }

    summary.fill(
        &config,
        &members,
        &dyads,
        &channels,
        &rois,
        &events,
        &windows,
        &bad,
        dt,
        &column_names,
    );
    summary.allowances = allowances.clone();
    if !problems.is_empty() {
        return fail(problems, summary, warnings);
    }
    let recordings: Vec<Recording> = recordings
        .into_iter()
        .map(|r| r.expect("no problems"))
        .collect();
    LoadReport {
        study: Some(Study {
            config_path: config_path.to_path_buf(),
            root,
            config,
            members,
            dyads,
            channels,
            rois,
            events,
            recordings,
            bad,
            conditions: windows,
            dt,
            input_files,
            warnings: warnings.iter().chain(&allowances).cloned().collect(),
            allowances,
        }),
        summary,
        problems,
        warnings,
    }
}

/// A band is usable only if its longest period can be resolved somewhere in every block: some
/// point of the block must lie outside the cone of influence of the block's segment.
fn check_bands(
    config: &Config,
    file: &Path,
    windows: &[ConditionWindows],
    dt: f64,
    problems: &mut Problems,
) {
    let factor = crate::spectral::fourier_factor(config.synchrony.omega0);
    let nyquist_period = 2.0 * dt;
    for band in &config.bands {
        if band.min_period_s < nyquist_period {
            problems.push(Problem::in_file(
                file,
                format!(
                    "band \"{}\": min_period_s {} s is below the shortest period the sampling resolves ({} s)",
                    band.name, band.min_period_s, crate::human::seconds_at(nyquist_period, dt)
                ),
            ));
        }
        let e_fold = crate::spectral::COI_EFOLD * band.max_period_s / factor;
        for cond in windows {
            for b in &cond.blocks {
                // The point of the block farthest from both segment edges.
                let n = b.segment_len();
                let best = b
                    .block_in_segment()
                    .map(|t| t.min(n - 1 - t))
                    .max()
                    .unwrap_or(0) as f64
                    * dt;
                if best < e_fold {
                    problems.push(
                        Problem::in_file(
                            file,
                            format!(
                                "band \"{}\": its longest period ({} s) cannot be resolved in block {} of \"{}\" ({} s with {} s of context each side): the cone of influence covers the whole block",
                                band.name,
                                band.max_period_s,
                                b.block,
                                cond.name,
                                crate::human::seconds_at(b.length as f64 * dt, dt),
                                crate::human::seconds_at(b.context as f64 * dt, dt)
                            ),
                        )
                        .hint(format!("use a shorter max_period_s, or more context (a point needs {e_fold:.1} s of data on each side)")),
                    );
                }
            }
        }
    }
}
