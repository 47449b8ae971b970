//! The readable summary `check` prints, built from whatever the loader could read.

use std::collections::BTreeMap;
use std::fmt;

use super::config::Config;
use super::tables::{Channel, Dyad, Event, Member};
use super::windows::ConditionWindows;

#[derive(Clone, Debug, Default, PartialEq)]
pub struct Summary {
    pub name: String,
    pub mode: String,
    pub dyads: usize,
    pub members: usize,
    /// Participants recorded in more than one dyad, with their dyads.
    pub repeated: Vec<(String, Vec<String>)>,
    pub sampling_hz: Option<f64>,
    /// Condition, blocks, and the analysed block lengths (s).
    pub conditions: Vec<(String, usize, Vec<f64>)>,
    pub rois: Vec<(String, Vec<String>)>,
    /// Member id and its bad channel columns.
    pub bad: Vec<(String, Vec<String>)>,
    /// What the study's `[study] allow_*` keys let through.
    pub allowances: Vec<String>,
}

impl Summary {
    #[allow(clippy::too_many_arguments)]
    pub fn fill(
        &mut self,
        config: &Config,
        members: &[Member],
        dyads: &[Dyad],
        channels: &[Channel],
        rois: &[String],
        events: &[Event],
        windows: &[ConditionWindows],
        bad: &[Vec<bool>],
        dt: f64,
        column_names: &[String],
    ) {
        self.mode = match config.pairing.mode {
            super::config::PairingMode::Roles => {
                format!("roles ({})", config.pairing.roles.join(" × "))
            }
            super::config::PairingMode::Peers => "peers".to_string(),
        };
        self.dyads = dyads.len();
        self.members = members.len();
        let mut by_participant: BTreeMap<&str, Vec<String>> = BTreeMap::new();
        for m in members {
            let dyad = dyads.get(m.dyad).map(|d| d.id.clone()).unwrap_or_default();
            by_participant.entry(&m.participant).or_default().push(dyad);
        }
        self.repeated = by_participant
            .into_iter()
            .filter(|(_, d)| d.len() > 1)
            .map(|(p, d)| (p.to_string(), d))
            .collect();
        self.sampling_hz = dt.is_finite().then(|| 1.0 / dt);
        self.conditions = if windows.is_empty() {
            super::tables::condition_names(events)
                .into_iter()
                .map(|n| (n, 0, Vec::new()))
                .collect()
        } else {
            windows
                .iter()
                .map(|c| {
                    (
                        c.name.clone(),
                        c.blocks.len(),
                        c.blocks.iter().map(|b| b.length as f64 * dt).collect(),
                    )
                })
                .collect()
        };
        self.rois = rois
            .iter()
            .map(|r| {
                (
                    r.clone(),
                    channels
                        .iter()
                        .filter(|c| &c.roi == r)
                        .map(|c| c.name.clone())
                        .collect(),
                )
            })
            .collect();
        self.bad = members
            .iter()
            .enumerate()
            .filter_map(|(i, m)| {
                let cols: Vec<String> = bad
                    .get(i)?
                    .iter()
                    .enumerate()
                    .filter(|(_, b)| **b)
                    .map(|(s, _)| column_names[s].clone())
                    .collect();
                (!cols.is_empty()).then(|| (m.id.clone(), cols))
            })
            .collect();
    }
}

impl fmt::Display for Summary {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        writeln!(f, "study {}", self.name)?;
        writeln!(f, "  pairing mode   {}", self.mode)?;
        writeln!(f, "  dyads          {}", self.dyads)?;
        writeln!(f, "  members        {}", self.members)?;
        if self.repeated.is_empty() {
            writeln!(
                f,
                "  repeated       no participant is in more than one dyad"
            )?;
        } else {
            for (p, d) in &self.repeated {
                writeln!(
                    f,
                    "  repeated       participant {p} in dyads {}",
                    d.join(", ")
                )?;
            }
        }
        match self.sampling_hz {
            Some(hz) => writeln!(f, "  sampling       {hz:.4} Hz")?,
            None => writeln!(f, "  sampling       unknown (no recording could be read)")?,
        }
        for (name, n, lengths) in &self.conditions {
            let l: Vec<String> = lengths.iter().map(|x| format!("{x:.1}")).collect();
            writeln!(
                f,
                "  condition      {name}: {n} block(s), analysed lengths {} s",
                l.join(", ")
            )?;
        }
        for (roi, ch) in &self.rois {
            writeln!(
                f,
                "  roi            {roi}: {} channel(s) ({})",
                ch.len(),
                ch.join(", ")
            )?;
        }
        if self.bad.is_empty() {
            writeln!(f, "  bad channels   none")?;
        } else {
            for (m, cols) in &self.bad {
                writeln!(f, "  bad channels   {m}: {}", cols.join(", "))?;
            }
        }
        for a in &self.allowances {
            writeln!(f, "  allowed        {a}")?;
        }
        Ok(())
    }
}
