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
pub mod neighbours;
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
    p: &crate::params::Checked<AnalyzeParams>,
    table: Option<&BeatTable>,
) -> Result<(Vec<LabelledBeats>, Vec<String>)> {
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

/// Add the group `/separation` of a results file: attributes `protocol`, `vote_neighbors`,
/// `caution`; datasets `spaces` and `classes` (names), `confusion` (`spaces × 5 × 5`, rows
/// reference class, columns voted class), and `n`, `se`, `ppv`, `f1`, `rank_index`
/// (`spaces × 5`, NaN where undefined).
pub fn add_h5_group(b: &mut hdf5_pure::FileBuilder, s: &Separation) {
    use hdf5_pure::AttrValue;
    let mut g = b.create_group("separation");
    g.set_attr(
        "protocol",
        AttrValue::VarLenString(s.protocol.name().to_string()),
    );
    g.set_attr("vote_neighbors", AttrValue::U64(s.vote_neighbors as u64));
    if s.protocol == Protocol::WithinRecord {
        g.set_attr("caution", AttrValue::VarLenString(WITHIN_NOTE.to_string()));
    }
    let names: Vec<&str> = s.spaces.iter().map(|(k, _)| k.as_str()).collect();
    let classes: Vec<&str> = BeatClass::ALL.iter().map(|c| c.name()).collect();
    let ns = s.spaces.len() as u64;
    g.create_dataset("spaces").with_vlen_strings(&names);
    g.create_dataset("classes").with_vlen_strings(&classes);
    let conf: Vec<u64> = s
        .spaces
        .iter()
        .flat_map(|(_, sc)| sc.confusion.iter().flatten().map(|&v| v as u64))
        .collect();
    g.create_dataset("confusion")
        .with_u64_data(&conf)
        .with_shape(&[ns, 5, 5]);
    let n: Vec<u64> = s
        .spaces
        .iter()
        .flat_map(|(_, sc)| sc.classes.iter().map(|c| c.n as u64))
        .collect();
    g.create_dataset("n").with_u64_data(&n).with_shape(&[ns, 5]);
    let per = |f: fn(&vote::ClassScore) -> f64| -> Vec<f64> {
        s.spaces
            .iter()
            .flat_map(|(_, sc)| sc.classes.iter().map(f))
            .collect()
    };
    for (name, f) in [
        (
            "se",
            (|c: &vote::ClassScore| c.se) as fn(&vote::ClassScore) -> f64,
        ),
        ("ppv", |c| c.ppv),
        ("f1", |c| c.f1),
        ("rank_index", |c| c.rank_index),
    ] {
        g.create_dataset(name)
            .with_f64_data(&per(f))
            .with_shape(&[ns, 5]);
    }
    b.add_group(g.finish());
}

impl Separation {
    /// An HTML section (heading, the bench note, the caution for within-record runs, one table of
    /// per-class scores and one confusion matrix per space). Holds no user text.
    pub fn html(&self) -> String {
        use std::fmt::Write as _;
        let cell = |x: f64, pct: bool| match (x.is_finite(), pct) {
            (false, _) => "–".to_string(),
            (true, true) => format!("{:.1}", 100.0 * x),
            (true, false) => format!("{x:.3}"),
        };
        let mut o = String::new();
        let _ = writeln!(
            o,
            "<h2 id=\"separation\">Beat-class separation ({})</h2>\n<p>{}</p>",
            self.protocol.name(),
            BENCH_NOTE
        );
        if self.protocol == Protocol::WithinRecord {
            let _ = writeln!(o, "<p><strong>{WITHIN_NOTE}</strong></p>");
        }
        let _ = writeln!(
            o,
            "<p>{}-nearest-neighbour vote; rank index = ROC area of the neighbour share (0.5 chance).</p>\n<table>\n<tr><th>space</th><th>class</th><th>n</th><th>Se %</th><th>+P %</th><th>F1</th><th>rank index</th></tr>",
            self.vote_neighbors
        );
        for (key, s) in &self.spaces {
            for c in s.classes.iter().filter(|c| c.n + c.predicted > 0) {
                let _ = writeln!(
                    o,
                    "<tr><td>{key}</td><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td></tr>",
                    c.class.name(),
                    c.n,
                    cell(c.se, true),
                    cell(c.ppv, true),
                    cell(c.f1, false),
                    cell(c.rank_index, false)
                );
            }
        }
        o.push_str("</table>\n");
        for (key, s) in &self.spaces {
            let _ = writeln!(
                o,
                "<table>\n<caption>Confusion, {key} (rows: reference class, columns: voted class)</caption>\n<tr><th></th><th>N</th><th>S</th><th>V</th><th>F</th><th>Q</th></tr>"
            );
            for c in BeatClass::ALL {
                let _ = write!(o, "<tr><th scope=\"row\">{}</th>", c.name());
                for v in s.confusion[c.index()] {
                    let _ = write!(o, "<td class=\"num\">{v}</td>");
                }
                o.push_str("</tr>\n");
            }
            o.push_str("</table>\n");
        }
        o
    }
}
