//! Every command goes through the same preparation step (read, rate and Nyquist check, lead
//! choice), so the commands agree on the same file: the same exit status for a rate that is too
//! low, the same mean heart rate (from NN intervals) and the same detector agreement.

use std::path::{Path, PathBuf};
use std::process::Output;

mod common;
use common::beatfold;

fn json_of(o: &Output) -> serde_json::Value {
    assert!(
        o.status.success(),
        "exit {:?}: {}",
        o.status.code(),
        String::from_utf8_lossy(&o.stderr)
    );
    serde_json::from_slice(&o.stdout).expect("JSON on stdout")
}

fn demo_copy(dir: &Path) -> PathBuf {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data");
    for f in ["telemetry-night.csv", "telemetry-night.annotations.csv"] {
        std::fs::copy(src.join(f), dir.join(f)).unwrap();
    }
    dir.join("telemetry-night.csv")
}

#[test]
fn beats_analyze_and_rhythm_report_the_same_heart_rate_and_agreement() {
    let tmp = tempfile::tempdir().unwrap();
    let rec = demo_copy(tmp.path());
    let rec = rec.to_str().unwrap();
    let beats = json_of(&beatfold(&["beats", rec, "--json"], tmp.path()));
    let analyze = json_of(&beatfold(
        &["analyze", rec, "--out", "a", "--json", "--figures", "rr"],
        tmp.path(),
    ));
    let rhythm = json_of(&beatfold(&["rhythm", rec, "--json"], tmp.path()));
    let hr_b = beats["mean_hr_bpm"].as_f64().unwrap();
    let hr_a = analyze["beats"]["mean_hr_bpm"].as_f64().unwrap();
    let hr_r = rhythm["variability"]["mean_hr_bpm"].as_f64().unwrap();
    assert!((hr_b - hr_a).abs() < 1e-9, "beats {hr_b} vs analyze {hr_a}");
    assert!(
        (hr_r - hr_a).abs() < 1e-9,
        "rhythm {hr_r} vs analyze {hr_a}"
    );
    let ag_b = beats["agreement"]
        .as_f64()
        .expect("beats --json gives the agreement");
    let ag_a = analyze["beats"]["agreement"].as_f64().unwrap();
    assert!(
        (ag_b - ag_a).abs() < 1e-12,
        "beats {ag_b} vs analyze {ag_a}"
    );
    assert_eq!(beats["n_beats"], analyze["beats"]["n_beats"]);
    // One default for the dimension suite's bootstrap: `analyze` used to fix 20 resamples
    // where the library and the `dimension` command use 30.
    let dimension = json_of(&beatfold(
        &["dimension", rec, "--json", "--quiet"],
        tmp.path(),
    ));
    let library = beatfold::dimension::SuiteParams::default().bootstrap;
    assert_eq!(analyze["dimension"]["bootstrap"], library, "analyze");
    assert_eq!(dimension["bootstrap"], library, "dimension --json");
}

#[test]
fn a_rate_below_the_nyquist_limit_fails_the_same_way_in_every_command() {
    let tmp = tempfile::tempdir().unwrap();
    // Ten seconds of a slow sine sampled at 50 Hz: the default band reaches 40 Hz.
    let mut csv = String::from("ecg\n");
    for i in 0..500 {
        csv.push_str(&format!("{}\n", (i as f64 * 0.2).sin()));
    }
    let p = tmp.path().join("slow.csv");
    std::fs::write(&p, csv).unwrap();
    // Reference beats for `score`.
    std::fs::write(
        tmp.path().join("slow.annotations.csv"),
        "kind,sample,time_s,end_s,label\nbeat,50,1.0,,N\nbeat,100,2.0,,N\n",
    )
    .unwrap();
    let f = p.to_str().unwrap();
    let runs: [&[&str]; 6] = [
        &["analyze", f, "--fs", "50", "--out", "x"],
        &["beats", f, "--fs", "50"],
        &["rhythm", f, "--fs", "50"],
        &["embed", f, "--fs", "50"],
        &["dimension", f, "--fs", "50"],
        &["score", f, "--fs", "50"],
    ];
    for args in runs {
        let o = beatfold(args, tmp.path());
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(1), "{args:?}: {err}");
        assert!(
            err.contains("50 Hz") && err.contains("Nyquist"),
            "{args:?}: {err}"
        );
    }
    // A bad parameter is refused before any work (exit 2, naming its config path), even on a
    // file the analysis would refuse.
    for (args, key) in [
        (
            &["embed", f, "--fs", "50", "--components", "0"][..],
            "diffusion.components",
        ),
        (
            &["dimension", f, "--fs", "50", "--bootstrap", "20000"][..],
            "bootstrap",
        ),
    ] {
        let o = beatfold(args, tmp.path());
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
        assert!(
            err.contains(key) && !err.contains("Nyquist"),
            "{args:?}: {err}"
        );
    }
}
