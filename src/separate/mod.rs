//! Beat-class separation: how well a beat description (the built-in windows, a user's feature
//! table, their PCA scores or diffusion coordinates) separates the beat classes of expert
//! reference labels, within one record and across patients.
//!
//! In: records with reference beat labels (read through [`crate::io`]), checked
//! [`AnalyzeParams`] and [`SeparateParams`], optionally a per-beat feature table
//! ([`crate::io::beat_table`]). Out: a [`Separation`] with, per feature set and space, the
//! confusion matrix and per-class Se, +P, F1 of a k-nearest-neighbour vote and a rank
//! separation index ([`vote`]).
//!
//! Parts: [`classes`] (the five classes of the EC57 grouping and the class of each detected
//! beat), [`beats`] (the labelled beats of one record, table rows matched to them),
//! [`vote`] (vote and scores), [`protocol`] (within-record and inter-patient runs, after de
//! Chazal, O'Dwyer & Reilly 2004 for the record split).
//!
//! A research bench for comparing beat descriptions, not a beat classifier: its numbers describe
//! features on benchmark records, never a patient.

pub mod beats;
pub mod classes;
pub mod figure;
pub mod protocol;
pub mod vote;

pub use beats::{labelled_beats, BeatCounts, LabelledBeats};
pub use classes::BeatClass;
pub use protocol::{
    inter_patient, within_record, MapView, Protocol, SeparateParams, Separation, Space, TableMode,
};

use crate::error::Result;
use crate::io::{self, beat_table::BeatTable, ReadOptions};
use crate::pipeline::AnalyzeParams;
use rayon::prelude::*;
use serde_json::{json, Value};
use std::path::PathBuf;

/// Record split of de Chazal, O'Dwyer & Reilly (2004), first set (the fit set here). From
/// memory; written out in docs/references.md.
pub const DS1: [&str; 22] = [
    "101", "106", "108", "109", "112", "114", "115", "116", "118", "119", "122", "124", "201",
    "203", "205", "207", "208", "209", "215", "220", "223", "230",
];
/// Second set of the same split (the test set here).
pub const DS2: [&str; 22] = [
    "100", "103", "105", "111", "113", "117", "121", "123", "200", "202", "210", "212", "213",
    "214", "219", "221", "222", "228", "231", "232", "233", "234",
];

/// What the numbers are, printed beside them.
pub const BENCH_NOTE: &str = "A research feature-evaluation bench, not a beat classifier for patients: these numbers compare beat descriptions on benchmark records.";
/// What within-record numbers are not.
pub const WITHIN_NOTE: &str = "Within-record: every beat is voted on by other beats of its own record, so these numbers do not show how a feature generalises to patients it has not seen; use the inter-patient protocol for that.";

/// Read records and label their beats, in parallel, keeping input order. Rows of `table` that
/// name a record not among `paths` are reported in the returned notes.
pub fn load_labelled(
    paths: &[PathBuf],
    opts: &ReadOptions,
    p: &AnalyzeParams,
    table: Option<&BeatTable>,
) -> Result<(Vec<LabelledBeats>, Vec<String>)> {
    p.check()?;
    if let Some(t) = table {
        if !t.has_record && paths.len() > 1 {
            return Err(crate::Error::input(
                &t.path,
                "header",
                format!(
                    "no `record` column, but {} records are read; add a column `record` naming each row's record",
                    paths.len()
                ),
            ));
        }
    }
    let beats: Vec<LabelledBeats> = paths
        .par_iter()
        .map(|path| {
            let loaded = io::read_record(path, opts)?;
            labelled_beats(&loaded.record, p, table)
        })
        .collect::<Result<_>>()?;
    let mut notes = Vec::new();
    if let Some(t) = table.filter(|t| t.has_record) {
        let mut stray: Vec<&str> = t
            .rows
            .iter()
            .filter_map(|r| r.record.as_deref())
            .filter(|name| !beats.iter().any(|b| b.record == *name))
            .collect();
        stray.sort_unstable();
        stray.dedup();
        if !stray.is_empty() {
            notes.push(format!(
                "{}: rows for records not read were ignored: {}",
                t.path.display(),
                stray.join(", ")
            ));
        }
    }
    for b in &beats {
        let c = &b.counts;
        if c.table_rows_unmatched + c.table_rows_duplicate > 0 {
            notes.push(format!(
                "record `{}`: {} feature-table rows match no detected beat and {} match a beat another row already matched (lines {:?}{})",
                b.record,
                c.table_rows_unmatched,
                c.table_rows_duplicate,
                c.table_lines_unmatched,
                if c.table_rows_unmatched + c.table_rows_duplicate > c.table_lines_unmatched.len() { " …" } else { "" }
            ));
        }
        if c.no_table_row > 0 {
            notes.push(format!(
                "record `{}`: {} labelled beats have no feature-table row and are left out of every space",
                b.record, c.no_table_row
            ));
        }
    }
    Ok((beats, notes))
}

fn num(x: f64) -> Value {
    if x.is_finite() {
        json!(x)
    } else {
        Value::Null
    }
}

impl Separation {
    /// Totals of the beat counts over records.
    pub fn totals(&self) -> BeatCounts {
        let mut t = BeatCounts::default();
        for (_, c) in &self.records {
            t.reference += c.reference;
            t.detected += c.detected;
            t.kept += c.kept;
            t.missed_reference += c.missed_reference;
            t.unmatched_detections += c.unmatched_detections;
            t.other_codes += c.other_codes;
            t.no_window += c.no_window;
            t.no_table_row += c.no_table_row;
            t.table_rows += c.table_rows;
            t.table_rows_unmatched += c.table_rows_unmatched;
            t.table_rows_duplicate += c.table_rows_duplicate;
        }
        t
    }

    /// The JSON form: `{"protocol", "spaces": {"<space>": {"classes": {"V": {"se", "ppv",
    /// "f1", "n", …}, …}, "confusion", "n"}}, …}` with the notice.
    pub fn to_json(&self) -> Value {
        let spaces: serde_json::Map<String, Value> = self
            .spaces
            .iter()
            .map(|(k, s)| {
                let classes: serde_json::Map<String, Value> = s
                    .classes
                    .iter()
                    .map(|c| {
                        (
                            c.class.name().to_string(),
                            json!({"n": c.n, "predicted": c.predicted, "tp": c.tp,
                                "se": num(c.se), "ppv": num(c.ppv), "f1": num(c.f1),
                                "rank_index": num(c.rank_index)}),
                        )
                    })
                    .collect();
                (
                    k.clone(),
                    json!({"n": s.n, "classes": classes, "confusion": s.confusion}),
                )
            })
            .collect();
        let records: serde_json::Map<String, Value> = self
            .records
            .iter()
            .map(|(n, c)| (n.clone(), json!(c)))
            .collect();
        json!({
            "protocol": self.protocol.name(),
            "notice": crate::NOTICE,
            "bench_note": BENCH_NOTE,
            "caution": (self.protocol == Protocol::WithinRecord).then_some(WITHIN_NOTE),
            "vote_neighbors": self.vote_neighbors,
            "classes_order": BeatClass::ALL.iter().map(|c| c.name()).collect::<Vec<_>>(),
            "confusion_layout": "rows: reference class, columns: voted class",
            "spaces": spaces,
            "fit_records": self.fit_records,
            "test_records": self.test_records,
            "beats": json!(self.totals()),
            "records": records,
            "notes": self.notes,
        })
    }
}
