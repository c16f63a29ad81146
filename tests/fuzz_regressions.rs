//! Inputs that reached reader bugs, kept so the bugs stay fixed. Each file in
//! `tests/data/fuzz-regressions/` is read through `io::read_record` (the reader chosen by its
//! extension) and must give a record or an error naming the file, never a panic; the known ones
//! must give their specific error. New crashing inputs from `scripts/fuzz-ci.sh`
//! (`fuzz/artifacts/<target>/`) go into the folder with the target's extension.

use beatfold::io::{self, ReadOptions};
use std::path::{Path, PathBuf};

fn dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/fuzz-regressions")
}

fn read_err(name: &str) -> String {
    let p = dir().join(name);
    match io::read_record(&p, &ReadOptions::default()) {
        Ok(l) => panic!("{name} was read as a record at {} Hz", l.record.fs_hz),
        Err(e) => {
            let m = e.to_string();
            assert!(m.contains(name), "error does not name the file: {m}");
            assert_eq!(e.exit_code(), 2, "{m}");
            m
        }
    }
}

#[test]
fn every_kept_input_reads_or_errors_without_panic() {
    let mut n = 0;
    for entry in std::fs::read_dir(dir()).unwrap() {
        let p = entry.unwrap().path();
        let name = p.file_name().unwrap().to_string_lossy().into_owned();
        let opts = ReadOptions {
            fs_hz: Some(250.0),
            ..ReadOptions::default()
        };
        if let Err(e) = io::read_record(&p, &opts) {
            assert!(e.to_string().contains(&name), "{e}");
        }
        n += 1;
    }
    assert!(n >= 3, "regression inputs missing: {n}");
}

#[test]
fn edf_with_a_vanishing_record_duration_is_refused() {
    // Duration field `1e-300`: 100 samples per record gave an infinite sampling rate.
    let m = read_err("edf-tiny-duration.edf");
    assert!(m.contains("Hz") && m.contains("duration"), "{m}");
}

#[test]
fn edf_with_a_nan_annotation_onset_is_refused() {
    // TAL onset `nan` parsed as a float and reached sample arithmetic.
    let m = read_err("edf-nan-onset.edf");
    assert!(m.contains("onset `nan`"), "{m}");
}

#[test]
fn csv_with_thousands_of_columns_is_refused_before_allocation() {
    // 5000 columns: capacity columns × rows was reserved before any row was checked.
    let m = read_err("csv-5000-columns.csv");
    assert!(m.contains("5000 columns"), "{m}");
}

#[test]
fn hdf5_found_by_the_fuzzer_finishes_quickly() {
    // Found by the `hdf5` fuzz target: a mutated copy of tests/data/h5/signals.h5 on which one
    // read ran for more than 10 s.
    let p = dir().join("hdf5-slow-dataset.h5");
    let t0 = std::time::Instant::now();
    for ds in [None, Some("/ecg")] {
        let opts = ReadOptions {
            fs_hz: Some(250.0),
            dataset: ds.map(str::to_string),
            ..ReadOptions::default()
        };
        if let Err(e) = io::read_record(&p, &opts) {
            assert!(e.to_string().contains("hdf5-slow-dataset.h5"), "{e}");
        }
    }
    let secs = t0.elapsed().as_secs_f64();
    assert!(secs < 5.0, "reading took {secs:.1} s");
}
