//! The separation bench's options reach their stage: a user's per-beat feature table in
//! `analyze` and `cohort`, and the config file's `separate` block against the command-line flag.
//! Synthetic records (exact beat truth by construction).

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::path::Path;

mod common;
use common::{beatfold, ok};

fn json_of(path: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// Write `name.csv` (2 min, the noisy scenario, which has ectopic beats) and return the
/// reference beats `(sample, label)` of its exact annotation file.
fn synth(d: &Path, name: &str, seed: &str) -> Vec<(usize, String)> {
    ok(&beatfold(
        &[
            "synth",
            "--out",
            &format!("{name}.csv"),
            "--minutes",
            "2",
            "--seed",
            seed,
            "--scenario",
            "ambulatory-noisy",
        ],
        d,
    ));
    std::fs::read_to_string(d.join(format!("{name}.annotations.csv")))
        .unwrap()
        .lines()
        .filter(|l| l.starts_with("beat,"))
        .map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            (f[1].parse().unwrap(), f[4].to_string())
        })
        .collect()
}

/// Table rows: a feature that is 1 for V beats and 0 otherwise plus seeded noise of width 0.1
/// (so the table alone separates V), a column of seeded noise, and one row far from any beat.
fn rows(name: &str, beats: &[(usize, String)], seed: u64) -> String {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut s = String::new();
    for (sample, label) in beats {
        let v = if label == "V" { 1.0 } else { 0.0 };
        let (a, b): (f64, f64) = (rng.gen(), rng.gen());
        s.push_str(&format!("{name},{sample},{},{b}\n", v + 0.1 * a));
    }
    s.push_str(&format!("{name},999999999,0,0.5\n"));
    s
}

fn space_names(j: &serde_json::Value) -> Vec<String> {
    j["separation"]["spaces"]
        .as_object()
        .map(|m| m.keys().cloned().collect())
        .unwrap_or_default()
}

#[test]
fn feature_table_reaches_analyze_and_cohort() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    std::fs::create_dir_all(d.join("in")).unwrap();
    let mut table = String::from("record,sample,is_v,noise\n");
    for (name, seed) in [("a", "41"), ("b", "42")] {
        let beats = synth(d, name, seed);
        for ext in ["csv", "annotations.csv"] {
            std::fs::rename(
                d.join(format!("{name}.{ext}")),
                d.join(format!("in/{name}.{ext}")),
            )
            .unwrap();
        }
        table.push_str(&rows(name, &beats, seed.parse().unwrap()));
    }
    std::fs::write(d.join("t.csv"), &table).unwrap();

    // analyze: the table replaces the built-in windows; its rows are scored and the stray
    // row is reported.
    let o = beatfold(
        &[
            "analyze",
            "in/a.csv",
            "--features",
            "t.csv",
            "--out",
            "out-a",
            "--figures",
            "trace",
            "--json",
        ],
        d,
    );
    ok(&o);
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(j["parameters"]["feature_table"]["mode"], "replace");
    let spaces = space_names(&j);
    assert!(spaces.contains(&"table-features".to_string()), "{spaces:?}");
    assert!(!spaces.contains(&"features".to_string()), "{spaces:?}");
    let notes = j["notes"].to_string();
    assert!(notes.contains("1 rows match no detected beat"), "{notes}");
    // The table's informative column separates V (an indicator plus noise of width 0.1).
    let f1 = j["separation"]["spaces"]["table-features"]["classes"]["V"]["f1"]
        .as_f64()
        .unwrap();
    assert!(f1 > 0.99, "table V F1 {f1}");
    // The written summary names the table and its columns.
    let sj = json_of(&d.join("out-a/summary.json"));
    assert_eq!(sj["parameters"]["feature_table"]["columns"][0], "is_v");

    // join: built-in windows plus the table's columns.
    let o = beatfold(
        &[
            "analyze",
            "in/a.csv",
            "--features",
            "t.csv",
            "--features-mode",
            "join",
            "--out",
            "out-j",
            "--figures",
            "trace",
            "--json",
        ],
        d,
    );
    ok(&o);
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert!(space_names(&j).contains(&"joined-diffusion".to_string()));

    // cohort: every record's table rows reach its analysis.
    let o = beatfold(
        &[
            "cohort",
            "in",
            "--out",
            "out-c",
            "--features",
            "t.csv",
            "--record-outputs",
            "full",
            "--jobs",
            "1",
            "-q",
        ],
        d,
    );
    ok(&o);
    for name in ["a", "b"] {
        let sj = json_of(&d.join(format!("out-c/records/{name}/summary.json")));
        assert!(
            space_names(&sj).contains(&"table-features".to_string()),
            "{name}: {:?}",
            space_names(&sj)
        );
        assert!(sj["notes"]
            .to_string()
            .contains("1 rows match no detected beat"));
    }
    // A cohort table without a record column is refused up front, naming the file.
    std::fs::write(d.join("u.csv"), "sample,x\n10,1\n").unwrap();
    let o = beatfold(
        &["cohort", "in", "--out", "out-u", "--features", "u.csv"],
        d,
    );
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        !o.status.success() && err.contains("u.csv") && err.contains("record"),
        "{err}"
    );
}

#[test]
fn separate_block_of_the_config_and_the_flag_both_reach_the_stage() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    synth(d, "a", "41");
    std::fs::write(
        d.join("c.json"),
        r#"{"separate": {"vote_neighbors": 3, "spaces": ["pca"]}}"#,
    )
    .unwrap();
    let run = |extra: &[&str]| -> serde_json::Value {
        let mut args = vec!["separate", "a.csv", "--json"];
        args.extend_from_slice(extra);
        let o = beatfold(&args, d);
        ok(&o);
        serde_json::from_slice(&o.stdout).unwrap()
    };
    // Library default.
    let j = run(&[]);
    assert_eq!(j["vote_neighbors"], 5);
    assert!(j["spaces"]["diffusion"].is_object());
    // From the file.
    let j = run(&["--config", "c.json"]);
    assert_eq!(j["vote_neighbors"], 3);
    assert!(j["spaces"]["diffusion"].is_null() && j["spaces"]["pca"].is_object());
    // The flag overlays the file.
    let j = run(&["--config", "c.json", "--vote-k", "7"]);
    assert_eq!(j["vote_neighbors"], 7);
    assert!(j["spaces"]["pca"].is_object());
    // analyze's within-record separation takes the file's value too.
    let o = beatfold(
        &[
            "analyze",
            "a.csv",
            "--config",
            "c.json",
            "--out",
            "out",
            "--figures",
            "trace",
            "--json",
        ],
        d,
    );
    ok(&o);
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(j["separation"]["vote_neighbors"], 3);
    // Unknown keys and bad values in the block are refused, naming the key.
    std::fs::write(d.join("bad.json"), r#"{"separate": {"vote_k": 3}}"#).unwrap();
    let o = beatfold(&["separate", "a.csv", "--config", "bad.json"], d);
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(!o.status.success() && err.contains("vote_k"), "{err}");
    std::fs::write(
        d.join("bad2.json"),
        r#"{"separate": {"vote_neighbors": 0}}"#,
    )
    .unwrap();
    let o = beatfold(&["separate", "a.csv", "--config", "bad2.json"], d);
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        !o.status.success() && err.contains("separate.vote_neighbors"),
        "{err}"
    );
}
