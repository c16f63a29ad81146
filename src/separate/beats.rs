//! The labelled beats of one record: detected beats that a reference beat labels, with their
//! built-in feature rows and, when a feature table is given, the table's rows.
//!
//! In: a [`Record`] with reference beats, checked [`AnalyzeParams`] (detection, features, the
//! matching window) and optionally a [`BeatTable`]. Out: [`LabelledBeats`] plus counts of every
//! beat left out and why, so nothing is dropped silently.

use super::classes::{classify_detections, BeatClass};
use crate::error::{Error, Result};
use crate::features;
use crate::io::beat_table::BeatTable;
use crate::pipeline::{self, AnalyzeParams};
use crate::points::Points;
use crate::record::Record;
use serde::Serialize;

/// What happened to the beats of one record.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct BeatCounts {
    /// Reference beats (every code).
    pub reference: usize,
    /// Detected beats.
    pub detected: usize,
    /// Labelled beats kept for scoring.
    pub kept: usize,
    /// Reference beats of a class that no detection was paired with.
    pub missed_reference: usize,
    /// Detections paired with no reference beat (no class, not scored).
    pub unmatched_detections: usize,
    /// Reference beats whose code is outside the five classes.
    pub other_codes: usize,
    /// Labelled detections whose feature window leaves the record.
    pub no_window: usize,
    /// Labelled detections with a complete window but no row in the feature table.
    pub no_table_row: usize,
    /// Table rows for this record.
    pub table_rows: usize,
    /// Table rows with no detected beat within the matching window.
    pub table_rows_unmatched: usize,
    /// Table rows matching a beat that an earlier row already matched.
    pub table_rows_duplicate: usize,
    /// File lines of the first unmatched or duplicate rows.
    pub table_lines_unmatched: Vec<usize>,
}

/// The labelled beats of one record.
#[derive(Debug, Clone, PartialEq)]
pub struct LabelledBeats {
    /// Record name.
    pub record: String,
    /// Sample of each kept beat.
    pub samples: Vec<usize>,
    /// Class of each kept beat.
    pub class: Vec<BeatClass>,
    /// Built-in feature row of each kept beat.
    pub builtin: Points,
    /// Feature-table row of each kept beat, when a table was given.
    pub table: Option<Points>,
    /// Counts.
    pub counts: BeatCounts,
}

pub use crate::features::table::rows_of;

/// Detect the beats of `rec`, label them from its reference beats, describe them, and attach
/// the rows of `table` (see the module notes).
///
/// Errors: no reference beats; detection or feature errors; a table whose rows match no
/// labelled beat of the record.
pub fn labelled_beats(
    rec: &Record,
    p: &crate::params::Checked<AnalyzeParams>,
    table: Option<&BeatTable>,
) -> Result<LabelledBeats> {
    if rec.annotations.beats.is_empty() {
        return Err(Error::Analysis(format!(
            "record `{}` has no reference beat labels; scoring separation needs them (an annotation file beside the record, or --reference FILE)",
            rec.name
        )));
    }
    let b = pipeline::detect_beats(rec, p)?;
    let fs = rec.fs_hz;
    let cls = classify_detections(&rec.annotations.beats, &b.samples, fs, p.score_window_s);
    let feats = features::beat_features(&b.conditioned, fs, &b.samples, &p.features())
        .map_err(|e| Error::Analysis(format!("record `{}`: beat features: {e}", rec.name)))?;
    let mut counts = BeatCounts {
        reference: rec.annotations.beats.len(),
        detected: b.samples.len(),
        missed_reference: cls.missed_reference,
        unmatched_detections: cls.unmatched_detections,
        other_codes: cls.other_codes,
        ..BeatCounts::default()
    };
    let row_of = table.map(|t| {
        let rows = rows_of(t, &rec.name);
        counts.table_rows = rows.len();
        let (row_of, u) =
            crate::features::table::match_rows(t, &rows, &b.samples, fs, p.score_window_s);
        counts.table_rows_unmatched = u.unmatched;
        counts.table_rows_duplicate = u.duplicate;
        counts.table_lines_unmatched = u.lines;
        row_of
    });
    let mut has_window = vec![false; b.samples.len()];
    for &bi in &feats.beat_index {
        has_window[bi] = true;
    }
    counts.no_window = (0..b.samples.len())
        .filter(|&i| cls.class[i].is_some() && !has_window[i])
        .count();
    let mut keep_rows = Vec::new();
    let (mut samples, mut class, mut table_rows) = (Vec::new(), Vec::new(), Vec::new());
    for (r, &bi) in feats.beat_index.iter().enumerate() {
        let Some(c) = cls.class[bi] else { continue };
        let trow = match &row_of {
            Some(ro) => match ro[bi] {
                Some(tr) => Some(tr),
                None => {
                    counts.no_table_row += 1;
                    continue;
                }
            },
            None => None,
        };
        keep_rows.push(r);
        samples.push(b.samples[bi]);
        class.push(c);
        table_rows.extend(trow);
    }
    counts.kept = samples.len();
    let table_points = match table {
        Some(t) => {
            if table_rows.is_empty() {
                return Err(Error::input(
                    &t.path,
                    format!("record `{}`", rec.name),
                    format!(
                        "none of the {} rows for this record matches a labelled beat within {} ms",
                        counts.table_rows,
                        p.score_window_s * 1000.0
                    ),
                ));
            }
            let data = table_rows
                .iter()
                .flat_map(|&r| t.rows[r].values.iter().copied())
                .collect();
            Some(Points::new(table_rows.len(), t.names.len(), data)?)
        }
        None => None,
    };
    Ok(LabelledBeats {
        record: rec.name.clone(),
        samples,
        class,
        builtin: feats.points.select(&keep_rows),
        table: table_points,
        counts,
    })
}
