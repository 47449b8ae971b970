//! Who is in the demo study and what they did: dyads, members, families or households, sites,
//! regions and channels, the block design of every dyad and the recording length it needs, and
//! the two deliberately faulty channels.
//!
//! Owns the invented ids and the structure that exercises the pairing rules. It draws only the
//! event timings at random and must not synthesise signals or touch the file system.
//!
//! Ids carry two digits (`t01`, `g101`, …) up to 99 dyads and three (`t001`, `g1001`, …) in a
//! larger study, so every id of one study has the same width and sorts in dyad order.
//!
//! Roles mode (grandparent–grandchild dyads `t01`, `t02`, …, half at each site, the first site
//! taking the odd one of an odd count):
//! - grandparent `g1NN` and child `c2NN` in dyad `tNN`, each in family `fNN`;
//! - at the first site, grandparent `g101` is in `t01` and `t02`, with the siblings `c201` and
//!   `c202`, all of family `f01`;
//! - at the second site, the first two dyads hold twins (twin group `tw1`), each with a
//!   different grandparent of the same family;
//! - every other dyad is a family of its own.
//!
//! Peers mode (adult strangers `s01`, `s02`, …): adults `p1NN` and `p2NN` in dyad `sNN`, each
//! a household `hNN…` of their own, except that `p101` is recorded in `s01` and `s02`, and the
//! first adults of the first two dyads at the second site share one household.

use rand::RngExt;

use crate::demo::{DemoMode, DemoOptions, Purpose, stream};

/// A region of interest and the prefix of its channel names.
pub struct Roi {
    pub name: &'static str,
    pub prefix: &'static str,
    /// Whether real partners share a slow component here during coupled conditions.
    pub coupled: bool,
}

/// The regions a demo can have, taken in this order: a study with `rois = n` has the first n.
/// The default three carry one null region (occipital); the fourth, central, is a second null
/// region, so a four-region study has two regions with a real effect and two without.
pub const ROIS: [Roi; 4] = [
    Roi {
        name: "prefrontal",
        prefix: "pf",
        coupled: true,
    },
    Roi {
        name: "temporoparietal",
        prefix: "tp",
        coupled: true,
    },
    Roi {
        name: "occipital",
        prefix: "oc",
        coupled: false,
    },
    Roi {
        name: "central",
        prefix: "ce",
        coupled: false,
    },
];

/// A task condition, its block-locked response amplitude and whether it carries coupling.
pub struct Condition {
    pub name: &'static str,
    pub evoked: f64,
    pub coupled: bool,
}

pub const CONDITIONS: [Condition; 3] = [
    Condition {
        name: "joint",
        evoked: 1.0,
        coupled: true,
    },
    Condition {
        name: "parallel",
        evoked: 0.9,
        coupled: false,
    },
    Condition {
        name: "rest",
        evoked: 0.0,
        coupled: false,
    },
];

pub const SITES: [&str; 2] = ["harbour", "hillside"];

/// Block design: onsets every block length + PAUSE_S seconds from FIRST_ONSET_S, which leaves
/// more than the 90 s of analysis context before the first block, whatever the dyad's shift.
/// The pause is long enough that the coherence smoothing of one block reaches little into the
/// next.
pub const FIRST_ONSET_S: f64 = 100.0;
pub const PAUSE_S: f64 = 40.0;
/// Recording after the planned end of the last block: the 90 s of analysis context, the
/// largest schedule shift, and time for the block-locked response to die away.
pub const TAIL_S: f64 = 110.0;
/// Seconds of recording a schedule needs: first onset, every block with the pauses between
/// them, and the tail. The default design (3 conditions × 3 blocks of 30 s) gives 800 s.
pub fn recording_s(block_s: f64, blocks_per_condition: usize) -> f64 {
    let blocks = (CONDITIONS.len() * blocks_per_condition) as f64;
    FIRST_ONSET_S + blocks * block_s + (blocks - 1.0) * PAUSE_S + TAIL_S
}

/// Digits of the numbers in every id: two up to 99 dyads, more only when the study needs them.
pub fn id_width(dyads: usize) -> usize {
    dyads.to_string().len().max(2)
}

/// Largest shift of a dyad's whole schedule against its recording start, in whole seconds so
/// that every onset falls on a sample for any integer sampling rate.
const DYAD_SHIFT_S: i64 = 2;

pub struct Channel {
    pub name: String,
    pub roi: usize,
}

pub struct Member {
    pub dyad: usize,
    pub role: &'static str,
    pub participant: String,
    /// Family (roles mode) or household (peers mode): members of one group are never paired.
    pub group: String,
    pub twin_group: Option<String>,
    pub age_group: &'static str,
}

pub struct Block {
    pub condition: usize,
    pub onset: f64,
    pub duration: f64,
}

pub struct Dyad {
    pub id: String,
    pub site: usize,
    pub members: [usize; 2],
    pub blocks: Vec<Block>,
}

pub struct Scenario {
    pub mode: DemoMode,
    pub seed: u64,
    pub sampling_hz: f64,
    pub samples: usize,
    /// How many of [`ROIS`] the study has (the first ones).
    pub roi_count: usize,
    pub dyads: Vec<Dyad>,
    pub members: Vec<Member>,
    pub channels: Vec<Channel>,
    /// (member, channel) whose recording columns are entirely empty.
    pub empty_channel: (usize, usize),
    /// (member, channel) marked bad in the quality table (for that member's participant).
    pub flagged_channel: (usize, usize),
    /// RMS amplitude of the real-pair coupling in HbO (0 for a null study).
    pub coupling_amplitude: f64,
}

impl Scenario {
    pub fn build(opts: &DemoOptions) -> Scenario {
        // The first site takes the odd dyad of an odd count.
        let second_site_first = opts.dyads.div_ceil(2);
        let width = id_width(opts.dyads);
        let mut dyads = Vec::with_capacity(opts.dyads);
        let mut members = Vec::with_capacity(2 * opts.dyads);
        for index in 0..opts.dyads {
            let site = usize::from(index >= second_site_first);
            let site_first = site * second_site_first;
            let pair = match opts.mode {
                DemoMode::Roles => roles_pair(index, site, site_first, width),
                DemoMode::Peers => peers_pair(index, site, site_first, width),
            };
            let first = members.len();
            for mut member in pair {
                member.dyad = index;
                members.push(member);
            }
            let prefix = match opts.mode {
                DemoMode::Roles => "t",
                DemoMode::Peers => "s",
            };
            dyads.push(Dyad {
                id: format!("{prefix}{:0width$}", index + 1),
                site,
                members: [first, first + 1],
                blocks: schedule(opts, index),
            });
        }
        let channels = ROIS[..opts.rois]
            .iter()
            .enumerate()
            .flat_map(|(roi, r)| {
                (1..=opts.channels_per_roi).map(move |k| Channel {
                    name: format!("{}{k}", r.prefix),
                    roi,
                })
            })
            .collect();
        let cpr = opts.channels_per_roi;
        let recording = recording_s(opts.block_s, opts.blocks_per_condition);
        Scenario {
            mode: opts.mode,
            seed: opts.seed,
            sampling_hz: opts.sampling_hz,
            samples: (recording * opts.sampling_hz).round() as usize,
            roi_count: opts.rois,
            // First member of the fourth dyad at the second site, first temporoparietal channel
            // (first channel of the only region in a one-region study).
            empty_channel: (
                dyads[second_site_first + 3].members[0],
                cpr * opts.rois.min(2).saturating_sub(1),
            ),
            // Second member of the fourth dyad at the first site, last occipital channel (last
            // channel of the last region in a study with fewer than three).
            flagged_channel: (dyads[3].members[1], opts.rois.min(3) * cpr - 1),
            coupling_amplitude: super::signals::COUPLING_AMPLITUDE * opts.coupling,
            dyads,
            members,
            channels,
        }
    }

    /// The regions of this study, in channel order.
    pub fn rois(&self) -> &'static [Roi] {
        &ROIS[..self.roi_count]
    }

    pub fn site_of(&self, member: usize) -> usize {
        self.dyads[self.members[member].dyad].site
    }

    /// Participants in order of first appearance, each once.
    pub fn participants(&self) -> Vec<&str> {
        let mut seen: Vec<&str> = Vec::new();
        for m in &self.members {
            if !seen.contains(&m.participant.as_str()) {
                seen.push(&m.participant);
            }
        }
        seen
    }

    /// The name a member's recording file has inside the recordings folder.
    pub fn recording_name(&self, member: usize) -> String {
        let m = &self.members[member];
        format!("{}_{}.csv", self.dyads[m.dyad].id, m.participant)
    }
}

fn member(role: &'static str, participant: String, group: String) -> Member {
    Member {
        dyad: 0,
        role,
        participant,
        group,
        twin_group: None,
        age_group: "",
    }
}

/// Grandparent and child of dyad `index`; the first two dyads of each site carry the
/// multi-dyad families.
fn roles_pair(index: usize, site: usize, site_first: usize, width: usize) -> [Member; 2] {
    let num = index + 1;
    let in_site_family = index < site_first + 2;
    let family = if in_site_family {
        format!("f{:0width$}", site_first + 1)
    } else {
        format!("f{num:0width$}")
    };
    let grandparent_num = if site == 0 && index == 1 { 1 } else { num };
    let mut grandparent = member(
        "grandparent",
        format!("g1{grandparent_num:0width$}"),
        family.clone(),
    );
    grandparent.age_group = "older";
    let mut child = member("child", format!("c2{num:0width$}"), family);
    child.age_group = "younger";
    if site == 1 && in_site_family {
        child.twin_group = Some("tw1".to_string());
    }
    [grandparent, child]
}

/// Two adult strangers of dyad `index`.
fn peers_pair(index: usize, site: usize, site_first: usize, width: usize) -> [Member; 2] {
    let num = index + 1;
    let first_num = if site == 0 && index == 1 { 1 } else { num };
    let first_household = if site == 1 && index < site_first + 2 {
        format!("h1{:0width$}", site_first + 1)
    } else {
        format!("h1{first_num:0width$}")
    };
    let mut first = member("adult", format!("p1{first_num:0width$}"), first_household);
    let mut second = member(
        "adult",
        format!("p2{num:0width$}"),
        format!("h2{num:0width$}"),
    );
    first.age_group = "adult";
    second.age_group = "adult";
    [first, second]
}

/// The blocks of one dyad (three per condition by default), cycling joint, parallel, rest, all
/// of the chosen length. Every dyad keeps the same
/// order, block lengths and pauses, shifted as a whole against its recording start: a real
/// pair shares its exact timing, so any timing difference between dyads would hand real pairs
/// an advantage from the task-evoked response alone (block coherence reaches into the
/// surrounding context), in every condition. The analysis aligns windows on each dyad's own
/// onsets, so a whole-schedule shift costs nothing and still exercises that alignment.
fn schedule(opts: &DemoOptions, dyad: usize) -> Vec<Block> {
    const ORDER: [usize; 3] = [0, 1, 2];
    let mut rng = stream(opts.seed, Purpose::Events, dyad, 0);
    let shift = rng.random_range(-DYAD_SHIFT_S..=DYAD_SHIFT_S) as f64;
    let slot = opts.block_s + PAUSE_S;
    (0..ORDER.len() * opts.blocks_per_condition)
        .map(|k| Block {
            condition: ORDER[k % ORDER.len()],
            onset: round_to_hundredth(FIRST_ONSET_S + slot * k as f64 + shift),
            duration: opts.block_s,
        })
        .collect()
}

fn round_to_hundredth(x: f64) -> f64 {
    (x * 100.0).round() / 100.0
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::collections::BTreeSet;

    fn roles() -> Scenario {
        Scenario::build(&DemoOptions::default())
    }

    fn dyads_of<'a>(s: &'a Scenario, participant: &str) -> Vec<&'a str> {
        s.members
            .iter()
            .filter(|m| m.participant == participant)
            .map(|m| s.dyads[m.dyad].id.as_str())
            .collect()
    }

    #[test]
    fn one_grandparent_sits_in_two_dyads_with_sibling_grandchildren() {
        let s = roles();
        assert_eq!(dyads_of(&s, "g101"), vec!["t01", "t02"]);
        let children: Vec<&Member> = s
            .members
            .iter()
            .filter(|m| m.role == "child" && (m.dyad == 0 || m.dyad == 1))
            .collect();
        assert_eq!(children.len(), 2);
        assert_ne!(children[0].participant, children[1].participant);
        assert_eq!(
            children[0].group, children[1].group,
            "siblings share a family"
        );
        assert_eq!(children[0].twin_group, None, "the siblings are not twins");
        let g101 = s.members.iter().find(|m| m.participant == "g101").unwrap();
        assert_eq!(g101.group, children[0].group);
        // Exactly one person appears in more than one dyad.
        let repeated: Vec<&str> = s
            .participants()
            .into_iter()
            .filter(|p| dyads_of(&s, p).len() > 1)
            .collect();
        assert_eq!(repeated, vec!["g101"]);
    }

    #[test]
    fn twins_each_have_a_different_grandparent_of_their_family() {
        let s = roles();
        let twins: Vec<&Member> = s
            .members
            .iter()
            .filter(|m| m.twin_group.is_some())
            .collect();
        assert_eq!(twins.len(), 2);
        assert_eq!(twins[0].twin_group, twins[1].twin_group);
        assert_eq!(twins[0].group, twins[1].group);
        assert_ne!(twins[0].dyad, twins[1].dyad);
        let grandparent = |twin: &Member| {
            let d = &s.dyads[twin.dyad];
            &s.members[d.members[0]]
        };
        let (a, b) = (grandparent(twins[0]), grandparent(twins[1]));
        assert_eq!(a.role, "grandparent");
        assert_ne!(a.participant, b.participant);
        assert_eq!(a.group, twins[0].group);
        assert_eq!(b.group, twins[0].group);
        // The twins' family is at the other site from g101's.
        let g101 = s
            .members
            .iter()
            .position(|m| m.participant == "g101")
            .unwrap();
        let twin = s
            .members
            .iter()
            .position(|m| m.twin_group.is_some())
            .unwrap();
        assert_ne!(s.site_of(g101), s.site_of(twin));
    }

    #[test]
    fn both_sites_hold_half_the_dyads_and_every_dyad_has_both_roles() {
        let s = roles();
        for site in 0..2 {
            assert_eq!(s.dyads.iter().filter(|d| d.site == site).count(), 6);
        }
        for d in &s.dyads {
            let roles: Vec<&str> = d.members.iter().map(|&m| s.members[m].role).collect();
            assert_eq!(roles, vec!["grandparent", "child"], "{}", d.id);
        }
        let families: BTreeSet<&str> = s.members.iter().map(|m| m.group.as_str()).collect();
        assert_eq!(
            families.len(),
            10,
            "two two-dyad families and eight single-dyad ones"
        );
    }

    /// Counts complete re-pairings at one site by exact enumeration of the permutations that
    /// give each grandparent a child of another dyad and another family.
    fn count_repairings(s: &Scenario, site: usize) -> usize {
        let dyads: Vec<&Dyad> = s.dyads.iter().filter(|d| d.site == site).collect();
        let n = dyads.len();
        let ok = |i: usize, j: usize| {
            let g = &s.members[dyads[i].members[0]];
            let c = &s.members[dyads[j].members[1]];
            i != j && g.group != c.group
        };
        fn walk(i: usize, used: &mut Vec<bool>, ok: &dyn Fn(usize, usize) -> bool) -> usize {
            if i == used.len() {
                return 1;
            }
            let mut total = 0;
            for j in 0..used.len() {
                if !used[j] && ok(i, j) {
                    used[j] = true;
                    total += walk(i + 1, used, ok);
                    used[j] = false;
                }
            }
            total
        }
        walk(0, &mut vec![false; n], &ok)
    }

    #[test]
    fn the_smallest_study_still_admits_complete_repairings_at_each_site() {
        for dyads in [8, 9, 12] {
            let s = Scenario::build(&DemoOptions {
                dyads,
                ..Default::default()
            });
            for site in 0..2 {
                assert!(count_repairings(&s, site) > 0, "{dyads} dyads, site {site}");
            }
        }
        // With three dyads a site would have none: the two dyads of the shared family both
        // need the third dyad's child. Checked on the rule itself with a hand-built site.
        let mut s = Scenario::build(&DemoOptions {
            dyads: 8,
            ..Default::default()
        });
        s.dyads.retain(|d| d.id != "t04");
        assert_eq!(count_repairings(&s, 0), 0);
    }

    #[test]
    fn peers_have_one_adult_in_two_dyads_and_one_shared_household() {
        let s = Scenario::build(&DemoOptions {
            mode: DemoMode::Peers,
            ..Default::default()
        });
        assert_eq!(dyads_of(&s, "p101"), vec!["s01", "s02"]);
        assert!(s.members.iter().all(|m| m.role == "adult"));
        let mut households: std::collections::BTreeMap<&str, BTreeSet<&str>> = Default::default();
        for m in &s.members {
            households
                .entry(&m.group)
                .or_default()
                .insert(&m.participant);
        }
        let shared: Vec<_> = households.values().filter(|p| p.len() > 1).collect();
        assert_eq!(shared.len(), 1, "one household with two adults");
        let people: Vec<&&str> = shared[0].iter().collect();
        assert_ne!(dyads_of(&s, people[0]), dyads_of(&s, people[1]));
    }

    /// Checks one dyad's schedule against the design it was asked for: the count per
    /// condition, the cycle order, the block length, the pauses, and 90 s of recording on each
    /// side of the blocks.
    fn check_schedule(s: &Scenario, d: &Dyad, block_s: f64, per_condition: usize) {
        let last_time = (s.samples - 1) as f64 / s.sampling_hz;
        assert_eq!(d.blocks.len(), 3 * per_condition);
        for c in 0..3 {
            let n = d.blocks.iter().filter(|b| b.condition == c).count();
            assert_eq!(n, per_condition);
        }
        let first = &d.blocks[0];
        let last = d.blocks.last().unwrap();
        assert!(first.onset >= 90.0, "{}: first onset {}", d.id, first.onset);
        assert!(last_time - (last.onset + last.duration) >= 90.0, "{}", d.id);
        for pair in d.blocks.windows(2) {
            let pause = pair[1].onset - pair[0].onset - pair[0].duration;
            // Within 10 % of the nominal pause, plus up to 0.015 s from rounding.
            assert!(
                (pause - PAUSE_S).abs() <= 0.1 * PAUSE_S + 0.02,
                "{}: pause {pause}",
                d.id
            );
        }
        for (k, b) in d.blocks.iter().enumerate() {
            assert_eq!(b.duration, block_s, "{}", d.id);
            let planned = FIRST_ONSET_S + (block_s + PAUSE_S) * k as f64;
            assert!(
                (b.onset - planned).abs() <= 2.01,
                "{}: onset {}",
                d.id,
                b.onset
            );
        }
        let names: Vec<&str> = d
            .blocks
            .iter()
            .map(|b| CONDITIONS[b.condition].name)
            .collect();
        for cycle in names.chunks(3) {
            assert_eq!(cycle, ["joint", "parallel", "rest"], "{}", d.id);
        }
    }

    #[test]
    fn blocks_keep_the_design_and_the_context_around_it() {
        let s = roles();
        for d in &s.dyads {
            check_schedule(&s, d, 30.0, 3);
        }
        // Recording length by hand: 100 s to the first onset, 9 blocks of 30 s, 8 pauses of
        // 40 s, 110 s of tail.
        assert_eq!(s.samples, 800 * 4);
    }

    #[test]
    fn longer_blocks_stretch_the_recordings_to_fit() {
        for (block_s, per_condition, hz, seconds) in [
            // 100 + 6 × 60 + 5 × 40 + 110 = 770 s
            (60.0, 2, 10.0, 770),
            // 100 + 15 × 120 + 14 × 40 + 110 = 2570 s
            (120.0, 5, 1.0, 2570),
            // 100 + 3 × 10 + 2 × 40 + 110 = 320 s
            (10.0, 1, 2.0, 320),
        ] {
            let s = Scenario::build(&DemoOptions {
                block_s,
                blocks_per_condition: per_condition,
                sampling_hz: hz,
                ..Default::default()
            });
            assert_eq!(
                s.samples,
                seconds * hz as usize,
                "{block_s} s × {per_condition}"
            );
            for d in &s.dyads {
                check_schedule(&s, d, block_s, per_condition);
            }
        }
    }

    #[test]
    fn four_regions_add_an_uncoupled_central_region() {
        let s = Scenario::build(&DemoOptions {
            rois: 4,
            channels_per_roi: 4,
            ..Default::default()
        });
        let names: Vec<&str> = s.channels.iter().map(|c| c.name.as_str()).collect();
        assert_eq!(names.len(), 16);
        assert_eq!(names[12..], ["ce1", "ce2", "ce3", "ce4"]);
        let coupled: Vec<&str> = s
            .rois()
            .iter()
            .filter(|r| r.coupled)
            .map(|r| r.name)
            .collect();
        assert_eq!(coupled, ["prefrontal", "temporoparietal"]);
        // The faulty channels stay where the three-region study has them.
        assert_eq!(s.channels[s.empty_channel.1].name, "tp1");
        assert_eq!(s.channels[s.flagged_channel.1].name, "oc4");
    }

    #[test]
    fn fewer_regions_keep_both_faulty_channels_inside_the_study() {
        for (rois, cpr, empty, flagged) in [
            (1, 1, "pf1", "pf1"),
            (1, 3, "pf1", "pf3"),
            (2, 2, "tp1", "tp2"),
        ] {
            let s = Scenario::build(&DemoOptions {
                rois,
                channels_per_roi: cpr,
                ..Default::default()
            });
            assert_eq!(s.channels.len(), rois * cpr);
            assert_eq!(s.channels[s.empty_channel.1].name, empty);
            assert_eq!(s.channels[s.flagged_channel.1].name, flagged);
            assert_ne!(
                s.empty_channel.0, s.flagged_channel.0,
                "two different members"
            );
        }
    }

    #[test]
    fn an_odd_count_gives_the_first_site_one_dyad_more() {
        let s = Scenario::build(&DemoOptions {
            dyads: 35,
            ..Default::default()
        });
        let site_of = |id: &str| s.dyads.iter().find(|d| d.id == id).unwrap().site;
        assert_eq!(s.dyads.iter().filter(|d| d.site == 0).count(), 18);
        assert_eq!(s.dyads.iter().filter(|d| d.site == 1).count(), 17);
        assert_eq!((site_of("t18"), site_of("t19")), (0, 1));
        // The second site's twins open it, in the family named after its first dyad.
        assert_eq!(twins(&s), [("t19", "f19"), ("t20", "f19")]);
        let empty = &s.members[s.empty_channel.0];
        assert_eq!(
            s.dyads[empty.dyad].id, "t22",
            "fourth dyad of the second site"
        );
        assert_eq!(dyads_of(&s, "g101"), vec!["t01", "t02"]);
    }

    /// (dyad, family) of every twin, in member order.
    fn twins(s: &Scenario) -> Vec<(&str, &str)> {
        s.members
            .iter()
            .filter(|m| m.twin_group.is_some())
            .map(|m| (s.dyads[m.dyad].id.as_str(), m.group.as_str()))
            .collect()
    }

    #[test]
    fn ids_grow_to_three_digits_only_above_ninety_nine_dyads() {
        assert_eq!(id_width(8), 2);
        assert_eq!(id_width(98), 2);
        assert_eq!(id_width(100), 3);
        assert_eq!(id_width(998), 3);
        let narrow = Scenario::build(&DemoOptions {
            dyads: 98,
            ..Default::default()
        });
        assert_eq!(narrow.dyads[97].id, "t98");
        let s = Scenario::build(&DemoOptions {
            dyads: 140,
            ..Default::default()
        });
        let ids: Vec<&str> = s.dyads.iter().map(|d| d.id.as_str()).collect();
        assert_eq!(ids[..2], ["t001", "t002"]);
        assert_eq!(ids[139], "t140");
        let mut sorted = ids.clone();
        sorted.sort();
        assert_eq!(sorted, ids, "ids sort in dyad order");
        assert_eq!(dyads_of(&s, "g1001"), vec!["t001", "t002"]);
        // Every id of one kind has one width: dyads t + 3, participants g1/c2 + 3, families f + 3.
        assert!(s.dyads.iter().all(|d| d.id.len() == 4));
        assert!(s.members.iter().all(|m| m.participant.len() == 5));
        assert!(s.members.iter().all(|m| m.group.len() == 4));
        // The family structure of the small study carries over: the second site starts at
        // t071, whose family f071 holds the twins of t071 and t072.
        assert_eq!(twins(&s), [("t071", "f071"), ("t072", "f071")]);
        let families: BTreeSet<&str> = s.members.iter().map(|m| m.group.as_str()).collect();
        assert_eq!(
            families.len(),
            140 - 2,
            "two two-dyad families, the rest single"
        );
        for site in 0..2 {
            assert_eq!(s.dyads.iter().filter(|d| d.site == site).count(), 70);
        }
        let peers = Scenario::build(&DemoOptions {
            dyads: 140,
            mode: DemoMode::Peers,
            ..Default::default()
        });
        assert_eq!(dyads_of(&peers, "p1001"), vec!["s001", "s002"]);
        let shared: Vec<&str> = peers
            .members
            .iter()
            .filter(|m| m.group == "h1071")
            .map(|m| m.participant.as_str())
            .collect();
        assert_eq!(shared, ["p1071", "p1072"]);
    }
}
