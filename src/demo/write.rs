//! Writing the demo study folder: the tables, the recordings, the study file and the truth.
//!
//! Owns the layout, names and columns of every file in the folder; tables go through
//! `crate::table`. It decides nothing about who is in the study or what the signals are.

use std::path::{Path, PathBuf};

use anyhow::Context;
use serde::Serialize;

use crate::demo::scenario::{CONDITIONS, SITES, Scenario};
use crate::demo::signals::{self, HBR_COUPLING_RATIO, HBR_EVOKED_RATIO};
use crate::demo::{DemoMode, DemoOptions};
use crate::table::{Table, WriteOptions, write_table, write_table_with};

const RECORDINGS_DIR: &str = "recordings";
const CHROMOPHORES: [&str; 2] = ["hbo", "hbr"];
/// Four decimals keep the default folder near 6 MB while staying far below the noise level.
const RECORDING_DECIMALS: usize = 4;

/// Writes every file into `out` (which exists and is empty) and returns their paths.
pub fn write_study(
    study: &Scenario,
    opts: &DemoOptions,
    out: &Path,
) -> anyhow::Result<Vec<PathBuf>> {
    let mut files = Vec::new();
    let mut put = |name: &str, table: Table| -> anyhow::Result<()> {
        let path = out.join(name);
        write_table(&table, &path)?;
        files.push(path);
        Ok(())
    };
    put("members.tsv", members_table(study))?;
    put("events.tsv", events_table(study))?;
    put("channels.tsv", channels_table(study))?;
    put("quality.tsv", quality_table(study))?;

    let dir = out.join(RECORDINGS_DIR);
    std::fs::create_dir(&dir).with_context(|| format!("cannot create {}", dir.display()))?;
    let precision = WriteOptions {
        float_precision: Some(RECORDING_DECIMALS),
    };
    for member in 0..study.members.len() {
        let path = dir.join(study.recording_name(member));
        write_table_with(&recording_table(study, member), &path, precision)?;
        files.push(path);
    }

    let toml_path = out.join("study.toml");
    std::fs::write(&toml_path, study_toml(study, opts))
        .with_context(|| format!("cannot write {}", toml_path.display()))?;
    files.push(toml_path);

    let truth_path = out.join("truth.json");
    let truth = serde_json::to_string_pretty(&truth(study)).context("cannot encode truth.json")?;
    std::fs::write(&truth_path, truth + "\n")
        .with_context(|| format!("cannot write {}", truth_path.display()))?;
    files.push(truth_path);
    Ok(files)
}

fn group_column(mode: DemoMode) -> &'static str {
    match mode {
        DemoMode::Roles => "family",
        DemoMode::Peers => "household",
    }
}

fn members_table(study: &Scenario) -> Table {
    let col = |f: &dyn Fn(usize) -> String| (0..study.members.len()).map(f).collect::<Vec<_>>();
    let m = &study.members;
    let table = Table::new()
        .text("dyad", col(&|i| study.dyads[m[i].dyad].id.clone()))
        .text("role", col(&|i| m[i].role.to_string()))
        .text("participant", col(&|i| m[i].participant.clone()))
        .text("recording", col(&|i| study.recording_name(i)))
        .text(group_column(study.mode), col(&|i| m[i].group.clone()))
        .text("site", col(&|i| SITES[study.site_of(i)].to_string()));
    match study.mode {
        DemoMode::Roles => table
            .text(
                "twin_group",
                col(&|i| m[i].twin_group.clone().unwrap_or_default()),
            )
            .text("age_group", col(&|i| m[i].age_group.to_string())),
        DemoMode::Peers => table,
    }
}

fn events_table(study: &Scenario) -> Table {
    let (mut dyad, mut onset, mut duration, mut trial_type) = (vec![], vec![], vec![], vec![]);
    for d in &study.dyads {
        for b in &d.blocks {
            dyad.push(d.id.clone());
            onset.push(b.onset);
            duration.push(b.duration);
            trial_type.push(CONDITIONS[b.condition].name.to_string());
        }
    }
    Table::new()
        .text("dyad", dyad)
        .float("onset", onset)
        .float("duration", duration)
        .text("trial_type", trial_type)
}

fn channels_table(study: &Scenario) -> Table {
    Table::new()
        .text(
            "channel",
            study.channels.iter().map(|c| c.name.clone()).collect(),
        )
        .text(
            "roi",
            study
                .channels
                .iter()
                .map(|c| study.rois()[c.roi].name.to_string())
                .collect(),
        )
}

/// One row per participant and channel; the flagged channel is `bad`, all others `good` (the
/// empty channel is left for the loader to find in the data).
fn quality_table(study: &Scenario) -> Table {
    let (flag_member, flag_channel) = study.flagged_channel;
    let flagged = &study.members[flag_member].participant;
    let (mut participant, mut channel, mut status) = (vec![], vec![], vec![]);
    for p in study.participants() {
        for (c, ch) in study.channels.iter().enumerate() {
            participant.push(p.to_string());
            channel.push(ch.name.clone());
            let bad = p == flagged && c == flag_channel;
            status.push(if bad { "bad" } else { "good" }.to_string());
        }
    }
    Table::new()
        .text("participant", participant)
        .text("channel", channel)
        .text("status", status)
}

fn recording_table(study: &Scenario, member: usize) -> Table {
    let rec = signals::synthesise(study, member);
    let mut table = Table::new().float("time", signals::time_axis(study));
    for ((channel, hbo), hbr) in study.channels.iter().zip(rec.hbo).zip(rec.hbr) {
        table = table
            .float(&format!("{}.hbo", channel.name), hbo)
            .float(&format!("{}.hbr", channel.name), hbr);
    }
    table
}

fn study_toml(study: &Scenario, opts: &DemoOptions) -> String {
    let (name, story, pairing) = match study.mode {
        DemoMode::Roles => (
            "tower-demo",
            "# Grandparent–grandchild dyads build a block tower together (joint), build side by\n\
             # side without talking (parallel) and sit quietly (rest), at two community centres.",
            "# \"roles\": a pseudo-pair joins the members of two different roles from different dyads.\n\
             mode = \"roles\"\n\
             # The two roles; every dyad has one member of each.\n\
             roles = [\"grandparent\", \"child\"]\n\
             # Members who share a value in these members-table columns are never paired: relatives\n\
             # know each other, so their synchrony is not that of people who never met.\n\
             keep_apart = [\"family\"]",
        ),
        DemoMode::Peers => (
            "tower-peers-demo",
            "# Pairs of adult strangers build a block tower together (joint), build side by side\n\
             # without talking (parallel) and sit quietly (rest), at two community centres.",
            "# \"peers\": any two members of different dyads may form a pseudo-pair.\n\
             mode = \"peers\"\n\
             # Members who share a value in these members-table columns are never paired: people\n\
             # of one household know each other.\n\
             keep_apart = [\"household\"]",
        ),
    };
    let min_channels = opts.channels_per_roi.min(2);
    format!(
        r#"# nevermet study file of a generated demo study (seed {seed}); truth.json says which
# cells carry a real effect.
{story}

[study]
# A label shown in reports.
name = "{name}"

[inputs]
# Paths are relative to this file.
# One row per member: one person's recording within one dyad.
members = "members.tsv"
# Blocks of every dyad: onset and duration in seconds from the start of its recordings.
events = "events.tsv"
# The region of interest of every channel.
channels = "channels.tsv"
# Channels judged unusable before the analysis, per participant.
quality = "quality.tsv"
# Folder of the recordings, one file per member, named in the members table.
recordings = "recordings"

[pairing]
{pairing}
# Pseudo-pairs only join members who share a value in these columns.
pair_within = ["site"]

[synchrony]
# Wavelet transform coherence between the two members' signals.
measure = "wtc"
# Which chromophores are analysed.
chromophores = ["hbo", "hbr"]
# Each channel of one member is paired with the same channel of the other.
channel_pairs = "same"
# Centre frequency of the Morlet wavelet (dimensionless).
omega0 = 6.0
# Number of wavelet scales per doubling of the period.
scales_per_octave = 12
# Seconds of recording used on each side of a block, so edge effects stay outside it.
context_s = 90
# A region is analysed for a pair only if at least this many of its channels are good.
min_channels_per_roi = {min_channels}

[[bands]]
# Coherence is averaged over this band of periods.
name = "task"
min_period_s = 10
max_period_s = 50

[inference]
# Random re-pairings that make up the permutation distribution.
permutations = 10000
# Seed of the re-pairings: the same seed gives the same results.
seed = {seed}
# Family-wise error rate.
alpha = 0.05
# Multiple-comparison correction: the maximum statistic over the family.
correction = "maxstat"
# The dimensions whose tests form one family for the correction.
family = ["band", "roi", "chromophore"]
# Bootstrap resamples for confidence intervals.
bootstrap = 2000
# The re-pairings the real pairing is compared with: "all" (every re-pairing, the real one
# among them: exact) or "pseudo-only" (pseudo-pairs only: approximate, liberal in small pools).
reference = "all"

[[contrasts]]
# Compares real-versus-pseudo synchrony between two conditions.
name = "joint-vs-parallel"
conditions = ["joint", "parallel"]
"#,
        seed = opts.seed,
    )
}

#[derive(Serialize)]
struct Truth {
    seed: u64,
    mode: &'static str,
    effect: Effect,
    null_cells: &'static str,
    /// Root-mean-square amplitude of the shared HbO component in joint blocks.
    amplitude: f64,
    hbr_coupling_ratio: f64,
    coupling_periods_s: [f64; 2],
    effect_cells: Vec<Cell>,
    cells: Vec<Cell>,
    contrasts: Vec<ContrastTruth>,
    evoked_amplitude: Vec<Evoked>,
    hbr_evoked_ratio: f64,
    noise_sd: NoiseSd,
    empty_channel: ChannelRef,
    flagged_channel: ChannelRef,
    notes: [&'static str; 3],
}

#[derive(Serialize)]
struct Effect {
    condition: &'static str,
    rois: Vec<&'static str>,
    chromophores: Vec<&'static str>,
    band: &'static str,
}

#[derive(Serialize)]
struct Evoked {
    condition: &'static str,
    amplitude: f64,
}

#[derive(Serialize)]
struct NoiseSd {
    hbo: f64,
    hbr: f64,
}

#[derive(Clone, Copy, Serialize)]
struct Cell {
    condition: &'static str,
    roi: &'static str,
    chromophore: &'static str,
    effect: bool,
}

#[derive(Serialize)]
struct ContrastTruth {
    name: &'static str,
    effect_cells: Vec<Cell>,
}

#[derive(Serialize)]
struct ChannelRef {
    dyad: String,
    participant: String,
    channel: String,
}

/// What a reader of the truth file should know about how the effect shows up.
const NOTES: [&str; 3] = [
    "the shared component is added to both members of a real dyad only, in joint blocks only, \
     faded in and out over 3 s inside each block; pseudo-pairs never share it",
    "every member carries the block-locked response of its own dyad's design, so pseudo-pairs \
     are synchronous too; the effect is real-pair synchrony above that",
    "block coherence smooths over about one period and reads context on both sides of a block, \
     so a little of the joint coupling can reach the estimates of the neighbouring parallel and \
     rest blocks, 40 s away",
];

fn truth(study: &Scenario) -> Truth {
    let rois = study.rois();
    let coupled_rois: Vec<&'static str> =
        rois.iter().filter(|r| r.coupled).map(|r| r.name).collect();
    let coupled_condition = CONDITIONS.iter().find(|c| c.coupled).map_or("", |c| c.name);
    let cells: Vec<Cell> = CONDITIONS
        .iter()
        .flat_map(|c| {
            rois.iter().flat_map(move |r| {
                CHROMOPHORES.iter().map(move |&chromophore| Cell {
                    condition: c.name,
                    roi: r.name,
                    chromophore,
                    effect: c.coupled && r.coupled && study.coupling_amplitude > 0.0,
                })
            })
        })
        .collect();
    let effect_cells = || -> Vec<Cell> { cells.iter().filter(|c| c.effect).copied().collect() };
    let channel_ref = |(member, channel): (usize, usize)| ChannelRef {
        dyad: study.dyads[study.members[member].dyad].id.clone(),
        participant: study.members[member].participant.clone(),
        channel: study.channels[channel].name.clone(),
    };
    Truth {
        seed: study.seed,
        mode: match study.mode {
            DemoMode::Roles => "roles",
            DemoMode::Peers => "peers",
        },
        effect: Effect {
            condition: coupled_condition,
            rois: coupled_rois,
            chromophores: CHROMOPHORES.to_vec(),
            band: "task",
        },
        null_cells: "every other condition × roi × chromophore",
        amplitude: study.coupling_amplitude,
        hbr_coupling_ratio: HBR_COUPLING_RATIO,
        coupling_periods_s: [
            signals::COUPLING_MIN_PERIOD_S,
            signals::COUPLING_MAX_PERIOD_S,
        ],
        effect_cells: effect_cells(),
        contrasts: vec![ContrastTruth {
            name: "joint-vs-parallel",
            effect_cells: effect_cells(),
        }],
        cells,
        evoked_amplitude: CONDITIONS
            .iter()
            .map(|c| Evoked {
                condition: c.name,
                amplitude: c.evoked,
            })
            .collect(),
        hbr_evoked_ratio: HBR_EVOKED_RATIO,
        noise_sd: NoiseSd {
            hbo: signals::NOISE_SD_HBO,
            hbr: signals::NOISE_SD_HBR,
        },
        empty_channel: channel_ref(study.empty_channel),
        flagged_channel: channel_ref(study.flagged_channel),
        notes: NOTES,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::demo::write_demo;
    use crate::table::read_table;

    fn folder_bytes(root: &Path) -> Vec<(PathBuf, Vec<u8>)> {
        let mut out = Vec::new();
        let mut stack = vec![root.to_path_buf()];
        while let Some(dir) = stack.pop() {
            for entry in std::fs::read_dir(&dir).unwrap() {
                let path = entry.unwrap().path();
                if path.is_dir() {
                    stack.push(path);
                } else {
                    let bytes = std::fs::read(&path).unwrap();
                    out.push((path.strip_prefix(root).unwrap().to_path_buf(), bytes));
                }
            }
        }
        out.sort();
        out
    }

    #[test]
    fn the_same_options_give_byte_identical_folders_and_another_seed_does_not() {
        let dir = tempfile::tempdir().unwrap();
        let opts = DemoOptions::default();
        let (a, b, c) = (
            dir.path().join("a"),
            dir.path().join("b"),
            dir.path().join("c"),
        );
        write_demo(&opts, &a).unwrap();
        write_demo(&opts, &b).unwrap();
        write_demo(
            &DemoOptions {
                seed: opts.seed + 1,
                ..opts.clone()
            },
            &c,
        )
        .unwrap();
        let (fa, fb, fc) = (folder_bytes(&a), folder_bytes(&b), folder_bytes(&c));
        assert_eq!(fa.len(), 4 + 24 + 2);
        assert!(fa == fb, "two runs with the same options differ");
        let differing: Vec<&PathBuf> = fa
            .iter()
            .zip(&fc)
            .filter(|(x, y)| x.1 != y.1)
            .map(|(x, _)| &x.0)
            .collect();
        // Every recording, the events and the seed-bearing files change with the seed.
        assert_eq!(differing.len(), 24 + 3, "{differing:?}");
    }

    #[test]
    fn the_default_folder_stays_well_under_ten_megabytes() {
        let dir = tempfile::tempdir().unwrap();
        let summary = write_demo(&DemoOptions::default(), dir.path()).unwrap();
        let total: u64 = folder_bytes(dir.path())
            .iter()
            .map(|(_, b)| b.len() as u64)
            .sum();
        println!(
            "default demo folder: {total} bytes in {} files",
            summary.files.len()
        );
        assert!(total < 10_000_000, "{total} bytes");
        assert_eq!(summary.dyads, 12);
        assert_eq!(summary.members, 24);
        assert_eq!(summary.files.len(), 30);
        assert!(
            summary
                .files
                .iter()
                .all(|f| f.is_file() && f.starts_with(dir.path()))
        );
    }

    fn cells(path: &Path, column: &str) -> Vec<Option<String>> {
        let raw = read_table(path).unwrap();
        let col = raw
            .column(column)
            .unwrap_or_else(|| panic!("{column} in {}", path.display()));
        (0..raw.height()).map(|r| col.text(r)).collect()
    }

    #[test]
    fn tables_have_the_documented_columns_and_structure() {
        let dir = tempfile::tempdir().unwrap();
        write_demo(&DemoOptions::default(), dir.path()).unwrap();
        let members = read_table(&dir.path().join("members.tsv")).unwrap();
        let expected = [
            "dyad",
            "role",
            "participant",
            "recording",
            "family",
            "site",
            "twin_group",
            "age_group",
        ];
        assert_eq!(members.headers, expected);
        assert_eq!(members.height(), 24);
        let m = |c: &str| cells(&dir.path().join("members.tsv"), c);
        let (dyad, participant, family, site, twin) = (
            m("dyad"),
            m("participant"),
            m("family"),
            m("site"),
            m("twin_group"),
        );
        let g101: Vec<_> = (0..24)
            .filter(|&i| participant[i].as_deref() == Some("g101"))
            .collect();
        assert_eq!(g101.len(), 2);
        assert_ne!(dyad[g101[0]], dyad[g101[1]]);
        let twins: Vec<_> = (0..24).filter(|&i| twin[i].is_some()).collect();
        assert_eq!(twins.len(), 2, "twin_group is empty for everyone else");
        assert_eq!(family[twins[0]], family[twins[1]]);
        assert_ne!(
            site[g101[0]], site[twins[0]],
            "multi-dyad families at both sites"
        );
        for s in ["harbour", "hillside"] {
            assert_eq!(site.iter().filter(|x| x.as_deref() == Some(s)).count(), 12);
        }
        for r in m("recording").iter().flatten() {
            assert!(dir.path().join("recordings").join(r).is_file(), "{r}");
        }

        let events = read_table(&dir.path().join("events.tsv")).unwrap();
        assert_eq!(events.headers, ["dyad", "onset", "duration", "trial_type"]);
        assert_eq!(events.height(), 12 * 9);
        let channels = read_table(&dir.path().join("channels.tsv")).unwrap();
        assert_eq!(channels.headers, ["channel", "roi"]);
        let names = cells(&dir.path().join("channels.tsv"), "channel");
        let names: Vec<&str> = names.iter().flatten().map(String::as_str).collect();
        assert_eq!(names, ["pf1", "pf2", "tp1", "tp2", "oc1", "oc2"]);

        let status = cells(&dir.path().join("quality.tsv"), "status");
        let bad: Vec<usize> = (0..status.len())
            .filter(|&i| status[i].as_deref() == Some("bad"))
            .collect();
        assert_eq!(bad.len(), 1);
        let qp = cells(&dir.path().join("quality.tsv"), "participant");
        let qc = cells(&dir.path().join("quality.tsv"), "channel");
        assert_eq!(
            (qp[bad[0]].as_deref(), qc[bad[0]].as_deref()),
            (Some("c204"), Some("oc2"))
        );
        assert_eq!(status.len(), 23 * 6, "23 people (g101 twice) × 6 channels");
    }

    #[test]
    fn recordings_hold_the_synthesised_signals_and_the_empty_channel() {
        let dir = tempfile::tempdir().unwrap();
        let opts = DemoOptions::default();
        write_demo(&opts, dir.path()).unwrap();
        let study = Scenario::build(&opts);
        let path = dir.path().join("recordings").join("t10_g110.csv");
        let raw = read_table(&path).unwrap();
        let mut headers = vec!["time".to_string()];
        for ch in ["pf1", "pf2", "tp1", "tp2", "oc1", "oc2"] {
            headers.push(format!("{ch}.hbo"));
            headers.push(format!("{ch}.hbr"));
        }
        assert_eq!(raw.headers, headers);
        assert_eq!(raw.height(), 3200, "800 s at 4 Hz");
        let number = |col: &str, row: usize| -> Option<f64> {
            raw.column(col)
                .unwrap()
                .text(row)
                .map(|t| t.parse().unwrap())
        };
        assert_eq!(number("time", 0), Some(0.0));
        assert_eq!(number("time", 1), Some(0.25));
        assert_eq!(number("time", 2359), Some(589.75));
        for row in 0..raw.height() {
            assert_eq!(number("tp1.hbo", row), None, "tp1 of g110 in t10 is empty");
            assert_eq!(number("tp1.hbr", row), None);
        }
        let member = study
            .members
            .iter()
            .position(|m| m.participant == "g110")
            .unwrap();
        let rec = signals::synthesise(&study, member);
        for row in [0, 1, 500, 2359] {
            let v = number("pf2.hbo", row).unwrap();
            assert!((v - rec.hbo[1][row]).abs() <= 0.5e-4 + 1e-12, "row {row}");
            let v = number("oc1.hbr", row).unwrap();
            assert!((v - rec.hbr[4][row]).abs() <= 0.5e-4 + 1e-12, "row {row}");
        }
    }

    #[test]
    fn study_file_has_exactly_the_loader_keys() {
        let dir = tempfile::tempdir().unwrap();
        write_demo(&DemoOptions::default(), dir.path()).unwrap();
        let text = std::fs::read_to_string(dir.path().join("study.toml")).unwrap();
        let doc: toml::Table = toml::from_str(&text).unwrap();
        let keys = |t: &toml::Table| t.keys().cloned().collect::<Vec<_>>();
        let top: Vec<String> = keys(&doc);
        let mut sorted = top.clone();
        sorted.sort();
        assert_eq!(
            sorted,
            [
                "bands",
                "contrasts",
                "inference",
                "inputs",
                "pairing",
                "study",
                "synchrony"
            ]
        );
        let table = |k: &str| doc[k].as_table().unwrap().clone();
        let mut pairing = keys(&table("pairing"));
        pairing.sort();
        assert_eq!(pairing, ["keep_apart", "mode", "pair_within", "roles"]);
        assert_eq!(doc["pairing"]["mode"].as_str(), Some("roles"));
        assert_eq!(doc["synchrony"]["omega0"].as_float(), Some(6.0));
        assert_eq!(
            doc["synchrony"]["min_channels_per_roi"].as_integer(),
            Some(2)
        );
        assert_eq!(doc["inference"]["seed"].as_integer(), Some(20261201));
        assert_eq!(doc["bands"][0]["max_period_s"].as_integer(), Some(50));
        assert_eq!(
            doc["contrasts"][0]["conditions"].as_array().unwrap().len(),
            2
        );
        for key in ["members", "events", "channels", "quality", "recordings"] {
            let p = doc["inputs"][key].as_str().unwrap();
            assert!(dir.path().join(p).exists(), "{key} = {p}");
        }
    }

    #[test]
    fn peers_folder_uses_households_and_no_roles() {
        let dir = tempfile::tempdir().unwrap();
        let opts = DemoOptions {
            mode: DemoMode::Peers,
            ..Default::default()
        };
        write_demo(&opts, dir.path()).unwrap();
        let members = read_table(&dir.path().join("members.tsv")).unwrap();
        assert_eq!(
            members.headers,
            [
                "dyad",
                "role",
                "participant",
                "recording",
                "household",
                "site"
            ]
        );
        let text = std::fs::read_to_string(dir.path().join("study.toml")).unwrap();
        let doc: toml::Table = toml::from_str(&text).unwrap();
        assert_eq!(doc["pairing"]["mode"].as_str(), Some("peers"));
        assert!(doc["pairing"].get("roles").is_none());
        let keep: Vec<&str> = doc["pairing"]["keep_apart"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_str().unwrap())
            .collect();
        assert_eq!(keep, ["household"]);
        let recordings = std::fs::read_dir(dir.path().join("recordings"))
            .unwrap()
            .count();
        assert_eq!(recordings, 24);
    }

    #[test]
    fn other_sizes_rates_and_channel_counts_are_written_consistently() {
        let dir = tempfile::tempdir().unwrap();
        for (i, (dyads, hz, cpr)) in [(8, 10.0, 1), (14, 2.5, 3)].into_iter().enumerate() {
            let out = dir.path().join(format!("s{i}"));
            let opts = DemoOptions {
                dyads,
                sampling_hz: hz,
                channels_per_roi: cpr,
                ..Default::default()
            };
            let summary = write_demo(&opts, &out).unwrap();
            assert_eq!(summary.members, 2 * dyads);
            let channels = cells(&out.join("channels.tsv"), "channel");
            assert_eq!(channels.len(), 3 * cpr);
            let raw = read_table(&out.join("recordings").join("t01_g101.csv")).unwrap();
            assert_eq!(raw.headers.len(), 1 + 2 * 3 * cpr);
            assert_eq!(
                raw.height(),
                (800.0 * hz) as usize,
                "the default schedule needs 800 s"
            );
            let step: f64 = raw
                .column("time")
                .unwrap()
                .text(1)
                .unwrap()
                .parse()
                .unwrap();
            assert!((step - 1.0 / hz).abs() < 1e-9, "time step {step}");
            let text = std::fs::read_to_string(out.join("study.toml")).unwrap();
            let doc: toml::Table = toml::from_str(&text).unwrap();
            let min = doc["synchrony"]["min_channels_per_roi"]
                .as_integer()
                .unwrap();
            assert_eq!(
                min,
                cpr.min(2) as i64,
                "a region never needs more channels than it has"
            );
        }
    }

    #[test]
    fn truth_lists_the_effect_cells() {
        let dir = tempfile::tempdir().unwrap();
        write_demo(&DemoOptions::default(), dir.path()).unwrap();
        let text = std::fs::read_to_string(dir.path().join("truth.json")).unwrap();
        let v: serde_json::Value = serde_json::from_str(&text).unwrap();
        assert_eq!(v["seed"], 20261201);
        assert_eq!(v["effect"]["condition"], "joint");
        assert_eq!(v["effect"]["band"], "task");
        let cells = v["cells"].as_array().unwrap();
        assert_eq!(cells.len(), 3 * 3 * 2);
        let effect: Vec<String> = cells
            .iter()
            .filter(|c| c["effect"] == true)
            .map(|c| {
                format!("{}/{}/{}", c["condition"], c["roi"], c["chromophore"]).replace('"', "")
            })
            .collect();
        assert_eq!(
            effect,
            [
                "joint/prefrontal/hbo",
                "joint/prefrontal/hbr",
                "joint/temporoparietal/hbo",
                "joint/temporoparietal/hbr"
            ]
        );
        assert_eq!(v["effect_cells"].as_array().unwrap().len(), 4);
        assert_eq!(v["empty_channel"]["participant"], "g110");
        assert_eq!(v["flagged_channel"]["channel"], "oc2");
    }
}
