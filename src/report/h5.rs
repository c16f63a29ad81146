//! `results.h5`: one HDF5 file per record with the analysis and its provenance, written with the
//! pure-Rust `hdf5-pure` writer. The layout (groups, datasets, dtypes, units) is documented in
//! `docs/results-format.md` and checked with h5py by `scripts/check_results_h5.py`.

use super::write_atomic;
use crate::error::{Error, Result};
use crate::pipeline::Analysis;
use hdf5_pure::{AttrValue, FileBuilder};
use std::path::Path;
use std::time::{SystemTime, UNIX_EPOCH};

/// Civil (proleptic Gregorian) date of a day count since 1970-01-01, as (year, month, day).
///
/// The `civil_from_days` algorithm of H. Hinnant, "chrono-Compatible Low-Level Date Algorithms"
/// (2013), valid for every day count an `i64` can hold without overflow in practice.
pub(crate) fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097); // [0, 146096]
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365; // [0, 399]
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100); // [0, 365]
    let mp = (5 * doy + 2) / 153; // [0, 11]
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32; // [1, 31]
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32; // [1, 12]
    (if m <= 2 { y + 1 } else { y }, m, d)
}

/// RFC 3339 UTC timestamp (`YYYY-MM-DDThh:mm:ssZ`) of whole seconds since the Unix epoch.
pub(crate) fn rfc3339_utc(secs: i64) -> String {
    let days = secs.div_euclid(86_400);
    let sod = secs.rem_euclid(86_400);
    let (y, m, d) = civil_from_days(days);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        sod / 3600,
        (sod / 60) % 60,
        sod % 60
    )
}

/// Now, as an RFC 3339 UTC timestamp.
fn now_utc() -> String {
    let secs = match SystemTime::now().duration_since(UNIX_EPOCH) {
        Ok(d) => i64::try_from(d.as_secs()).unwrap_or(i64::MAX),
        Err(e) => -i64::try_from(e.duration().as_secs()).unwrap_or(i64::MAX),
    };
    rfc3339_utc(secs)
}

/// A variable-length UTF-8 string attribute (what h5py reads as `str`).
fn text(s: &str) -> AttrValue {
    AttrValue::VarLenString(s.to_string())
}

/// Check that a row-major matrix has `rows × cols` values.
fn check_matrix(path: &Path, what: &str, len: usize, rows: usize, cols: usize) -> Result<()> {
    if rows.checked_mul(cols) != Some(len) {
        return Err(Error::output(
            path,
            format!("{what} has {len} values, expected {rows} x {cols}"),
        ));
    }
    Ok(())
}

/// Build the HDF5 image of `a` in memory. `created_utc` is the root attribute's value.
pub(crate) fn results_h5_bytes(a: &Analysis, created_utc: &str, path: &Path) -> Result<Vec<u8>> {
    let f = &a.features;
    let e = &a.embedding;
    check_matrix(
        path,
        "features matrix",
        f.points.data.len(),
        f.points.n,
        f.points.dim,
    )?;
    check_matrix(path, "embedding coords", e.coords.len(), e.n, e.components)?;

    let mut b = FileBuilder::new();
    let params = serde_json::to_string(&a.parameters)
        .map_err(|err| Error::output(path, format!("parameters to JSON: {err}")))?;
    b.set_attr("beatfold_version", text(env!("CARGO_PKG_VERSION")));
    b.set_attr("created_utc", text(created_utc));
    b.set_attr("input_name", text(&a.input_name));
    b.set_attr(
        "input_sha256",
        text(a.input_sha256.as_deref().unwrap_or("")),
    );
    b.set_attr("input_warnings", text(&a.input_warnings.join("\n")));
    b.set_attr("record", text(&a.record_name));
    b.set_attr("parameters", text(&params));
    b.set_attr("notice", text(crate::NOTICE));
    b.set_attr("duration_s", AttrValue::F64(a.duration_s));
    b.set_attr("elapsed_s", AttrValue::F64(a.elapsed_s));

    // /signal
    let mut g = b.create_group("signal");
    g.set_attr("fs_hz", AttrValue::F64(a.fs_hz));
    g.set_attr("lead", text(&a.raw.name));
    g.set_attr("unit", text(&a.raw.unit));
    g.create_dataset("conditioned")
        .with_f64_data(&a.conditioned)
        .set_attr("unit", text(&a.raw.unit));
    let mut q = g.create_group("quality");
    let col = |f: fn(&crate::signal::QualitySegment) -> bool| -> Vec<u8> {
        a.quality.iter().map(|s| u8::from(f(s))).collect()
    };
    let starts: Vec<f64> = a.quality.iter().map(|s| s.start_s).collect();
    let ends: Vec<f64> = a.quality.iter().map(|s| s.end_s).collect();
    q.create_dataset("start_s").with_f64_data(&starts);
    q.create_dataset("end_s").with_f64_data(&ends);
    q.create_dataset("flat").with_u8_data(&col(|s| s.flat));
    q.create_dataset("clipped")
        .with_u8_data(&col(|s| s.clipped));
    q.create_dataset("noisy").with_u8_data(&col(|s| s.noisy));
    q.create_dataset("lead_off")
        .with_u8_data(&col(|s| s.lead_off));
    q.create_dataset("gain_change")
        .with_u8_data(&col(|s| s.gain_change));
    q.create_dataset("non_finite")
        .with_u8_data(&col(|s| s.non_finite));
    g.add_group(q.finish());
    b.add_group(g.finish());

    // /beats
    let mut g = b.create_group("beats");
    let samples: Vec<u64> = a.beat_samples.iter().map(|&s| s as u64).collect();
    let fs = a.fs_hz;
    let times: Vec<f64> = a
        .beat_samples
        .iter()
        .map(|&s| if fs > 0.0 { s as f64 / fs } else { f64::NAN })
        .collect();
    let labels: Vec<u8> = a
        .beat_labels
        .iter()
        .map(|&c| if c.is_ascii() { c as u8 } else { b'?' })
        .collect();
    g.set_attr(
        "record_agreement",
        AttrValue::F64(a.agreement.unwrap_or(f64::NAN)),
    );
    g.create_dataset("sample").with_u64_data(&samples);
    g.create_dataset("time_s").with_f64_data(&times);
    g.create_dataset("rr_s").with_f64_data(&a.rr_s);
    g.create_dataset("label").with_u8_data(&labels);
    g.create_dataset("agreement")
        .with_f64_data(&a.beat_agreement);
    let ref_samples: Vec<u64> = a.reference.beats.iter().map(|r| r.sample as u64).collect();
    let ref_labels: Vec<u8> = a
        .reference
        .beats
        .iter()
        .map(|r| {
            if r.code.is_ascii() {
                r.code as u8
            } else {
                b'?'
            }
        })
        .collect();
    g.create_dataset("reference_sample")
        .with_u64_data(&ref_samples);
    g.create_dataset("reference_label")
        .with_u8_data(&ref_labels);
    b.add_group(g.finish());

    if let Some(sep) = &a.separation {
        crate::separate::add_h5_group(&mut b, sep);
    }

    // /features
    let mut g = b.create_group("features");
    g.create_dataset("matrix")
        .with_f64_data(&f.points.data)
        .with_shape(&[f.points.n as u64, f.points.dim as u64]);
    let names: Vec<&str> = f.names.iter().map(String::as_str).collect();
    g.create_dataset("names").with_vlen_strings(&names);
    let idx: Vec<u64> = f.beat_index.iter().map(|&i| i as u64).collect();
    g.create_dataset("beat_index").with_u64_data(&idx);
    b.add_group(g.finish());

    // /embedding
    let mut g = b.create_group("embedding");
    g.set_attr("epsilon", AttrValue::F64(e.epsilon));
    g.set_attr("alpha", AttrValue::F64(e.alpha));
    g.set_attr("t", AttrValue::F64(e.t));
    let dg = &e.diagnostics;
    g.set_attr(
        "bandwidth_rule",
        AttrValue::VarLenString(dg.bandwidth_rule.clone()),
    );
    g.set_attr(
        "kernel_sum_dimension",
        AttrValue::F64(dg.kernel_sum_dimension.unwrap_or(f64::NAN)),
    );
    g.set_attr(
        "connected_components",
        AttrValue::U64(dg.connected_components as u64),
    );
    g.set_attr(
        "eigengap",
        AttrValue::F64(dg.eigengap.map_or(f64::NAN, |x| x.1)),
    );
    g.set_attr(
        "eigengap_after",
        AttrValue::U64(dg.eigengap.map_or(0, |x| x.0 as u64)),
    );
    g.set_attr(
        "note",
        AttrValue::VarLenString(dg.note.clone().unwrap_or_default()),
    );
    g.create_dataset("residuals").with_f64_data(&dg.residuals);
    let sizes: Vec<u64> = dg.component_sizes.iter().map(|&v| v as u64).collect();
    g.create_dataset("component_sizes").with_u64_data(&sizes);
    g.create_dataset("coords")
        .with_f64_data(&e.coords)
        .with_shape(&[e.n as u64, e.components as u64]);
    g.create_dataset("eigenvalues")
        .with_f64_data(&e.eigenvalues);
    if let Some(m) = &e.model {
        crate::io::model::add_model_group(&mut g, m);
    }
    b.add_group(g.finish());

    // /dimension
    let d = &a.dimension;
    let mut g = b.create_group("dimension");
    g.set_attr("d", AttrValue::F64(d.d));
    g.set_attr(
        "noise_scale",
        AttrValue::F64(d.noise_scale.unwrap_or(f64::NAN)),
    );
    g.set_attr("fit_slope", AttrValue::F64(d.fit_slope));
    g.set_attr("fit_intercept", AttrValue::F64(d.fit_intercept));
    let ks: Vec<u64> = d.ks.iter().map(|&k| k as u64).collect();
    g.create_dataset("ks").with_u64_data(&ks);
    g.create_dataset("distortion").with_f64_data(&d.distortion);
    let curve: Vec<f64> = d.curve.iter().flat_map(|p| [p.scale, p.d]).collect();
    g.create_dataset("scale_curve")
        .with_f64_data(&curve)
        .with_shape(&[d.curve.len() as u64, 2]);
    // The estimator suite, when computed: per method an estimate, its bootstrap interval and
    // its curve of local dimension against scale.
    if let Some(s) = &a.dimension_suite {
        g.set_attr("suite_bootstrap", AttrValue::U64(s.bootstrap as u64));
        g.set_attr("suite_n_used", AttrValue::U64(s.n_used as u64));
        for e in &s.estimates {
            let name = e.method.name();
            g.set_attr(&format!("{name}_d"), AttrValue::F64(e.d));
            g.set_attr(&format!("{name}_ci95_low"), AttrValue::F64(e.ci95[0]));
            g.set_attr(&format!("{name}_ci95_high"), AttrValue::F64(e.ci95[1]));
            let c: Vec<f64> = e.curve.iter().flat_map(|p| [p.scale, p.d]).collect();
            g.create_dataset(&format!("{name}_curve"))
                .with_f64_data(&c)
                .with_shape(&[e.curve.len() as u64, 2]);
            g.set_attr(
                &format!("{name}_corrected_d"),
                AttrValue::F64(e.corrected_d),
            );
        }
        super::h5_dimension::add_consensus(&mut g, s);
    }
    b.add_group(g.finish());

    // /rhythm
    let v = &a.variability;
    let mut g = b.create_group("rhythm");
    g.set_attr("n_rr", AttrValue::U64(v.n_rr as u64));
    g.set_attr("mean_hr_bpm", AttrValue::F64(v.mean_hr_bpm));
    g.set_attr("mean_rr_ms", AttrValue::F64(v.mean_rr_ms));
    g.set_attr("sdnn_ms", AttrValue::F64(v.sdnn_ms));
    g.set_attr("rmssd_ms", AttrValue::F64(v.rmssd_ms));
    g.set_attr("pnn50", AttrValue::F64(v.pnn50));
    g.set_attr("sd1_ms", AttrValue::F64(a.poincare_ms.0));
    g.set_attr("sd2_ms", AttrValue::F64(a.poincare_ms.1));
    g.set_attr("sample_entropy", AttrValue::F64(a.sample_entropy));
    // The record's verdict (a research label, never a diagnosis) and the beat-geometry index.
    g.set_attr("verdict_class", text(a.verdict.class.name()));
    g.set_attr(
        "verdict_irregular_fraction",
        AttrValue::F64(a.verdict.irregular_fraction),
    );
    g.set_attr("verdict_index", AttrValue::F64(a.verdict.index));
    g.set_attr("verdict_reasons", text(&a.verdict.reasons.join("\n")));
    g.set_attr("geometry_index", AttrValue::F64(a.geometry_index));
    let sw = &a.screen.windows;
    let col = |f: &dyn Fn(&crate::rhythm::screen::ScreenWindow) -> f64| -> Vec<f64> {
        sw.iter().map(f).collect()
    };
    g.create_dataset("screen_start_rr")
        .with_u64_data(&sw.iter().map(|w| w.start as u64).collect::<Vec<_>>());
    g.create_dataset("screen_nrmssd")
        .with_f64_data(&col(&|w| w.nrmssd));
    g.create_dataset("screen_entropy")
        .with_f64_data(&col(&|w| w.entropy));
    g.create_dataset("screen_tpr")
        .with_f64_data(&col(&|w| w.tpr));
    g.create_dataset("screen_irregular")
        .with_u8_data(&sw.iter().map(|w| u8::from(w.irregular)).collect::<Vec<_>>());
    let ss = &a.screen.short_windows;
    g.create_dataset("screen_short_start_rr")
        .with_u64_data(&ss.iter().map(|w| w.start as u64).collect::<Vec<_>>());
    g.create_dataset("screen_short_nrmssd")
        .with_f64_data(&ss.iter().map(|w| w.nrmssd).collect::<Vec<_>>());
    g.create_dataset("screen_short_irregular")
        .with_u8_data(&ss.iter().map(|w| u8::from(w.irregular)).collect::<Vec<_>>());
    let ep: Vec<f64> = a
        .screen
        .episodes
        .iter()
        .flat_map(|e| [e.start_s, e.end_s])
        .collect();
    g.create_dataset("episodes_s")
        .with_f64_data(&ep)
        .with_shape(&[a.screen.episodes.len() as u64, 2]);
    let rq = &a.recurrence;
    g.create_dataset("rqa_start_beat")
        .with_u64_data(&rq.iter().map(|w| w.start as u64).collect::<Vec<_>>());
    let rcols: Vec<f64> = rq
        .iter()
        .flat_map(|w| {
            let q = &w.rqa;
            [
                q.rr,
                q.det,
                q.l,
                q.lmax as f64,
                q.entr,
                q.lam,
                q.tt,
                q.epsilon,
            ]
        })
        .collect();
    g.create_dataset("rqa")
        .with_f64_data(&rcols)
        .with_shape(&[rq.len() as u64, 8]);
    g.set_attr(
        "rqa_columns",
        AttrValue::VarLenString("rr,det,l,lmax,entr,lam,tt,epsilon".into()),
    );
    b.add_group(g.finish());

    b.finish()
        .map_err(|err| Error::output(path, format!("HDF5 encoding failed: {err}")))
}

/// Write the HDF5 results file of `a` to `path` (atomically, via a temporary sibling and rename).
///
/// Layout: root attributes `beatfold_version`, `created_utc` (RFC 3339, UTC), `input_name`,
/// `input_sha256`, `record`, `parameters` (JSON text), `notice`; groups `/signal`, `/beats`,
/// `/features`, `/embedding`, `/dimension`, `/rhythm` as documented in `docs/results-format.md`.
pub fn write_results_h5(a: &Analysis, path: &Path) -> Result<()> {
    let bytes = results_h5_bytes(a, &now_utc(), path)?;
    write_atomic(path, &bytes)
}
