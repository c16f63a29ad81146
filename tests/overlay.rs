//! One overlay for every command: a value given by flag and the same value given by the config
//! file both reach the stage, and a flag wins over the file (flag, then file, then default).

use std::path::{Path, PathBuf};
use std::process::Output;

mod common;
use common::{beatfold, ok};

fn demo_copy(dir: &Path) -> PathBuf {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data");
    for f in ["telemetry-night.csv", "telemetry-night.annotations.csv"] {
        std::fs::copy(src.join(f), dir.join(f)).unwrap();
    }
    dir.join("telemetry-night.csv")
}

fn config(dir: &Path, name: &str, json: &str) -> String {
    let p = dir.join(name);
    std::fs::write(&p, json).unwrap();
    p.to_str().unwrap().to_string()
}

fn json(o: &Output) -> serde_json::Value {
    serde_json::from_str(&ok(o)).expect("JSON on stdout")
}

fn fails_naming(o: &Output, what: &str) {
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains(what), "{err}");
}

/// The lead, by `--lead` and by the file's `lead`, reaches the preparation step of every command
/// that reads a recording; the flag wins over the file.
#[test]
fn the_lead_by_flag_and_by_file_reaches_every_command() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let rec = demo_copy(d);
    let rec = rec.to_str().unwrap();
    let bad = config(d, "lead5.json", r#"{"lead": "5"}"#);
    for cmd in [
        vec!["beats", rec, "--json"],
        vec!["rhythm", rec, "--json"],
        vec!["embed", rec, "--json"],
        vec![
            "dimension",
            rec,
            "--json",
            "--method",
            "twonn",
            "--bootstrap",
            "0",
        ],
        vec!["analyze", rec, "--out", "a", "--json", "--figures", "rr"],
        vec!["score", rec, "--json"],
    ] {
        let by_flag = beatfold(&[&cmd[..], &["--lead", "5"]].concat(), d);
        fails_naming(&by_flag, "`5` is neither a lead name nor an index");
        let by_file = beatfold(&[&cmd[..], &["--config", bad.as_str()]].concat(), d);
        fails_naming(&by_file, "`5` is neither a lead name nor an index");
        // Flag over file.
        ok(&beatfold(
            &[&cmd[..], &["--config", bad.as_str(), "--lead", "0"]].concat(),
            d,
        ));
    }
}

/// A file-only value (the primary detector) reaches `beats` and `analyze`.
#[test]
fn a_file_value_reaches_beats_and_analyze() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let rec = demo_copy(d);
    let rec = rec.to_str().unwrap();
    let pt = config(d, "pt.json", r#"{"primary_detector": "pan-tompkins"}"#);
    let b = json(&beatfold(&["beats", rec, "--json", "--config", &pt], d));
    assert_eq!(b["primary_detector"], "pan-tompkins");
    let b0 = json(&beatfold(&["beats", rec, "--json"], d));
    assert_eq!(b0["primary_detector"], "elgendi");
}

/// `embed`: components by flag and by file reach the diffusion map; the flag wins.
#[test]
fn embed_components_by_flag_and_by_file() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let rec = demo_copy(d);
    let rec = rec.to_str().unwrap();
    let c4 = config(d, "c4.json", r#"{"diffusion": {"components": 4}}"#);
    let by_flag = json(&beatfold(&["embed", rec, "--json", "--components", "3"], d));
    assert_eq!(by_flag["components"], 3);
    let by_file = json(&beatfold(&["embed", rec, "--json", "--config", &c4], d));
    assert_eq!(by_file["components"], 4);
    let both = json(&beatfold(
        &["embed", rec, "--json", "--config", &c4, "--components", "3"],
        d,
    ));
    assert_eq!(both["components"], 3);
}

/// `embed --model` refuses the fitting options it cannot apply instead of ignoring them.
#[test]
fn embed_with_a_model_refuses_fitting_options() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    for flag in ["--components", "--alpha", "--t", "--seed"] {
        let o = beatfold(&["embed", "x.csv", "--model", "m.h5", flag, "1"], d);
        assert_eq!(o.status.code(), Some(2), "{flag}");
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(err.contains("cannot be used with"), "{flag}: {err}");
    }
}

/// `dimension`: the seed by flag and by the file's `dimension.seed` reach the estimators (the
/// same bootstrap interval either way, another one with the default seed); the flag wins.
#[test]
fn dimension_seed_by_flag_and_by_file() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let rec = demo_copy(d);
    let rec = rec.to_str().unwrap();
    let s7 = config(d, "s7.json", r#"{"dimension": {"seed": 7}}"#);
    let base = [
        "dimension",
        rec,
        "--json",
        "--method",
        "twonn",
        "--bootstrap",
        "5",
    ];
    let ci = |v: serde_json::Value| v["estimates"]["twonn"]["ci95"].clone();
    let by_flag = ci(json(&beatfold(&[&base[..], &["--seed", "7"]].concat(), d)));
    let by_file = ci(json(&beatfold(
        &[&base[..], &["--config", &s7]].concat(),
        d,
    )));
    let default = ci(json(&beatfold(&base, d)));
    let both = ci(json(&beatfold(
        &[&base[..], &["--config", &s7, "--seed", "0"]].concat(),
        d,
    )));
    assert!(by_flag.is_array(), "{by_flag}");
    assert_eq!(by_flag, by_file);
    assert_ne!(by_flag, default);
    assert_eq!(both, default);
}

/// `cohort`: the file's parameters reach every record (a typo is refused before any work), and
/// the shared embedding's seed flag reaches the shared embedding.
#[test]
fn cohort_reads_the_file_and_its_flags() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    std::fs::create_dir(d.join("recs")).unwrap();
    demo_copy(&d.join("recs"));
    let typo = config(d, "typo.json", r#"{"screen": {"widow_beats": 64}}"#);
    let o = beatfold(&["cohort", "recs", "--out", "c", "--config", &typo], d);
    fails_naming(&o, "screen.widow_beats");
    let bad = config(d, "bad.json", r#"{"diffusion": {"components": 0}}"#);
    let o = beatfold(&["cohort", "recs", "--out", "c", "--config", &bad], d);
    fails_naming(&o, "diffusion.components");
    let o = beatfold(&["cohort", "recs", "--out", "c", "--per-record", "0"], d);
    fails_naming(&o, "per_record");
}

/// `dimension` and `analyze`: every key of the suite lives in the config's `dimension` block
/// (estimators, bootstrap, the estimators' own keys; k-means under `dimension.kmeans`), and a
/// flag wins over it. Before, only `dimension.seed` existed and the documented suite keys were
/// refused as unknown.
#[test]
fn dimension_suite_keys_by_flag_and_by_file() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let rec = demo_copy(d);
    let rec = rec.to_str().unwrap();
    let file = config(
        d,
        "suite.json",
        r#"{"dimension": {"methods": ["twonn", "mle"], "bootstrap": 0, "twonn_discard": 0.5,
            "kmeans": {"restarts": 3}}}"#,
    );
    let base = ["dimension", rec, "--json"];
    let v = json(&beatfold(&[&base[..], &["--config", &file]].concat(), d));
    let est = v["estimates"].as_object().expect("estimates");
    let mut names: Vec<&str> = est.keys().map(|k| k.as_str()).collect();
    names.sort();
    assert_eq!(names, ["mle", "twonn"], "methods from the file");
    assert!(
        est["twonn"]["ci95"][0].is_null(),
        "bootstrap 0 from the file"
    );
    // The estimator's own key reaches it: discarding half of the ratios moves TwoNN.
    let plain = json(&beatfold(
        &[&base[..], &["--method", "twonn", "--bootstrap", "0"]].concat(),
        d,
    ));
    assert_ne!(
        plain["estimates"]["twonn"]["estimate"], est["twonn"]["estimate"],
        "twonn_discard from the file"
    );
    // Flags win over the file.
    let v = json(&beatfold(
        &[
            &base[..],
            &["--config", &file, "--method", "twonn", "--bootstrap", "3"],
        ]
        .concat(),
        d,
    ));
    assert_eq!(v["estimates"].as_object().unwrap().len(), 1);
    assert!(v["estimates"]["twonn"]["ci95"][0].is_number());
    // The same block reaches analyze's suite.
    let o = beatfold(
        &[
            "analyze",
            rec,
            "--out",
            "a",
            "--json",
            "--figures",
            "rr",
            "--config",
            &file,
        ],
        d,
    );
    ok(&o);
    let s: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d.join("a/summary.json")).unwrap()).unwrap();
    assert_eq!(s["parameters"]["dimension"]["twonn_discard"], 0.5);
    assert_eq!(s["parameters"]["dimension"]["kmeans"]["restarts"], 3);
    // Typos and the second seed are refused, naming the key.
    let typo = config(
        d,
        "typo.json",
        r#"{"dimension": {"kmeans": {"kss": [2, 4]}}}"#,
    );
    fails_naming(
        &beatfold(&[&base[..], &["--config", &typo]].concat(), d),
        "kss",
    );
    let seed2 = config(d, "seed2.json", r#"{"dimension": {"kmeans": {"seed": 3}}}"#);
    fails_naming(
        &beatfold(&[&base[..], &["--config", &seed2]].concat(), d),
        "dimension.kmeans.seed",
    );
    let range = config(d, "range.json", r#"{"dimension": {"mle_k1": 1}}"#);
    fails_naming(
        &beatfold(&[&base[..], &["--config", &range]].concat(), d),
        "dimension.mle_k1",
    );
}
