//! The compact per-record results file of a cohort, `records/<name>/record.h5`: what a cohort
//! needs from a record besides its table row, a few tens of kilobytes for a short record.
//!
//! In: a finished [`Analysis`]. Out: an HDF5 file (pure-Rust writer) with root attributes
//! `notice`, `beatfold_version`, `record`, `input_sha256`, `parameters` (JSON), `fs_hz`,
//! `duration_s`, `verdict`, `verdict_reasons`, `notes`; `/beats/sample` (u64), `/beats/rr_s`
//! (f64), `/beats/label` (one-letter codes as u8); `/features/matrix` (beats × features, f64,
//! row i ↔ `/features/beat_index` i) with attribute `names`; where reference beat labels give
//! two classes, the within-record `/separation` group of the results file
//! ([`crate::separate::add_h5_group`]). No time stamps, so the same record
//! and parameters give the same bytes. The shared embedding reads `/features/matrix` from here.

use crate::error::{Error, Result};
use crate::pipeline::Analysis;
use hdf5_pure::{AttrValue, FileBuilder};
use std::path::Path;

/// File name of the compact results file in a record's folder.
pub const COMPACT_FILE: &str = "record.h5";

fn text(s: &str) -> AttrValue {
    AttrValue::VarLenString(s.to_string())
}

/// Write `record.h5` for `a` at `path` (atomically).
pub fn write(a: &Analysis, path: &Path) -> Result<()> {
    let f = &a.features;
    if f.points.n.checked_mul(f.points.dim) != Some(f.points.data.len()) {
        return Err(Error::output(path, "feature matrix has the wrong size"));
    }
    let mut b = FileBuilder::new();
    let params = serde_json::to_string(&a.parameters)
        .map_err(|e| Error::output(path, format!("parameters to JSON: {e}")))?;
    b.set_attr("notice", text(crate::NOTICE));
    b.set_attr("beatfold_version", text(env!("CARGO_PKG_VERSION")));
    b.set_attr("record", text(&a.record_name));
    b.set_attr(
        "input_sha256",
        text(a.input_sha256.as_deref().unwrap_or("")),
    );
    b.set_attr("parameters", text(&params));
    b.set_attr("fs_hz", AttrValue::F64(a.fs_hz));
    b.set_attr("duration_s", AttrValue::F64(a.duration_s));
    b.set_attr("verdict", text(a.verdict.class.name()));
    b.set_attr("verdict_reasons", text(&a.verdict.reasons.join("\n")));
    b.set_attr("notes", text(&a.notes.join("\n")));
    let mut g = b.create_group("beats");
    let samples: Vec<u64> = a.beat_samples.iter().map(|&s| s as u64).collect();
    g.create_dataset("sample").with_u64_data(&samples);
    g.create_dataset("rr_s").with_f64_data(&a.rr_s);
    let labels: Vec<u8> = a
        .beat_labels
        .iter()
        .map(|c| u8::try_from(u32::from(*c)).unwrap_or(b'?'))
        .collect();
    g.create_dataset("label").with_u8_data(&labels);
    b.add_group(g.finish());
    let mut g = b.create_group("features");
    g.set_attr("names", text(&f.names.join(",")));
    g.create_dataset("matrix")
        .with_f64_data(&f.points.data)
        .with_shape(&[f.points.n as u64, f.points.dim as u64]);
    let bi: Vec<u64> = f.beat_index.iter().map(|&i| i as u64).collect();
    g.create_dataset("beat_index").with_u64_data(&bi);
    b.add_group(g.finish());
    if let Some(sep) = &a.separation {
        crate::separate::add_h5_group(&mut b, sep);
    }
    let bytes = b
        .finish()
        .map_err(|e| Error::output(path, format!("HDF5 encoding failed: {e}")))?;
    crate::io::write_atomic(path, &bytes)
}
