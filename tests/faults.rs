//! Fault injection into `analyze`: each signal fault a real recording can carry (non-finite
//! samples, flat line, clipping, lead-off, a sudden gain change, a gap, a record shorter than a
//! window, absurd sampling rates, a single beat, no beats at all) gives either a clear error or
//! an `Analysis` whose quality flags and notes say what happened, never a panic; and the whole
//! report is written for each (docs/robustness.md has the table).

use beatfold::pipeline::{analyze, AnalyzeParams, Analysis, InputInfo};
use beatfold::record::{Annotations, Lead, Record};
use beatfold::report::{self, ReportOptions};
use beatfold::synth::{synthesize, Scenario, SynthParams};

const FS: f64 = 250.0;

/// One minute of synthetic resting rhythm at 250 Hz, one lead.
fn base() -> Record {
    let mut p = SynthParams::for_scenario(Scenario::Resting, 1.0, FS, 5);
    p.leads = 1;
    synthesize(&p).expect("synthetic record")
}

fn record(samples: Vec<f64>, fs_hz: f64) -> Record {
    Record {
        name: "fault".into(),
        fs_hz,
        leads: vec![Lead {
            name: "ecg".into(),
            unit: "mV".into(),
            samples,
        }],
        start_time: None,
        annotations: Annotations::default(),
    }
}

/// Analyse and write the full report (figures, HTML, HDF5, JSON); both must succeed.
fn run(rec: &Record) -> Analysis {
    let a = analyze(
        rec,
        &InputInfo::default(),
        &AnalyzeParams::default(),
        &mut |_, _| {},
    )
    .unwrap_or_else(|e| panic!("analyze failed instead of flagging: {e}"));
    let dir = tempfile::tempdir().unwrap();
    let opts = ReportOptions {
        png: false,
        ..ReportOptions::default()
    };
    report::write_all(&a, dir.path(), &opts)
        .unwrap_or_else(|e| panic!("report failed on a degenerate analysis: {e}"));
    assert!(dir.path().join("summary.json").exists());
    assert!(dir.path().join("report.html").exists());
    a
}

fn notes_mention(a: &Analysis, word: &str) -> bool {
    a.notes.iter().any(|n| n.contains(word))
}

/// Index of the 10 s quality segment holding time `t_s`.
fn seg_at(a: &Analysis, t_s: f64) -> usize {
    a.quality
        .iter()
        .position(|q| q.start_s <= t_s && t_s < q.end_s)
        .expect("segment")
}

#[test]
fn nan_and_inf_samples_are_flagged_and_beats_still_found() {
    let mut r = base();
    let x = &mut r.leads[0].samples;
    for v in &mut x[(12.0 * FS) as usize..(12.5 * FS) as usize] {
        *v = f64::NAN;
    }
    x[(33.0 * FS) as usize] = f64::INFINITY;
    x[(33.1 * FS) as usize] = f64::NEG_INFINITY;
    let a = run(&r);
    assert!(a.quality[seg_at(&a, 12.2)].non_finite);
    assert!(a.quality[seg_at(&a, 33.0)].non_finite);
    assert!(!a.quality[seg_at(&a, 50.0)].non_finite);
    // 70 bpm for 60 s: about 70 beats; the half-second hole costs at most one.
    assert!((60..=80).contains(&a.beat_samples.len()), "{}", a.beat_samples.len());
    assert!(a.rr_s.iter().all(|v| v.is_finite()));
    assert!(notes_mention(&a, "non-finite"), "{:?}", a.notes);
}
