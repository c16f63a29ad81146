//! `summary.json`: the headline numbers of an [`Analysis`] as stable JSON keys.
//!
//! Deterministic: no timestamps, keys in a fixed (sorted) order, so the same analysis always gives
//! the same bytes. Non-finite numbers are written as `null`.

use crate::pipeline::Analysis;
use serde_json::{json, Value};

/// A finite number as JSON, or `null`.
fn num(x: f64) -> Value {
    if x.is_finite() {
        json!(x)
    } else {
        Value::Null
    }
}

/// Per estimator of the dimension suite: `{"d", "ci95": [lo, hi], "curve": [{"scale", "d"}]}`
/// (an empty object when the suite was not computed).
fn suite_methods(a: &Analysis) -> Value {
    let mut m = serde_json::Map::new();
    for e in a.dimension_suite.iter().flat_map(|s| &s.estimates) {
        let curve: Vec<Value> = e
            .curve
            .iter()
            .map(|p| json!({"scale": num(p.scale), "d": num(p.d)}))
            .collect();
        m.insert(
            e.method.name().to_string(),
            json!({"d": num(e.d), "ci95": [num(e.ci95[0]), num(e.ci95[1])], "curve": curve}),
        );
    }
    Value::Object(m)
}

/// What `summary.json` holds for `a`: notice, version, provenance, beats, variability, detection
/// score (or `null`), embedding, dimension, parameters and elapsed time.
///
/// Keys of `score` match the `"beats"` object of the `score` command's JSON; keys of `embedding`
/// match the `embed` command's JSON.
pub fn summary_json(a: &Analysis) -> Value {
    let v = &a.variability;
    let score = match &a.score {
        Some(s) => json!({
            "reference": s.reference,
            "detected": s.detected,
            "tp": s.tp,
            "fp": s.fp,
            "fn": s.fn_,
            "se": num(s.se),
            "ppv": num(s.ppv),
            "match_window_ms": num(s.match_window_ms),
        }),
        None => Value::Null,
    };
    let e = &a.embedding;
    let d = &a.dimension;
    let curve: Vec<Value> = d
        .curve
        .iter()
        .map(|p| json!({"scale": num(p.scale), "d": num(p.d)}))
        .collect();
    json!({
        "notice": crate::NOTICE,
        "beatfold_version": env!("CARGO_PKG_VERSION"),
        "record": a.record_name,
        "input_name": a.input_name,
        "input_sha256": a.input_sha256,
        "input_warnings": a.input_warnings,
        "fs_hz": num(a.fs_hz),
        "duration_s": num(a.duration_s),
        "beats": {
            "n_beats": a.beat_samples.len(),
            "mean_hr_bpm": num(v.mean_hr_bpm),
            "agreement": a.agreement.map_or(Value::Null, num),
        },
        "variability": {
            "n_rr": v.n_rr,
            "mean_hr_bpm": num(v.mean_hr_bpm),
            "mean_rr_ms": num(v.mean_rr_ms),
            "sdnn_ms": num(v.sdnn_ms),
            "rmssd_ms": num(v.rmssd_ms),
            "pnn50": num(v.pnn50),
        },
        "rhythm": {
            "sd1_ms": num(a.poincare_ms.0),
            "sd2_ms": num(a.poincare_ms.1),
            "sample_entropy": num(a.sample_entropy),
            "screen_windows": a.screen.windows.len(),
            "screen_irregular_windows": a.screen.windows.iter().filter(|w| w.irregular).count(),
            "irregular_episodes": a.screen.episodes.iter().map(|e| serde_json::json!({"start_s": num(e.start_s), "end_s": num(e.end_s)})).collect::<Vec<_>>(),
            "irregular_s": num(a.irregular_s),
            "recurrence_windows": a.recurrence.len(),
            "recurrence_det_median": num(a.recurrence_det_median),
        },
        "verdict": crate::rhythm::verdict::verdict_json(&a.verdict),
        "geometry_index": num(a.geometry_index),
        "score": score,
        "separation": a.separation.as_ref().map(|s| s.to_json()),
        "embedding": {
            "n": e.n,
            "components": e.components,
            "eigenvalues": e.eigenvalues.iter().map(|&x| num(x)).collect::<Vec<_>>(),
            "epsilon": num(e.epsilon),
            "alpha": num(e.alpha),
            "t": num(e.t),
            "bandwidth_rule": e.diagnostics.bandwidth_rule,
            "kernel_sum_dimension": e.diagnostics.kernel_sum_dimension.map_or(Value::Null, num),
            "residuals": e.diagnostics.residuals.iter().map(|&x| num(x)).collect::<Vec<_>>(),
            "eigengap": e.diagnostics.eigengap.map_or(Value::Null, |(i, g)| {
                serde_json::json!({"after": i, "gap": num(g)})
            }),
            "connected_components": e.diagnostics.connected_components,
            "component_sizes": e.diagnostics.component_sizes,
            "note": e.diagnostics.note,
        },
        "dimension": {
            "d": num(d.d),
            "noise_scale": d.noise_scale.map_or(Value::Null, num),
            "scale_curve": curve,
            "ks": d.ks,
            "distortion": d.distortion.iter().map(|&x| num(x)).collect::<Vec<_>>(),
            "fit_slope": num(d.fit_slope),
            "fit_intercept": num(d.fit_intercept),
            "n_used": a.dimension_suite.as_ref().map(|s| s.n_used),
            "bootstrap": a.dimension_suite.as_ref().map(|s| s.bootstrap),
            "methods": suite_methods(a),
            "consensus": super::json_views::consensus_json(
                a.dimension_suite.as_ref().and_then(|s| s.consensus.as_ref())
            ),
        },
        "parameters": a.parameters,
        // Wall time is left out so that the same input and seed give a byte-identical file; it is
        // in the HTML page and the results file.
        "notes": a.notes,
    })
}
