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
                   "ci95": [num(e.ci95[0]), num(e.ci95[1])], "curve": curve(&e.curve)}),
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
        "source": source,
        "notice": NOTICE,
    })
}
