//! The cohort table: one row a record with its summary measures (each gated by its minimum
//! support, see `support`), its rhythm verdict, its label, its score against a reference where
//! one was given, and its status; written as CSV and as HDF5 (one dataset a column).
//!
//! In: [`Row`]s in plan order. Out: text or bytes, deterministic for the same rows (no time
//! stamps), so a sharded cohort merges to the same `cohort.csv` as a single run. Measures are
//! those of `analyze` (Task Force 1996 time-domain variability; detection Se/+P with the
//! ANSI/AAMI EC57 matching window).

use super::support::Support;
use crate::error::{Error, Result};
use crate::pipeline::Analysis;
use hdf5_pure::{AttrValue, FileBuilder};
use serde::{Deserialize, Serialize};
use std::path::Path;

/// Outcome of one record.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Status {
    /// Analysed and written.
    Ok,
    /// Could not be read, analysed or written (see [`Row::error`]).
    Error,
}

impl Status {
    /// `ok` or `error`.
    pub fn as_str(self) -> &'static str {
        match self {
            Status::Ok => "ok",
            Status::Error => "error",
        }
    }
}

/// One record's row of the cohort table. Missing measures are `None` (empty in CSV, NaN in
/// HDF5); a measure below its minimum support is missing too, with the reason in `notes`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Row {
    /// Record name (its output folder under `records/`).
    pub name: String,
    /// Group label (may be empty).
    pub group: String,
    /// The record's label from the labels file (empty when none; set by the merge).
    #[serde(default)]
    pub label: String,
    /// Outcome.
    pub status: Status,
    /// Error message (empty when ok).
    pub error: String,
    /// Rhythm verdict class (`regular`, `irregular`, `other`, `unreadable`; empty on error).
    #[serde(default)]
    pub verdict: String,
    /// Duration, seconds.
    pub duration_s: Option<f64>,
    /// Detected beats.
    pub beats: Option<usize>,
    /// Mean heart rate of the NN series, beats per minute.
    pub mean_hr_bpm: Option<f64>,
    /// SDNN, milliseconds.
    pub sdnn_ms: Option<f64>,
    /// RMSSD, milliseconds.
    pub rmssd_ms: Option<f64>,
    /// Seconds inside episodes flagged by the irregular-rhythm research screen.
    pub irregular_s: Option<f64>,
    /// Median determinism (DET) of the recurrence windows of the embedded beat trajectory.
    #[serde(default)]
    pub det: Option<f64>,
    /// The dimension shown (see `support::dimension_cell`).
    pub dimension: Option<f64>,
    /// What the dimension cell holds: the estimate's name, `insufficient` or `unresolved`.
    #[serde(default)]
    pub dimension_status: String,
    /// Reference beats, when a reference was given.
    pub reference_beats: Option<usize>,
    /// Beat sensitivity against the reference (0..1).
    pub se: Option<f64>,
    /// Beat positive predictivity against the reference (0..1).
    pub ppv: Option<f64>,
    /// Why cells are empty, one sentence each.
    #[serde(default)]
    pub notes: Vec<String>,
    /// True when the record's folder holds a full report (`report.html`).
    #[serde(default)]
    pub has_report: bool,
}

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

impl Row {
    /// The row of a finished analysis, every measure gated by `support`.
    pub fn from_analysis(name: &str, group: &str, a: &Analysis, support: &Support) -> Row {
        let irregular: f64 = a
            .screen
            .episodes
            .iter()
            .fold(0.0, |acc, e| acc + (e.end_s - e.start_s).max(0.0));
        let c = super::support::cells(a, support);
        Row {
            name: name.to_string(),
            group: group.to_string(),
            label: String::new(),
            status: Status::Ok,
            error: String::new(),
            verdict: a.verdict.class.name().to_string(),
            duration_s: finite(a.duration_s),
            beats: Some(a.beat_samples.len()),
            mean_hr_bpm: c.mean_hr_bpm,
            sdnn_ms: c.sdnn_ms,
            rmssd_ms: c.rmssd_ms,
            irregular_s: finite(irregular),
            det: c.det,
            dimension: c.dimension,
            dimension_status: c.dimension_status,
            reference_beats: a.score.as_ref().map(|s| s.reference),
            se: a.score.as_ref().and_then(|s| finite(s.se)),
            ppv: a.score.as_ref().and_then(|s| finite(s.ppv)),
            notes: c.notes,
            has_report: false,
        }
    }

    /// The row of a record that failed with `message`.
    pub fn error(name: &str, group: &str, message: &str) -> Row {
        Row {
            name: name.to_string(),
            group: group.to_string(),
            label: String::new(),
            status: Status::Error,
            error: message.to_string(),
            verdict: String::new(),
            duration_s: None,
            beats: None,
            mean_hr_bpm: None,
            sdnn_ms: None,
            rmssd_ms: None,
            irregular_s: None,
            det: None,
            dimension: None,
            dimension_status: String::new(),
            reference_beats: None,
            se: None,
            ppv: None,
            notes: Vec::new(),
            has_report: false,
        }
    }

    /// The notes as one cell: sentences joined by `; `.
    pub fn notes_text(&self) -> String {
        self.notes.join("; ")
    }

    fn floats(&self) -> [Option<f64>; 9] {
        [
            self.duration_s,
            self.mean_hr_bpm,
            self.sdnn_ms,
            self.rmssd_ms,
            self.irregular_s,
            self.det,
            self.dimension,
            self.se,
            self.ppv,
        ]
    }

    fn texts(&self) -> [String; 8] {
        [
            self.name.clone(),
            self.group.clone(),
            self.label.clone(),
            self.status.as_str().to_string(),
            self.verdict.clone(),
            self.dimension_status.clone(),
            self.notes_text(),
            self.error.clone(),
        ]
    }
}

/// Column names of `cohort.csv`, in order.
pub const COLUMNS: [&str; 19] = [
    "record",
    "group",
    "label",
    "status",
    "verdict",
    "duration_s",
    "beats",
    "mean_hr_bpm",
    "sdnn_ms",
    "rmssd_ms",
    "irregular_s",
    "det",
    "dimension",
    "dimension_status",
    "reference_beats",
    "se",
    "ppv",
    "notes",
    "error",
];

/// Names of the text columns in [`Row`]'s `texts` order (`record` is the name).
const TEXT_COLUMNS: [&str; 8] = [
    "record",
    "group",
    "label",
    "status",
    "verdict",
    "dimension_status",
    "notes",
    "error",
];

/// Names of the floating columns in [`Row`]'s `floats` order.
const FLOAT_COLUMNS: [&str; 9] = [
    "duration_s",
    "mean_hr_bpm",
    "sdnn_ms",
    "rmssd_ms",
    "irregular_s",
    "det",
    "dimension",
    "se",
    "ppv",
];

/// Quote a CSV field when it holds a comma, quote or line break (RFC 4180); line breaks
/// become spaces so a row stays one line.
fn csv_field(s: &str) -> String {
    let s = s.replace(['\n', '\r'], " ");
    if s.contains([',', '"']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s
    }
}

pub(crate) fn num(x: Option<f64>, decimals: usize) -> String {
    x.map_or(String::new(), |v| format!("{v:.decimals$}"))
}

/// `cohort.csv`: a header line of [`COLUMNS`], then one line a row. Times and measures with 3
/// decimals, Se and +P with 5.
pub fn table_csv(rows: &[Row]) -> String {
    let mut s = COLUMNS.join(",");
    s.push('\n');
    for r in rows {
        let cells = [
            csv_field(&r.name),
            csv_field(&r.group),
            csv_field(&r.label),
            r.status.as_str().to_string(),
            r.verdict.clone(),
            num(r.duration_s, 3),
            r.beats.map_or(String::new(), |b| b.to_string()),
            num(r.mean_hr_bpm, 3),
            num(r.sdnn_ms, 3),
            num(r.rmssd_ms, 3),
            num(r.irregular_s, 3),
            num(r.det, 3),
            num(r.dimension, 3),
            r.dimension_status.clone(),
            r.reference_beats.map_or(String::new(), |b| b.to_string()),
            num(r.se, 5),
            num(r.ppv, 5),
            csv_field(&r.notes_text()),
            csv_field(&r.error),
        ];
        s.push_str(&cells.join(","));
        s.push('\n');
    }
    s
}

/// `cohort.h5`: root attributes `notice` and `columns`; group `/table` with one dataset per
/// column (`record`, `group`, `label`, `status`, `verdict`, `dimension_status`, `notes` (the
/// reasons for empty cells, joined by `; `), `error` as strings; `beats`, `reference_beats` as
/// u64 with 0 where missing; the rest f64 with NaN where missing).
pub fn write_h5(rows: &[Row], path: &Path) -> Result<()> {
    let mut b = FileBuilder::new();
    b.set_attr("notice", AttrValue::VarLenString(crate::NOTICE.to_string()));
    b.set_attr("columns", AttrValue::VarLenString(COLUMNS.join(",")));
    let mut g = b.create_group("table");
    let texts: Vec<[String; 8]> = rows.iter().map(Row::texts).collect();
    for (k, name) in TEXT_COLUMNS.iter().enumerate() {
        let refs: Vec<&str> = texts.iter().map(|t| t[k].as_str()).collect();
        g.create_dataset(name).with_vlen_strings(&refs);
    }
    for (name, f) in [
        ("beats", (|r: &Row| r.beats) as fn(&Row) -> Option<usize>),
        ("reference_beats", |r: &Row| r.reference_beats),
    ] {
        let v: Vec<u64> = rows.iter().map(|r| f(r).unwrap_or(0) as u64).collect();
        g.create_dataset(name).with_u64_data(&v);
    }
    for (k, name) in FLOAT_COLUMNS.iter().enumerate() {
        let v: Vec<f64> = rows
            .iter()
            .map(|r| r.floats().get(k).copied().flatten().unwrap_or(f64::NAN))
            .collect();
        g.create_dataset(name).with_f64_data(&v);
    }
    b.add_group(g.finish());
    let bytes = b
        .finish()
        .map_err(|e| Error::output(path, format!("HDF5 encoding failed: {e}")))?;
    crate::io::write_atomic(path, &bytes)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_quotes_and_html_escapes_record_text() {
        let mut r = Row::error("a,\"b\"", "<g>", "bad\nfile");
        r.duration_s = Some(1.23456);
        let csv = table_csv(std::slice::from_ref(&r));
        let line = csv.lines().nth(1).unwrap();
        // Source: RFC 4180 section 2 (fields with commas or quotes are quoted, quotes doubled).
        assert!(
            line.starts_with("\"a,\"\"b\"\"\",<g>,,error,,1.235,"),
            "{line}"
        );
        assert!(line.ends_with(",bad file"), "{line}");
        assert_eq!(
            csv.lines().next().unwrap().split(',').count(),
            COLUMNS.len()
        );
        assert_eq!(line.matches(',').count(), COLUMNS.len() - 1 + 1);
    }
}
