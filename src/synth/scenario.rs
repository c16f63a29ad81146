//! Named synthetic scenarios: short words for ready-made parameter sets.
//!
//! A [`Scenario`] is only a name; [`super::SynthParams::for_scenario`] turns it into numbers. The
//! three scenarios are our own choices, meant to exercise the chain on easy, mixed and hard data.

use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};

/// A ready-made synthetic recording situation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Scenario {
    /// Seated rest: 70 bpm, low noise, no irregular-rhythm episode, rare ectopic beats.
    Resting,
    /// Overnight bedside monitoring: 58 bpm, one paroxysmal irregular-rhythm episode in the
    /// middle third of the record, a few ectopic beats, mild noise.
    TelemetryNight,
    /// Walking-about recording: 85 bpm, more ectopic beats, muscle noise, electrode-motion
    /// bursts and strong baseline wander.
    AmbulatoryNoisy,
}

impl Scenario {
    /// Every scenario, in documentation order.
    pub const ALL: &'static [Scenario] = &[
        Scenario::Resting,
        Scenario::TelemetryNight,
        Scenario::AmbulatoryNoisy,
    ];

    /// The scenario's name as written on the command line and in config files (kebab case).
    pub fn name(&self) -> &'static str {
        match self {
            Scenario::Resting => "resting",
            Scenario::TelemetryNight => "telemetry-night",
            Scenario::AmbulatoryNoisy => "ambulatory-noisy",
        }
    }

    /// Parse a scenario name (exact, kebab case); the error lists the known names.
    pub fn from_name(s: &str) -> Result<Scenario> {
        Scenario::ALL
            .iter()
            .copied()
            .find(|sc| sc.name() == s)
            .ok_or_else(|| {
                let names: Vec<&str> = Scenario::ALL.iter().map(|sc| sc.name()).collect();
                Error::param(
                    "scenario",
                    format!("unknown scenario {s:?}; known: {}", names.join(", ")),
                )
            })
    }

    /// One-line description for help texts and reports.
    pub fn description(&self) -> &'static str {
        match self {
            Scenario::Resting => {
                "seated rest: 70 bpm, low noise, regular rhythm, rare premature ectopic beats"
            }
            Scenario::TelemetryNight => {
                "overnight monitoring: 58 bpm, one irregular-rhythm episode in the middle third, \
                 a few premature ectopic beats, mild noise"
            }
            Scenario::AmbulatoryNoisy => {
                "ambulatory: 85 bpm, frequent premature ectopic beats, muscle noise, \
                 electrode-motion bursts, strong baseline wander"
            }
        }
    }
}

impl std::fmt::Display for Scenario {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}
