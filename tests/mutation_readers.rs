//! Property tests: random mutations of valid inputs never panic any reader; each either reads
//! or returns an error that names the file.

use beatfold::io::{self, physionet, ReadOptions};
use beatfold::record::{Annotations, Lead, Record};
use proptest::prelude::*;
use std::path::Path;

fn small_record() -> Record {
    Record {
        name: "m".into(),
        fs_hz: 100.0,
        leads: vec![
            Lead {
                name: "a".into(),
                unit: "mV".into(),
                samples: (0..300).map(|i| (i as f64 * 0.1).sin()).collect(),
            },
            Lead {
                name: "b".into(),
                unit: "mV".into(),
                samples: (0..300).map(|i| (i as f64 * 0.07).cos()).collect(),
            },
        ],
        start_time: None,
        annotations: Annotations::default(),
    }
}

/// Apply byte mutations: (position fraction, new byte) pairs, plus an optional truncation.
fn mutate(base: &[u8], edits: &[(f64, u8)], cut: Option<f64>) -> Vec<u8> {
    let mut b = base.to_vec();
    for &(pos, v) in edits {
        if !b.is_empty() {
            let i = ((pos * b.len() as f64) as usize).min(b.len() - 1);
            b[i] = v;
        }
    }
    if let Some(c) = cut {
        b.truncate((c * b.len() as f64) as usize);
    }
    b
}

fn check(result: beatfold::Result<impl Sized>, name: &str) {
    if let Err(e) = result {
        assert!(
            e.to_string().contains(name),
            "error does not name the file: {e}"
        );
    }
}

fn edits() -> impl Strategy<Value = Vec<(f64, u8)>> {
    proptest::collection::vec((0.0f64..1.0, any::<u8>()), 0..6)
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 600, ..ProptestConfig::default() })]

    #[test]
    fn physionet_header_and_signal_mutations(e in edits(), cut in proptest::option::of(0.0f64..1.0), sig in any::<bool>()) {
        let dir = tempfile::tempdir().unwrap();
        physionet::write_record(&small_record(), dir.path(), 212, 200.0).unwrap();
        let target = dir.path().join(if sig { "m.dat" } else { "m.hea" });
        let base = std::fs::read(&target).unwrap();
        std::fs::write(&target, mutate(&base, &e, cut)).unwrap();
        check(io::read_record(&dir.path().join("m.hea"), &ReadOptions::default()), "m.");
    }

    #[test]
    fn edf_mutations(e in edits(), cut in proptest::option::of(0.0f64..1.0)) {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("m.edf");
        let base = io::edf::to_edf(&small_record()).unwrap();
        std::fs::write(&p, mutate(&base, &e, cut)).unwrap();
        check(io::read_record(&p, &ReadOptions::default()), "m.edf");
    }

    #[test]
    fn annotation_mutations(e in edits(), cut in proptest::option::of(0.0f64..1.0)) {
        let anns: Vec<physionet::MitAnnotation> = (0..20)
            .map(|i| physionet::MitAnnotation {
                sample: 50 + 700 * i,
                code: if i % 5 == 0 { 28 } else { 1 },
                subtype: 0,
                chan: 0,
                num: 0,
                aux: (i % 5 == 0).then(|| "(AFIB".to_string()),
            })
            .collect();
        let base = physionet::encode_annotations(&anns).unwrap();
        let bytes = mutate(&base, &e, cut);
        check(physionet::parse_annotations(Path::new("m.atr"), &bytes), "m.atr");
    }

    #[test]
    fn csv_mutations(e in edits(), cut in proptest::option::of(0.0f64..1.0)) {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("m.csv");
        let base = io::csv::record_to_csv(&small_record()).into_bytes();
        std::fs::write(&p, mutate(&base, &e, cut)).unwrap();
        check(io::read_record(&p, &ReadOptions::default()), "m.csv");
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 600, ..ProptestConfig::default() })]

    #[test]
    fn hdf5_mutations(e in edits(), cut in proptest::option::of(0.0f64..1.0)) {
        let base = std::fs::read(
            Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/h5/signals.h5"),
        )
        .unwrap();
        let bytes = mutate(&base, &e, cut);
        let p = Path::new("m.h5");
        check(io::hdf5::read_record_from_bytes(p, &bytes, Some("/ecg"), None), "m.h5");
        check(io::hdf5::read_record_from_bytes(p, &bytes, None, Some(250.0)), "m.h5");
    }

    #[test]
    fn annotation_csv_mutations(e in edits(), cut in proptest::option::of(0.0f64..1.0)) {
        let base = b"kind,sample,time_s,end_s,label\nbeat,100,0.4,,N\nbeat,350,1.4,,V\nrhythm,,0.0,2.0,AFIB\n";
        let bytes = mutate(base, &e, cut);
        check(
            io::annotations::read_from_bytes(Path::new("m.annotations.csv"), &bytes, 250.0),
            "m.annotations.csv",
        );
    }

    #[test]
    fn physionet_signal_bytes_any_format(
        bytes in proptest::collection::vec(any::<u8>(), 0..400),
        fmt16 in any::<bool>(),
        nsig in 1usize..4,
        n in proptest::option::of(0usize..300),
    ) {
        let format = if fmt16 { 16 } else { 212 };
        let mut header = format!("m {nsig} 250");
        if let Some(n) = n {
            header.push_str(&format!(" {n}"));
        }
        header.push('\n');
        for i in 0..nsig {
            header.push_str(&format!("m.dat {format} 200/mV 12 0 0 0 0 s{i}\n"));
        }
        let r = physionet::record_from_bytes(
            Path::new("m.hea"),
            header.as_bytes(),
            &[("m.dat", bytes.as_slice())],
            None,
        );
        if let Err(e) = r {
            assert!(e.to_string().contains("m."), "{e}");
        }
    }
}
