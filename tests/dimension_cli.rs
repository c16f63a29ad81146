//! The `dimension` command: sources, JSON keys, figure, usage errors.

mod common;
use common::beatfold;

const DEMO: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/demo-data/telemetry-night.csv");

#[test]
fn dimension_command_json_figure_and_errors() {
    let tmp = tempfile::tempdir().unwrap();
    let o = beatfold(
        &[
            "dimension",
            DEMO,
            "--cloud",
            "rr",
            "--bootstrap",
            "10",
            "--json",
            "--figure",
            "dims",
        ],
        tmp.path(),
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    // DESIGN.md keys plus one object per method.
    for k in [
        "n",
        "ambient_dim",
        "estimates",
        "scale_curve",
        "noise_scale",
    ] {
        assert!(j.get(k).is_some(), "missing {k}");
    }
    assert_eq!(j["ambient_dim"], 3);
    assert_eq!(j["source"]["from"], "rr");
    for m in ["kmeans", "twonn", "mle", "correlation", "local_pca"] {
        let e = &j["estimates"][m];
        let d = e["d"].as_f64().unwrap();
        let ci = e["ci95"].as_array().unwrap();
        assert!(ci[0].as_f64().unwrap() <= ci[1].as_f64().unwrap(), "{m}");
        // A delay embedding in 3 coordinates cannot exceed 3 dimensions by much at its plateau
        // (common practice: the ambient dimension bounds the estimate; k-means may overshoot
        // at fine scales, hence the margin).
        assert!(d > 0.5 && d < 5.0, "{m}: {d}");
        assert!(!e["curve"].as_array().unwrap().is_empty(), "{m}");
    }
    assert!(tmp.path().join("dims.svg").exists() && tmp.path().join("dims.png").exists());
    // The consensus object (keys of docs/methods.md, "Consensus").
    let c = &j["consensus"];
    assert!(c["d"].as_f64().unwrap() > 0.0);
    assert!(["resolved", "unresolved"].contains(&c["status"].as_str().unwrap()));
    assert!(c["ci95"].is_array() && c.get("scale_range").is_some() && c["reason"].is_string());
    // The uniformity guard's spreads: an object when measured (resolved answers only), else
    // null; the values are checked in tests/dimension_consensus.rs.
    assert!(c.get("local_spread").is_some(), "{c}");
    for m in ["twonn", "mle", "correlation", "local_pca"] {
        assert_eq!(j["estimates"][m]["corrected"]["applied"], true, "{m}");
    }

    let o = beatfold(&["dimension", DEMO, "--cloud", "beats"], tmp.path());
    assert_eq!(o.status.code(), Some(2));
    let o = beatfold(&["dimension", DEMO, "--method", "kmeans,nope"], tmp.path());
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("nope"));
}
