//! JSON views of library results shared by the command line and the Python package, so both
//! print the same keys.

use crate::NOTICE;
use serde_json::json;

/// JSON of a dimension suite: DESIGN.md keys plus one object per method with its curve.
/// `source` describes where the point cloud came from.
pub fn dimension_json(
    s: &crate::dimension::DimensionSuite,
    source: serde_json::Value,
) -> serde_json::Value {
    let num = |x: f64| {
        if x.is_finite() {
            json!(x)
        } else {
            serde_json::Value::Null
        }
    };
    let curve = |c: &[crate::dimension::ScalePoint]| -> Vec<serde_json::Value> {
        c.iter()
            .map(|q| json!({"scale": num(q.scale), "d": num(q.d)}))
            .collect()
    };
    let mut est = serde_json::Map::new();
    for e in &s.estimates {
        est.insert(
            e.method.name().to_string(),
            json!({"d": num(e.d), "estimate": num(e.d),
                   "ci95": [num(e.ci95[0]), num(e.ci95[1])], "curve": curve(&e.curve),
                   "corrected": {"d": num(e.corrected_d),
                                 "ci95": [num(e.corrected_ci95[0]), num(e.corrected_ci95[1])],
                                 "applied": e.correction.applied,
                                 "at_cap": e.correction.at_cap}}),
        );
    }
    json!({
        "n": s.n,
        "ambient_dim": s.ambient_dim,
        "n_used": s.n_used,
        "bootstrap": s.bootstrap,
        "estimates": est,
        "scale_curve": s.kmeans.as_ref().map_or(Vec::new(), |k| curve(&k.curve)),
        "noise_scale": s.noise_scale.map_or(serde_json::Value::Null, num),
        "failures": s.failures,
        "consensus": consensus_json(s.consensus.as_ref()),
        "source": source,
        "notice": NOTICE,
    })
}

/// JSON of a consensus answer: `{"d", "ci95", "scale_range": [lo, hi] | null, "status",
/// "reason", "noise_scale", "members", "local_spread": {"data", "uniform_cube"} | null,
/// "sentence"}`, or `null`.
pub fn consensus_json(c: Option<&crate::dimension::Consensus>) -> serde_json::Value {
    let num = |x: f64| {
        if x.is_finite() {
            json!(x)
        } else {
            serde_json::Value::Null
        }
    };
    match c {
        None => serde_json::Value::Null,
        Some(c) => json!({
            "d": num(c.d),
            "ci95": [num(c.ci95[0]), num(c.ci95[1])],
            "scale_range": c.scale_range.map(|r| json!([num(r[0]), num(r[1])])),
            "plateau_d": c.plateau_d.map(num),
            "noise_scale": c.noise_scale.map(num),
            "status": c.status,
            "reason": c.reason,
            "members": c.members,
            "local_spread": c
                .local_spread
                .map(|[data, cube]| json!({"data": num(data), "uniform_cube": num(cube)})),
            "sentence": c.sentence(),
        }),
    }
}

/// Default sliding window of the windowed variability (`5m`: five minutes).
pub const RHYTHM_WINDOW: &str = "5m";

/// JSON of the rhythm measures that need only the RR series: NN variability (Task Force 1996),
/// Poincaré SD1/SD2 and sample entropy (Richman & Moorman 2000) of the NN intervals, and the
/// variability in sliding windows. `t_end_s` is the time of the beat that ends each interval;
/// `labels` has one label per beat (`rr_s.len() + 1`) or is empty (every interval is NN).
/// `window` and `step` are spans such as `300s`, `5m`, `128b`; `step` defaults to half the window.
pub fn rr_rhythm_json(
    rr_s: &[f64],
    t_end_s: &[f64],
    labels: &[char],
    window: &str,
    step: Option<&str>,
) -> crate::Result<serde_json::Value> {
    use crate::rhythm::windowed::{windowed_variability, Span};
    let len = Span::parse(window)?;
    let step = match step {
        Some(s) => Span::parse(s)?,
        None => len.half(),
    };
    let num = |x: f64| {
        if x.is_finite() {
            json!(x)
        } else {
            serde_json::Value::Null
        }
    };
    let nn = crate::rhythm::nn_intervals(rr_s, labels);
    let v = crate::rhythm::variability(&nn);
    let (sd1, sd2, sampen) = crate::rhythm::entropy::nn_descriptors(&nn);
    let wins = windowed_variability(rr_s, t_end_s, labels, len, step)?;
    let wj: Vec<serde_json::Value> = wins
        .iter()
        .map(|w| {
            let v = &w.variability;
            json!({"start_s": w.start_s, "end_s": w.end_s, "n_intervals": w.n_intervals,
                "n_nn": v.n_rr, "mean_hr_bpm": num(v.mean_hr_bpm), "sdnn_ms": num(v.sdnn_ms),
                "rmssd_ms": num(v.rmssd_ms), "pnn50": num(v.pnn50), "cv": num(w.cv)})
        })
        .collect();
    Ok(json!({"variability": v,
        "poincare": {"sd1_ms": num(sd1), "sd2_ms": num(sd2)},
        "sample_entropy": num(sampen),
        "windows": wj,
        "notice": NOTICE}))
}

/// JSON of `beatfold rhythm --json` for a record: [`rr_rhythm_json`] of its detected beats `b`
/// (sampled at `fs_hz`) plus the record name, the irregular-rhythm screen `sc` and the record
/// verdict `verdict`.
pub fn record_rhythm_json(
    record: &str,
    b: &crate::pipeline::BeatsResult,
    fs_hz: f64,
    sc: &crate::rhythm::screen::Screen,
    verdict: &crate::rhythm::verdict::Verdict,
    window: &str,
    step: Option<&str>,
) -> crate::Result<serde_json::Value> {
    let t_end: Vec<f64> = b
        .samples
        .iter()
        .skip(1)
        .map(|&s| s as f64 / fs_hz)
        .collect();
    let mut j = rr_rhythm_json(&b.rr_s, &t_end, &b.labels, window, step)?;
    j["record"] = json!(record);
    j["screen"] = json!({"windows": sc.windows.len(), "short_windows": sc.short_windows.len(), "episodes": sc.episodes});
    j["verdict"] = crate::rhythm::verdict::verdict_json(verdict);
    Ok(j)
}
