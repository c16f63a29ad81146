//! Determinism: the same input and seed give a byte-identical `summary.json` and identical
//! datasets in `results.h5` (its `created_utc` and `elapsed_s` attributes aside) across two runs
//! and across rayon pools of 1 and 2 threads.

use beatfold::params::Checked;
use beatfold::pipeline::{analyze, InputInfo};
use beatfold::record::Record;
use beatfold::report::{self, ReportOptions};
use beatfold::synth::{synthesize, Scenario, SynthParams};
use std::path::Path;

/// Two minutes of the telemetry-night scenario (irregular episode, ectopic beats, motion).
fn record() -> Record {
    let p = SynthParams::for_scenario(Scenario::TelemetryNight, 2.0, 250.0, 11);
    synthesize(&Checked::new(p.clone()).unwrap()).expect("synthetic record")
}

/// Analyse in a pool of `threads` and write summary.json and results.h5 into `dir`.
fn run_in_pool(rec: &Record, threads: usize, dir: &Path) {
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("rayon pool");
    pool.install(|| {
        let a = analyze(
            rec,
            &InputInfo::default(),
            &beatfold::params::Checked::default(),
            &mut |_, _| {},
        )
        .expect("analysis");
        let opts = ReportOptions {
            figures: false,
            png: false,
            interactive: false,
            ..ReportOptions::default()
        };
        report::write_all(&a, dir, &Checked::new(opts.clone()).unwrap()).expect("report");
    });
}

/// Every dataset of a results file as raw bytes, by path.
fn datasets(path: &Path) -> Vec<(String, Vec<u8>)> {
    let f = hdf5_pure::File::open(path).expect("results file opens");
    let names = beatfold::io::hdf5::dataset_paths(path).expect("dataset list");
    assert!(
        names.len() >= 10,
        "results file has too few datasets: {names:?}"
    );
    names
        .into_iter()
        .map(|n| {
            let raw = f
                .dataset(&n)
                .and_then(|d| d.read_raw())
                .expect("dataset reads");
            (n, raw)
        })
        .collect()
}

#[test]
fn same_input_same_bytes_across_runs_and_thread_counts() {
    let rec = record();
    let dirs: Vec<tempfile::TempDir> = (0..3).map(|_| tempfile::tempdir().unwrap()).collect();
    run_in_pool(&rec, 1, dirs[0].path());
    run_in_pool(&rec, 1, dirs[1].path());
    run_in_pool(&rec, 2, dirs[2].path());
    let summary: Vec<Vec<u8>> = dirs
        .iter()
        .map(|d| std::fs::read(d.path().join("summary.json")).unwrap())
        .collect();
    assert!(summary[0].len() > 500);
    assert!(
        summary[0] == summary[1],
        "summary.json differs between two 1-thread runs"
    );
    if summary[0] != summary[2] {
        let (a, b) = (
            String::from_utf8_lossy(&summary[0]),
            String::from_utf8_lossy(&summary[2]),
        );
        let diff: Vec<(&str, &str, &str)> = a
            .lines()
            .zip(b.lines())
            .enumerate()
            .filter(|(_, (x, y))| x != y)
            .map(|(i, (x, y))| (a.lines().nth(i.saturating_sub(12)).unwrap_or(""), x, y))
            .take(8)
            .collect();
        panic!("summary.json differs between 1 and 2 threads: {diff:?}");
    }
    let h: Vec<Vec<(String, Vec<u8>)>> = dirs
        .iter()
        .map(|d| datasets(&d.path().join("results.h5")))
        .collect();
    for other in &h[1..] {
        assert_eq!(h[0].len(), other.len());
        for ((n0, b0), (n1, b1)) in h[0].iter().zip(other) {
            assert_eq!(n0, n1);
            assert!(b0 == b1, "dataset /{n0} differs between runs");
        }
    }
}
