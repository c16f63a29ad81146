//! The cohort table: one row a record with its summary measures, its score against a reference
//! where one was given, and its status; written as CSV, as HDF5 (one dataset a column) and as
//! an HTML page linking every record's report.
//!
//! In: [`Row`]s in plan order. Out: text or bytes, deterministic for the same rows (no time
//! stamps), so a sharded cohort merges to the same `cohort.csv` as a single run. Measures are
//! those of `analyze` (Task Force 1996 time-domain variability; detection Se/+P with the
//! ANSI/AAMI EC57 matching window).

use super::shared::SharedEmbeddingSummary;
use crate::error::{Error, Result};
use crate::pipeline::Analysis;
use crate::report::html_escape;
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
/// HDF5).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Row {
    /// Record name (its output folder under `records/`).
    pub name: String,
    /// Group label (may be empty).
    pub group: String,
    /// Outcome.
    pub status: Status,
    /// Error message (empty when ok).
    pub error: String,
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
    /// Dimension of the plateau of the k-means quantization scaling curve.
    pub dimension: Option<f64>,
    /// Reference beats, when a reference was given.
    pub reference_beats: Option<usize>,
    /// Beat sensitivity against the reference (0..1).
    pub se: Option<f64>,
    /// Beat positive predictivity against the reference (0..1).
    pub ppv: Option<f64>,
}

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

impl Row {
    /// The row of a finished analysis.
    pub fn from_analysis(name: &str, group: &str, a: &Analysis) -> Row {
        let irregular: f64 = a
            .screen
            .episodes
            .iter()
            .fold(0.0, |acc, e| acc + (e.end_s - e.start_s).max(0.0));
        Row {
            name: name.to_string(),
            group: group.to_string(),
            status: Status::Ok,
            error: String::new(),
            duration_s: finite(a.duration_s),
            beats: Some(a.beat_samples.len()),
            mean_hr_bpm: finite(a.variability.mean_hr_bpm),
            sdnn_ms: finite(a.variability.sdnn_ms),
            rmssd_ms: finite(a.variability.rmssd_ms),
            irregular_s: finite(irregular),
            dimension: finite(a.dimension.d),
            reference_beats: a.score.as_ref().map(|s| s.reference),
            se: a.score.as_ref().and_then(|s| finite(s.se)),
            ppv: a.score.as_ref().and_then(|s| finite(s.ppv)),
        }
    }

    /// The row of a record that failed with `message`.
    pub fn error(name: &str, group: &str, message: &str) -> Row {
        Row {
            name: name.to_string(),
            group: group.to_string(),
            status: Status::Error,
            error: message.to_string(),
            duration_s: None,
            beats: None,
            mean_hr_bpm: None,
            sdnn_ms: None,
            rmssd_ms: None,
            irregular_s: None,
            dimension: None,
            reference_beats: None,
            se: None,
            ppv: None,
        }
    }

    fn floats(&self) -> [Option<f64>; 8] {
        [
            self.duration_s,
            self.mean_hr_bpm,
            self.sdnn_ms,
            self.rmssd_ms,
            self.irregular_s,
            self.dimension,
            self.se,
            self.ppv,
        ]
    }
}

/// Column names of `cohort.csv`, in order.
pub const COLUMNS: [&str; 14] = [
    "record",
    "group",
    "status",
    "error",
    "duration_s",
    "beats",
    "mean_hr_bpm",
    "sdnn_ms",
    "rmssd_ms",
    "irregular_s",
    "dimension",
    "reference_beats",
    "se",
    "ppv",
];

/// Names of the floating columns in [`Row`]'s `floats` order.
const FLOAT_COLUMNS: [&str; 8] = [
    "duration_s",
    "mean_hr_bpm",
    "sdnn_ms",
    "rmssd_ms",
    "irregular_s",
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

fn num(x: Option<f64>, decimals: usize) -> String {
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
            r.status.as_str().to_string(),
            csv_field(&r.error),
            num(r.duration_s, 3),
            r.beats.map_or(String::new(), |b| b.to_string()),
            num(r.mean_hr_bpm, 3),
            num(r.sdnn_ms, 3),
            num(r.rmssd_ms, 3),
            num(r.irregular_s, 3),
            num(r.dimension, 3),
            r.reference_beats.map_or(String::new(), |b| b.to_string()),
            num(r.se, 5),
            num(r.ppv, 5),
        ];
        s.push_str(&cells.join(","));
        s.push('\n');
    }
    s
}

/// `cohort.h5`: root attributes `notice` and `columns`; group `/table` with one dataset per
/// column (`record`, `group`, `status`, `error` as strings; `beats`, `reference_beats` as
/// u64 with 0 where missing; the rest f64 with NaN where missing).
pub fn write_h5(rows: &[Row], path: &Path) -> Result<()> {
    let mut b = FileBuilder::new();
    b.set_attr("notice", AttrValue::VarLenString(crate::NOTICE.to_string()));
    b.set_attr("columns", AttrValue::VarLenString(COLUMNS.join(",")));
    let mut g = b.create_group("table");
    let text = |f: &dyn Fn(&Row) -> &str| -> Vec<String> {
        rows.iter().map(|r| f(r).to_string()).collect()
    };
    for (name, col) in [
        ("record", text(&|r| &r.name)),
        ("group", text(&|r| &r.group)),
        ("status", text(&|r| r.status.as_str())),
        ("error", text(&|r| &r.error)),
    ] {
        let refs: Vec<&str> = col.iter().map(String::as_str).collect();
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

/// Percent-encode a record name for use in a relative link (everything but unreserved
/// characters, RFC 3986 section 2.3).
fn url_segment(s: &str) -> String {
    let mut out = String::new();
    for b in s.bytes() {
        if b.is_ascii_alphanumeric() || b"-._~".contains(&b) {
            out.push(b as char);
        } else {
            out.push_str(&format!("%{b:02X}"));
        }
    }
    out
}

/// `cohort.html`: the research-use notice first, the shared-embedding figure, then the table
/// with a link to every record's report. Every piece of record-derived text is escaped.
pub fn render_html(
    rows: &[Row],
    shared: Option<&SharedEmbeddingSummary>,
    notes: &[String],
) -> String {
    let ok = rows.iter().filter(|r| r.status == Status::Ok).count();
    let mut s = String::new();
    s.push_str("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\n");
    s.push_str("<title>beatfold cohort</title>\n<style>body{font-family:sans-serif;margin:2em;max-width:80em}");
    s.push_str(".notice{border:2px solid #d55e00;padding:.8em;background:#fff4ec}");
    s.push_str("table{border-collapse:collapse}td,th{border:1px solid #bbb;padding:.2em .5em;text-align:right}");
    s.push_str("td.t{text-align:left}tr.error td{background:#fde}img{max-width:100%}</style></head><body>\n");
    s.push_str(&format!(
        "<p class=\"notice\"><strong>{}</strong></p>\n",
        html_escape(crate::NOTICE)
    ));
    s.push_str(&format!(
        "<h1>Cohort</h1>\n<p>{} records, {} analysed, {} with errors.</p>\n",
        rows.len(),
        ok,
        rows.len() - ok
    ));
    if let Some(sh) = shared {
        s.push_str(&format!(
            "<h2>Shared embedding</h2>\n<p>Diffusion map fitted on {} beats ({} records, at most {} each), every beat placed by Nyström extension.</p>\n<img src=\"cohort_embedding.png\" alt=\"records side by side in the shared diffusion coordinates\">\n",
            sh.fit_points, sh.records, sh.per_record
        ));
    }
    for n in notes {
        s.push_str(&format!("<p>Note: {}</p>\n", html_escape(n)));
    }
    s.push_str("<h2>Records</h2>\n<table><tr>");
    for c in super::table::COLUMNS {
        s.push_str(&format!("<th>{}</th>", html_escape(c)));
    }
    s.push_str("</tr>\n");
    for r in rows {
        let cls = if r.status == Status::Ok {
            "ok"
        } else {
            "error"
        };
        let name = if r.status == Status::Ok {
            format!(
                "<a href=\"records/{}/report.html\">{}</a>",
                url_segment(&r.name),
                html_escape(&r.name)
            )
        } else {
            html_escape(&r.name)
        };
        s.push_str(&format!(
            "<tr class=\"{cls}\"><td class=\"t\">{name}</td><td class=\"t\">{}</td><td class=\"t\">{}</td><td class=\"t\">{}</td>",
            html_escape(&r.group),
            r.status.as_str(),
            html_escape(&r.error)
        ));
        let cells = [
            num(r.duration_s, 1),
            r.beats.map_or(String::new(), |b| b.to_string()),
            num(r.mean_hr_bpm, 1),
            num(r.sdnn_ms, 1),
            num(r.rmssd_ms, 1),
            num(r.irregular_s, 1),
            num(r.dimension, 2),
            r.reference_beats.map_or(String::new(), |b| b.to_string()),
            num(r.se.map(|v| 100.0 * v), 2),
            num(r.ppv.map(|v| 100.0 * v), 2),
        ];
        for c in cells {
            s.push_str(&format!("<td>{c}</td>"));
        }
        s.push_str("</tr>\n");
    }
    s.push_str("</table>\n<p>Se and +P in percent (beat matching within the ANSI/AAMI EC57 window).</p>\n</body></html>\n");
    s
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
            line.starts_with("\"a,\"\"b\"\"\",<g>,error,bad file,1.235,"),
            "{line}"
        );
        let page = render_html(&[r], None, &["<script>".into()]);
        assert!(!page.contains("<script>"));
        assert!(!page.contains("<g>"));
        assert!(page.contains("Research use only"));
    }

    #[test]
    fn link_segment_is_percent_encoded() {
        // Source: RFC 3986 section 2.1/2.3 (unreserved characters pass, others %XX).
        assert_eq!(url_segment("a b/ü-1"), "a%20b%2F%C3%BC-1");
    }
}
