//! `beatfold score` applies the EC57 rules by default and says so; it scores a set of
//! noise-stress-named records per SNR. Rules: docs/references.md §2 (learning period 300 s,
//! 150 ms matching window, pooled and average statistics, records left out of the totals).

use std::path::Path;

mod common;
use common::{beatfold, ok};

fn synth(dir: &Path, name: &str, seed: &str) {
    ok(&beatfold(
        &[
            "synth",
            "--out",
            name,
            "--minutes",
            "7",
            "--seed",
            seed,
            "-q",
        ],
        dir,
    ));
}

#[test]
fn score_leaves_out_the_learning_period_and_states_its_rules() {
    let tmp = tempfile::tempdir().unwrap();
    synth(tmp.path(), "a.csv", "1");
    let j = |extra: &[&str]| -> serde_json::Value {
        let mut args = vec!["score", "a.csv", "--json"];
        args.extend_from_slice(extra);
        serde_json::from_str(&ok(&beatfold(&args, tmp.path()))).unwrap()
    };
    let default = j(&[]);
    let all = j(&["--learning-s", "0"]);
    let reference_annotations = std::fs::read_to_string(tmp.path().join("a.annotations.csv"))
        .unwrap()
        .lines()
        .filter(|l| l.starts_with("beat,"))
        .count() as u64;
    // The rules are in the output: 300 s learning period and a 150 ms window by default.
    assert_eq!(default["rules"]["learning_s"].as_f64(), Some(300.0));
    assert_eq!(default["rules"]["window_s"].as_f64(), Some(0.15));
    assert_eq!(default["scored_from_s"].as_f64(), Some(300.0));
    // With no learning period every reference beat counts; with 300 s of 420 s about two
    // sevenths do (the synthetic rate varies, so allow ± 10 %).
    let n_all = all["beats"]["reference"].as_u64().unwrap();
    let n_default = default["beats"]["reference"].as_u64().unwrap();
    assert_eq!(n_all, reference_annotations);
    let share = n_default as f64 / n_all as f64;
    assert!(
        (share - 120.0 / 420.0).abs() < 0.1 * 120.0 / 420.0,
        "{share}"
    );
    // The printed output states the rules too.
    let text = ok(&beatfold(&["score", "a.csv"], tmp.path()));
    assert!(
        text.contains("150 ms matching window") && text.contains("first 300 s"),
        "{text}"
    );
    // A learning period that is not a number of seconds ≥ 0 is refused, naming the option.
    let bad = beatfold(&["score", "a.csv", "--learning-s=-5"], tmp.path());
    assert!(!bad.status.success());
    assert!(String::from_utf8_lossy(&bad.stderr).contains("learning"));
}

#[test]
fn noise_stress_named_records_get_the_table_per_snr_and_left_out_records_leave_the_totals() {
    let tmp = tempfile::tempdir().unwrap();
    // Two synthetic records named as noise stress test records (`e12`, `e06` suffixes); they
    // carry no added noise, so the table must show every SNR row with Se and +P near 100 %.
    synth(tmp.path(), "s1e12.csv", "2");
    synth(tmp.path(), "s1e06.csv", "3");
    let text = ok(&beatfold(&["score", "s1e12.csv", "s1e06.csv"], tmp.path()));
    assert!(text.contains("noise stress test"), "{text}");
    assert!(text.contains("| SNR dB |"), "{text}");
    let row = |snr: &str| {
        text.lines()
            .find(|l| l.starts_with(&format!("| {snr} |")))
            .unwrap_or_else(|| panic!("no {snr} dB row:\n{text}"))
            .to_string()
    };
    for snr in ["12", "6"] {
        let cells: Vec<String> = row(snr).split('|').map(|c| c.trim().to_string()).collect();
        let (se, ppv): (f64, f64) = (cells[7].parse().unwrap(), cells[8].parse().unwrap());
        // Synthetic beats with exact truth: the project's 99 % bar for clean data.
        assert!(se >= 99.0 && ppv >= 99.0, "{snr} dB: {}", row(snr));
    }
    let j: serde_json::Value = serde_json::from_str(&ok(&beatfold(
        &[
            "score",
            "s1e12.csv",
            "s1e06.csv",
            "--json",
            "--leave-out",
            "s1e06",
        ],
        tmp.path(),
    )))
    .unwrap();
    let recs = j["records"].as_array().unwrap();
    let first = recs[0]["beats"]["reference"].as_u64().unwrap();
    // Pooled totals hold only the record not left out; the noise table drops it too.
    assert_eq!(
        j["pooled"]["tp"].as_u64().unwrap() + j["pooled"]["fn"].as_u64().unwrap(),
        first
    );
    assert_eq!(j["left_out"][0].as_str(), Some("s1e06"));
    assert_eq!(j["noise_stress"]["by_snr"].as_array().unwrap().len(), 1);
    assert!(j["notice"].as_str().is_some());
}
