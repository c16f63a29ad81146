//! The in-memory recording every reader produces and every stage consumes.
//!
//! A [`Record`] holds one or more leads sampled at one rate, in physical units, plus any reference
//! annotations that came with it (expert beat labels and rhythm intervals from an annotation file,
//! or the exact ground truth of a synthetic recording).

use serde::{Deserialize, Serialize};

/// One lead (channel) of a recording, in physical units.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Lead {
    /// Lead name, e.g. `"II"` or `"lead0"`.
    pub name: String,
    /// Physical unit, e.g. `"mV"`.
    pub unit: String,
    /// Samples in `unit`.
    pub samples: Vec<f64>,
}

/// A reference beat: sample index (at the record's `fs_hz`) and a one-letter beat code.
///
/// Codes follow common practice of open annotated ECG databases: `N` normal, `V` premature
/// ventricular, `A` premature supraventricular, `Q` unclassifiable.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct BeatAnnotation {
    /// Sample index of the beat's fiducial point (R peak for synthetic data).
    pub sample: usize,
    /// One-letter beat code.
    pub code: char,
}

/// A labelled rhythm interval `[start_s, end_s)` in seconds from the record start.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RhythmInterval {
    /// Start, seconds from record start.
    pub start_s: f64,
    /// End (exclusive), seconds from record start.
    pub end_s: f64,
    /// Rhythm label. beatfold's synthetic data uses [`RHYTHM_REGULAR`] and [`RHYTHM_IRREGULAR`];
    /// annotation files carry their own labels (e.g. `AFIB`).
    pub label: String,
}

/// Rhythm label for regular (sinus-like) stretches of synthetic data.
pub const RHYTHM_REGULAR: &str = "regular";
/// Rhythm label for irregular-rhythm episodes of synthetic data.
pub const RHYTHM_IRREGULAR: &str = "irregular";

/// Rhythm intervals from rhythm changes `(time_s, label)` in time order: each label holds from
/// its change to the next change, the last one to `end_s`.
pub fn rhythm_intervals(changes: &[(f64, String)], end_s: f64) -> Vec<RhythmInterval> {
    changes
        .iter()
        .enumerate()
        .map(|(i, (start_s, label))| RhythmInterval {
            start_s: *start_s,
            end_s: changes.get(i + 1).map_or(end_s, |next| next.0),
            label: label.clone(),
        })
        .collect()
}

/// Reference annotations of a record (possibly empty).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Annotations {
    /// Reference beats in increasing sample order.
    pub beats: Vec<BeatAnnotation>,
    /// Rhythm intervals, non-overlapping, in time order.
    pub rhythms: Vec<RhythmInterval>,
}

impl Annotations {
    /// True when there is neither a beat nor a rhythm label.
    pub fn is_empty(&self) -> bool {
        self.beats.is_empty() && self.rhythms.is_empty()
    }
}

/// A recording: leads at a common sampling rate, with optional reference annotations.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Record {
    /// Record name (file stem or scenario name). Untrusted text: escape before display.
    pub name: String,
    /// Sampling rate in Hz, shared by all leads.
    pub fs_hz: f64,
    /// Leads; all have the same number of samples.
    pub leads: Vec<Lead>,
    /// Start date/time as given by the source, if any.
    pub start_time: Option<String>,
    /// Reference annotations (empty when none).
    pub annotations: Annotations,
}

impl Record {
    /// Number of samples per lead (0 for a record without leads).
    pub fn n_samples(&self) -> usize {
        self.leads.first().map_or(0, |l| l.samples.len())
    }

    /// Duration in seconds.
    pub fn duration_s(&self) -> f64 {
        if self.fs_hz > 0.0 {
            self.n_samples() as f64 / self.fs_hz
        } else {
            0.0
        }
    }

    /// Find a lead by name or by zero-based index given as text.
    pub fn find_lead(&self, key: &str) -> Option<usize> {
        if let Some(i) = self.leads.iter().position(|l| l.name == key) {
            return Some(i);
        }
        key.parse::<usize>().ok().filter(|&i| i < self.leads.len())
    }
}
