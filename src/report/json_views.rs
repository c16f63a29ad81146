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
/// "reason", "noise_scale", "members", "sentence"}`, or `null`.
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
            "sentence": c.sentence(),
        }),
    }
}
