//! Cohort runs on short synthetic records (1 min each, with exact ground truth from `synth`) and
//! one broken file: error rows, resume, shards against a single run, thread counts, and the
//! shared embedding's Nyström extension at its own fit points.

use beatfold::cohort::{self, CohortOptions, RecordOutputs, Shard, Status};
use beatfold::io;
use beatfold::params::Checked;
use beatfold::report::ReportOptions;
use beatfold::synth::{self, Scenario, SynthParams};
use std::path::{Path, PathBuf};

/// Write three 1-minute synthetic records with their exact annotations and one broken file.
fn make_cohort(dir: &Path) {
    for k in 1u64..=3 {
        let scen = Scenario::from_name("resting").unwrap();
        let p = SynthParams::for_scenario(scen, 1.0, 250.0, k);
        let rec = synth::synthesize(&Checked::new(p.clone()).unwrap()).unwrap();
        let path = dir.join(format!("rec{k}.csv"));
        io::csv::write_record(&rec, &path).unwrap();
        io::annotations::write(
            &rec.annotations,
            rec.fs_hz,
            &io::annotations::sibling_path(&path),
        )
        .unwrap();
    }
    std::fs::write(dir.join("broken.csv"), "time_s,ecg\nnot,a number\n").unwrap();
}

/// Options of the tests: full per-record outputs, figures as SVG only (PNG encoding is the
/// slowest part of a 1-minute record and the first test keeps the default of both).
fn opts(jobs: usize, shard: Option<Shard>) -> CohortOptions {
    CohortOptions {
        jobs,
        shard,
        outputs: RecordOutputs::Full,
        report: ReportOptions {
            png: false,
            ..ReportOptions::default()
        },
        ..CohortOptions::default()
    }
}

fn read(p: &Path) -> Vec<u8> {
    std::fs::read(p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

fn setup() -> (tempfile::TempDir, PathBuf) {
    let t = tempfile::tempdir().unwrap();
    let input = t.path().join("in");
    std::fs::create_dir_all(&input).unwrap();
    make_cohort(&input);
    (t, input)
}

#[test]
fn broken_record_is_an_error_row_and_rerun_skips_complete_records() {
    let (t, input) = setup();
    let out = t.path().join("out");
    let full_report = CohortOptions {
        jobs: 2,
        outputs: RecordOutputs::Full,
        ..CohortOptions::default()
    };
    let s = cohort::run(&input, &out, &Checked::new(full_report.clone()).unwrap()).unwrap();
    assert_eq!((s.total, s.analysed, s.skipped, s.failed), (4, 3, 0, 1));
    let m = s.merged.unwrap();
    let names: Vec<&str> = m.rows.iter().map(|r| r.name.as_str()).collect();
    assert_eq!(names, ["broken", "rec1", "rec2", "rec3"]);
    assert_eq!(m.rows[0].status, Status::Error);
    assert!(
        m.rows[0].error.contains("broken.csv"),
        "{}",
        m.rows[0].error
    );
    for r in &m.rows[1..] {
        assert_eq!(r.status, Status::Ok, "{r:?}");
        // Source: the synthetic records' exact ground truth (`synth` writes every beat); a
        // clean 1-minute resting record must be detected beat for beat within the EC57 window
        // (common practice: Se and +P of 1 on noise-free synthetic data).
        assert_eq!(r.se, Some(1.0), "{r:?}");
        assert_eq!(r.ppv, Some(1.0), "{r:?}");
        let beats = r.beats.unwrap() as f64;
        let hr = r.mean_hr_bpm.unwrap();
        // One minute holds mean-HR beats, give or take one at each end.
        assert!((beats - hr).abs() <= 2.0, "{beats} beats at {hr} bpm");
        assert_eq!(r.duration_s, Some(60.0));
    }
    let csv = String::from_utf8(read(&out.join("cohort.csv"))).unwrap();
    assert_eq!(csv.lines().count(), 5);
    assert!(csv.lines().nth(1).unwrap().starts_with("broken,,,error,"));
    let page = String::from_utf8(read(&out.join("cohort.html"))).unwrap();
    // The page links a record's report (built in the browser from these flags, row order).
    assert!(page.contains("\"report\":[false,true,true,true]"));
    assert!(page.contains("Research use only"));
    for f in [
        "report.html",
        "results.h5",
        "summary.json",
        "manifest.json",
        "figures/embedding.png",
    ] {
        assert!(out.join("records/rec1").join(f).is_file(), "{f}");
    }

    // Re-run: the complete records are skipped (outputs untouched), the broken one retried.
    let h5 = out.join("records/rec1/results.h5");
    let before = std::fs::metadata(&h5).unwrap().modified().unwrap();
    let s2 = cohort::run(&input, &out, &Checked::new(full_report.clone()).unwrap()).unwrap();
    assert_eq!((s2.analysed, s2.skipped, s2.failed), (0, 3, 1));
    assert_eq!(std::fs::metadata(&h5).unwrap().modified().unwrap(), before);
    assert_eq!(read(&out.join("cohort.csv")), csv.as_bytes());

    // A changed input is analysed again; so is a record whose output was damaged.
    std::fs::write(out.join("records/rec3/results.h5"), b"half a file").unwrap();
    let s3 = cohort::run(
        &input,
        &out,
        &Checked::new(CohortOptions {
            jobs: 1,
            ..full_report.clone()
        })
        .unwrap(),
    )
    .unwrap();
    assert_eq!((s3.analysed, s3.skipped, s3.failed), (1, 2, 1));
    assert_eq!(read(&out.join("cohort.csv")), csv.as_bytes());
}

#[test]
fn resume_after_interruption_gives_identical_outputs() {
    let (t, input) = setup();
    let full = t.path().join("full");
    cohort::run(&input, &full, &Checked::new(opts(2, None)).unwrap()).unwrap();
    // Simulated kill: shard 0/2 (broken, rec2) finished, shard 1/2 (rec1, rec3) died in the
    // middle of rec1 (a half-written temporary file and a damaged results file, no manifest),
    // nothing merged.
    let out = t.path().join("out");
    cohort::run(
        &input,
        &out,
        &Checked::new(opts(1, Some(Shard::parse("0/2").unwrap()))).unwrap(),
    )
    .unwrap();
    let dir = out.join("records/rec1");
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(dir.join(".results.h5.tmp-1-0"), b"partial").unwrap();
    std::fs::write(dir.join("results.h5"), b"partial").unwrap();
    let s = cohort::run(&input, &out, &Checked::new(opts(2, None)).unwrap()).unwrap();
    // rec2 is complete and skipped; rec1 and rec3 are analysed; broken is retried and fails.
    assert_eq!((s.analysed, s.skipped, s.failed), (2, 1, 1), "{s:?}");
    assert_eq!(
        read(&out.join("cohort.csv")),
        read(&full.join("cohort.csv"))
    );
    assert_eq!(
        read(&out.join("records/rec1/summary.json")),
        read(&full.join("records/rec1/summary.json"))
    );
    // The resumed record's results file is whole again: its manifest hash matches the file.
    let m: cohort::Manifest =
        serde_json::from_slice(&read(&out.join("records/rec1/manifest.json"))).unwrap();
    let listed: Vec<&str> = m.files.iter().map(|f| f.0.as_str()).collect();
    assert!(listed.contains(&"results.h5") && listed.contains(&"record.h5"));
    assert_eq!(m.row.name, "rec1");
    assert!(!listed.iter().any(|f| f.contains(".tmp-")));
    assert!(
        !dir.join(".results.h5.tmp-1-0").exists(),
        "stale temporary removed"
    );
    let h = m.files.iter().find(|f| f.0 == "results.h5").unwrap();
    assert_eq!(
        h.1,
        io::sha256_file(&out.join("records/rec1/results.h5")).unwrap()
    );
}

#[test]
fn shards_merge_to_the_single_run_and_threads_do_not_change_the_table() {
    let (t, input) = setup();
    let single = t.path().join("single");
    cohort::run(&input, &single, &Checked::new(opts(1, None)).unwrap()).unwrap();
    let two = t.path().join("two");
    cohort::run(&input, &two, &Checked::new(opts(2, None)).unwrap()).unwrap();
    assert_eq!(
        read(&single.join("cohort.csv")),
        read(&two.join("cohort.csv"))
    );

    let sharded = t.path().join("sharded");
    let s0 = cohort::run(
        &input,
        &sharded,
        &Checked::new(opts(1, Some(Shard::parse("0/2").unwrap()))).unwrap(),
    )
    .unwrap();
    assert!(s0.merged.is_none());
    // Merging before every shard ran names the missing records.
    let early = cohort::merge(&sharded).unwrap();
    let missing: Vec<&str> = early
        .rows
        .iter()
        .filter(|r| r.error.contains("shard has not run"))
        .map(|r| r.name.as_str())
        .collect();
    assert_eq!(missing, ["rec1", "rec3"]);
    let s1 = cohort::run(
        &input,
        &sharded,
        &Checked::new(opts(2, Some(Shard::parse("1/2").unwrap()))).unwrap(),
    )
    .unwrap();
    assert_eq!(s0.selected + s1.selected, 4);
    cohort::merge(&sharded).unwrap();
    assert_eq!(
        read(&single.join("cohort.csv")),
        read(&sharded.join("cohort.csv"))
    );
    assert_eq!(
        read(&single.join("cohort.h5")),
        read(&sharded.join("cohort.h5"))
    );
}

/// Read an f64 dataset and its shape.
fn dataset(path: &Path, name: &str) -> (Vec<f64>, Vec<u64>) {
    let f = hdf5_pure::File::open(path).unwrap();
    let d = f.dataset(name).unwrap();
    (d.read_f64().unwrap(), d.shape().unwrap())
}

fn u64s(path: &Path, name: &str) -> Vec<u64> {
    let f = hdf5_pure::File::open(path).unwrap();
    f.dataset(name).unwrap().read_u64().unwrap()
}

#[test]
fn shared_embedding_extends_each_record_through_its_own_fit_points() {
    let (t, input) = setup();
    let out = t.path().join("out");
    let mut o = opts(2, None);
    o.shared.per_record = 40;
    let s = cohort::run(&input, &out, &Checked::new(o.clone()).unwrap()).unwrap();
    let sh = s.merged.unwrap().shared.expect("a shared embedding");
    assert_eq!(sh.records, 3);
    assert_eq!(sh.fit_points, 3 * 40, "equal share per record");
    let ce = out.join("cohort_embedding.h5");
    let (fit, shape) = dataset(&ce, "sample/coords");
    let c = shape[1] as usize;
    assert_eq!(shape, vec![120, 5]);
    let rec = u64s(&ce, "sample/record");
    let row = u64s(&ce, "sample/row");
    let scale = fit.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let mut worst = 0.0f64;
    for (k, name) in ["rec1", "rec2", "rec3"].iter().enumerate() {
        let p = out.join("records").join(name).join("shared_embedding.h5");
        let (coords, cs) = dataset(&p, "shared/coords");
        let (_, fs) = dataset(
            &out.join("records").join(name).join("results.h5"),
            "features/matrix",
        );
        assert_eq!(cs[0], fs[0], "{name}: one shared row per feature row");
        let fit_rows = u64s(&p, "shared/fit_rows");
        assert_eq!(fit_rows.len(), 40);
        for (si, (&r, &rw)) in rec.iter().zip(&row).enumerate() {
            if r as usize != k {
                continue;
            }
            assert!(fit_rows.contains(&rw));
            for j in 0..c {
                let a = coords[rw as usize * c + j];
                let b = fit[si * c + j];
                worst = worst.max((a - b).abs() / scale);
            }
        }
    }
    // Source: Coifman & Lafon (2006): with the dense kernel, P ψ_l = λ_l ψ_l on the fit set,
    // so the Nyström extension ψ_l(x) = λ_l⁻¹ Σ_j p(x, x_j) ψ_l(x_j) at a fit point is its fit
    // value exactly; 1e-9 of the coordinate range allows for rounding in the sums only.
    assert!(worst < 1e-9, "relative Nyström-vs-fit difference {worst}");
    assert!((worst - sh.fit_reproduction_error).abs() < 1e-12);
    assert!(out.join("cohort_embedding.png").is_file());
    assert!(out.join("cohort_embedding.svg").is_file());
}
