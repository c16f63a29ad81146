//! Cohorts of many short records with the default summary outputs: the per-record size budget,
//! minimum support (an empty dimension cell with its reason for a 30-beat record), labels
//! scored on the page, error rows, and sharded runs against a single run. Records are
//! synthesised in the test from fixed seeds (`synth`, exact ground truth).

use beatfold::cohort::{self, CohortLabels, CohortOptions, RecordOutputs, Shard, Status};
use beatfold::io;
use beatfold::params::Checked;
use beatfold::synth::{self, Scenario, SynthParams};
use std::path::Path;

/// Per-record budget of the summary outputs, bytes (docs/cohort.md: about 100 KB or less).
const BUDGET: u64 = 100 * 1024;

/// `n` single-lead records of 30 s at 250 Hz (scenarios in turn, seeds 1…n) as CSV, each
/// with its annotations, plus one unreadable file.
fn make(dir: &Path, n: usize) {
    let scen = [
        Scenario::Resting,
        Scenario::TelemetryNight,
        Scenario::AmbulatoryNoisy,
    ];
    for i in 0..n {
        let mut p = SynthParams::for_scenario(scen[i % 3], 0.5, 250.0, i as u64 + 1);
        p.leads = 1;
        let rec = synth::synthesize(&Checked::new(p.clone()).unwrap()).unwrap();
        let path = dir.join(format!("s{i:03}.csv"));
        io::csv::write_record(&rec, &path).unwrap();
    }
    std::fs::write(dir.join("zz-broken.csv"), "time_s,ecg\n0,x\n").unwrap();
}

fn dir_bytes(p: &Path) -> u64 {
    std::fs::read_dir(p)
        .unwrap()
        .flatten()
        .map(|e| {
            let m = e.metadata().unwrap();
            if m.is_dir() {
                dir_bytes(&e.path())
            } else {
                m.len()
            }
        })
        .sum()
}

fn read(p: &Path) -> Vec<u8> {
    std::fs::read(p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

#[test]
fn a_few_hundred_short_records_stay_light_and_shards_match() {
    let t = tempfile::tempdir().unwrap();
    let input = t.path().join("in");
    std::fs::create_dir_all(&input).unwrap();
    let n = 200;
    make(&input, n);
    let full_for = vec!["s001".to_string()];
    let labels: Vec<(String, String)> = (0..n)
        .map(|i| (format!("s{i:03}"), ["N", "A", "O"][i % 3].to_string()))
        .collect();
    let opts = CohortOptions {
        jobs: 2,
        full_for: full_for.clone(),
        labels: Some(CohortLabels {
            labels,
            map: "N=regular,A=irregular,O=other".into(),
            source: None,
        }),
        ..CohortOptions::default()
    };
    let out = t.path().join("out");
    let s = cohort::run(&input, &out, &Checked::new(opts.clone()).unwrap()).unwrap();
    // The unreadable file is an error row; every other record goes on.
    assert_eq!((s.total, s.failed), (n + 1, 1), "{s:?}");
    let m = s.merged.unwrap();
    let broken = m.rows.iter().find(|r| r.name == "zz-broken").unwrap();
    assert_eq!(broken.status, Status::Error);
    assert!(broken.error.contains("zz-broken.csv"), "{}", broken.error);

    // Size budget: every summary record folder within 100 KB, and no report in it.
    let mut largest = 0;
    for i in 0..n {
        let name = format!("s{i:03}");
        let dir = out.join("records").join(&name);
        if name == "s001" {
            assert!(dir.join("report.html").is_file(), "full outputs for s001");
            assert!(dir.join("shared_embedding.h5").is_file());
            continue;
        }
        assert!(dir.join("record.h5").is_file(), "{name}");
        assert!(!dir.join("report.html").exists(), "{name}: summary only");
        assert!(!dir.join("figures").exists(), "{name}: summary only");
        largest = largest.max(dir_bytes(&dir));
    }
    assert!(
        largest <= BUDGET,
        "largest summary record folder {largest} B"
    );

    // Labels on the rows, scored on the page; the page links only the full record.
    let sc = m.labels.as_ref().expect("labels scored");
    let ok = m.rows.iter().filter(|r| r.status == Status::Ok).count();
    assert_eq!(sc.n, ok);
    assert_eq!(sc.confusion.iter().flatten().sum::<usize>(), ok);
    assert_eq!(m.rows[0].label, "N");
    let page = String::from_utf8(read(&out.join("cohort.html"))).unwrap();
    assert!(page.contains("id=\"confusion\"") && page.contains("Research use only"));
    assert!(page.contains("id=\"counts-verdict\""));
    let report_flags: Vec<&str> = m
        .rows
        .iter()
        .filter(|r| r.has_report)
        .map(|r| r.name.as_str())
        .collect();
    assert_eq!(report_flags, ["s001"]);

    // Sharded (3 shards, one thread each) and merged: the same table, byte for byte.
    let sharded = t.path().join("sharded");
    for index in 0..3 {
        let o = CohortOptions {
            jobs: 1,
            shard: Some(Shard { index, count: 3 }),
            ..opts.clone()
        };
        cohort::run(&input, &sharded, &Checked::new(o.clone()).unwrap()).unwrap();
    }
    cohort::merge(&sharded).unwrap();
    for f in ["cohort.csv", "cohort.h5"] {
        assert_eq!(read(&out.join(f)), read(&sharded.join(f)), "{f}");
    }
    // Switching the full record back to summary outputs removes its report on the re-run.
    let again = CohortOptions {
        full_for: Vec::new(),
        ..opts.clone()
    };
    let s2 = cohort::run(&input, &out, &Checked::new(again.clone()).unwrap()).unwrap();
    assert_eq!((s2.analysed, s2.skipped), (1, n - 1), "{s2:?}");
    assert!(!out.join("records/s001/report.html").exists());
}

#[test]
fn a_thirty_beat_record_has_no_dimension_and_says_why() {
    let t = tempfile::tempdir().unwrap();
    let input = t.path().join("in");
    std::fs::create_dir_all(&input).unwrap();
    // 30 s at 60 bpm: 30 beats. 2 min at 70 bpm: about 140 beats, above the support of 100.
    for (name, minutes, hr) in [("short", 0.5, 60.0), ("long", 2.0, 70.0)] {
        let mut p = SynthParams::for_scenario(Scenario::Resting, minutes, 250.0, 5);
        p.leads = 1;
        p.mean_hr_bpm = hr;
        let rec = synth::synthesize(&Checked::new(p.clone()).unwrap()).unwrap();
        io::csv::write_record(&rec, &input.join(format!("{name}.csv"))).unwrap();
    }
    let out = t.path().join("out");
    let m = cohort::run(&input, &out, &Checked::default())
        .unwrap()
        .merged
        .unwrap();
    let short = m.rows.iter().find(|r| r.name == "short").unwrap();
    assert_eq!(short.status, Status::Ok, "{short:?}");
    let beats = short.beats.unwrap();
    assert!((28..=32).contains(&beats), "{beats} beats");
    assert_eq!(short.dimension, None);
    assert_eq!(short.dimension_status, "insufficient");
    assert!(
        short
            .notes
            .iter()
            .any(|n| n.starts_with("dimension:") && n.contains("fewer than the 100 needed")),
        "{:?}",
        short.notes
    );
    let long = m.rows.iter().find(|r| r.name == "long").unwrap();
    assert_ne!(long.dimension_status, "insufficient", "{long:?}");
    // The cell is the suite's consensus, with its status.
    assert!(
        ["resolved", "unresolved"].contains(&long.dimension_status.as_str()),
        "{long:?}"
    );
    // Either a number within what the points can resolve (Eckmann & Ruelle 1992: at most
    // 2·log10 N), or an empty cell with the reason.
    match long.dimension {
        Some(d) => assert!(d <= 2.0 * (long.beats.unwrap() as f64).log10(), "{d}"),
        None => assert!(long.notes.iter().any(|n| n.starts_with("dimension:"))),
    }
    // The reason is in cohort.h5 too (dataset `table/notes`, one string a record).
    let f = hdf5_pure::File::open(out.join("cohort.h5")).unwrap();
    let notes = f.dataset("table/notes").unwrap().read_string().unwrap();
    let names = f.dataset("table/record").unwrap().read_string().unwrap();
    let k = names.iter().position(|n| n == "short").unwrap();
    assert!(notes[k].contains("dimension: "), "{}", notes[k]);
    let csv = String::from_utf8(read(&out.join("cohort.csv"))).unwrap();
    let header: Vec<&str> = csv.lines().next().unwrap().split(',').collect();
    assert_eq!(header, cohort::COLUMNS);
    assert!(header.contains(&"verdict") && header.contains(&"notes"));
}

#[test]
fn full_for_and_full_outputs_together_are_refused() {
    let o = CohortOptions {
        outputs: RecordOutputs::Full,
        full_for: vec!["a".into()],
        ..CohortOptions::default()
    };
    let e = o.check().unwrap_err().to_string();
    assert!(e.contains("full-for"), "{e}");
    let bad = CohortLabels {
        labels: vec![("a".into(), "X".into())],
        map: "N=regular".into(),
        source: None,
    };
    let e = bad.check().unwrap_err().to_string();
    assert!(e.contains("`a`") && e.contains("`X`"), "{e}");
}
