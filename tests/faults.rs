//! Fault injection into `analyze`: each signal fault a real recording can carry (non-finite
//! samples, flat line, clipping, lead-off, a sudden gain change, a gap, a record shorter than a
//! window, absurd sampling rates, a single beat, no beats at all) gives either a clear error or
//! an `Analysis` whose quality flags and notes say what happened, never a panic; and the whole
//! report is written for each (docs/robustness.md has the table).

use beatfold::params::Checked;
use beatfold::pipeline::{analyze, Analysis, InputInfo};
use beatfold::record::{Annotations, Lead, Record};
use beatfold::report::{self, ReportOptions};
use beatfold::synth::{synthesize, Scenario, SynthParams};

const FS: f64 = 250.0;

/// One minute of synthetic resting rhythm at 250 Hz, one lead.
fn base() -> Record {
    let mut p = SynthParams::for_scenario(Scenario::Resting, 1.0, FS, 5);
    p.leads = 1;
    synthesize(&Checked::new(p.clone()).unwrap()).expect("synthetic record")
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
        &beatfold::params::Checked::default(),
        &mut |_, _| {},
    )
    .unwrap_or_else(|e| panic!("analyze failed instead of flagging: {e}"));
    let dir = tempfile::tempdir().unwrap();
    let opts = ReportOptions {
        png: false,
        ..ReportOptions::default()
    };
    report::write_all(&a, dir.path(), &Checked::new(opts.clone()).unwrap())
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
    assert!(
        (60..=80).contains(&a.beat_samples.len()),
        "{}",
        a.beat_samples.len()
    );
    assert!(a.rr_s.iter().all(|v| v.is_finite()));
    assert!(notes_mention(&a, "non-finite"), "{:?}", a.notes);
}

#[test]
fn flat_line_record_gives_no_beats_and_says_so() {
    let a = run(&record(vec![0.3; (60.0 * FS) as usize], FS));
    assert!(a.quality.iter().all(|q| q.flat), "{:?}", a.quality);
    // A constant lead has no usual level to be far from: flat, not lead-off.
    assert!(a.quality.iter().all(|q| !q.lead_off));
    assert!(a.beat_samples.len() <= 1, "{}", a.beat_samples.len());
    assert!(notes_mention(&a, "flat line"), "{:?}", a.notes);
    assert!(notes_mention(&a, "beats"), "{:?}", a.notes);
    assert!(a.embedding.n == 0 && a.dimension_suite.is_none());
}

#[test]
fn clipping_is_flagged() {
    let mut r = base();
    let x = &mut r.leads[0].samples;
    // An amplifier whose rail sits at 40 % of the R amplitude: every R wave is cut off at the
    // same level, the lead's maximum.
    let peak = x.iter().cloned().fold(f64::MIN, f64::max);
    for v in x.iter_mut() {
        *v = v.min(0.4 * peak);
    }
    let a = run(&r);
    assert!(a.quality.iter().all(|q| q.clipped), "{:?}", a.quality);
    let clean = run(&base());
    assert!(clean.quality.iter().all(|q| !q.clipped));
    assert!(notes_mention(&a, "clipping"), "{:?}", a.notes);
    assert!((60..=80).contains(&a.beat_samples.len()));
}

#[test]
fn lead_off_is_flagged_and_beats_stop_there() {
    let mut r = base();
    let x = &mut r.leads[0].samples;
    // From 30 s to 40 s the electrode is off: the amplifier sits at +4 mV.
    for v in &mut x[(30.0 * FS) as usize..(40.0 * FS) as usize] {
        *v = 4.0;
    }
    let a = run(&r);
    let k = seg_at(&a, 35.0);
    assert!(
        a.quality[k].lead_off && a.quality[k].flat,
        "{:?}",
        a.quality[k]
    );
    assert_eq!(a.quality.iter().filter(|q| q.lead_off).count(), 1);
    let inside = a
        .beat_samples
        .iter()
        .filter(|&&s| (31.0 * FS..39.0 * FS).contains(&(s as f64)))
        .count();
    assert_eq!(inside, 0, "no beat is detected on a flat lead-off segment");
    assert!(notes_mention(&a, "lead off"), "{:?}", a.notes);
}

#[test]
fn sudden_gain_change_is_flagged() {
    let mut r = base();
    let x = &mut r.leads[0].samples;
    for v in &mut x[(30.0 * FS) as usize..] {
        *v *= 8.0;
    }
    let a = run(&r);
    let flagged: Vec<usize> = (0..a.quality.len())
        .filter(|&k| a.quality[k].gain_change)
        .collect();
    assert_eq!(flagged, vec![seg_at(&a, 35.0)], "{:?}", a.quality);
    assert!(notes_mention(&a, "gain"), "{:?}", a.notes);
    // Detection adapts its thresholds: beats on both sides.
    assert!(
        (60..=80).contains(&a.beat_samples.len()),
        "{}",
        a.beat_samples.len()
    );
}

#[test]
fn a_gap_of_missing_samples_is_flagged_and_spans_no_beat() {
    let mut r = base();
    let x = &mut r.leads[0].samples;
    for v in &mut x[(20.0 * FS) as usize..(28.0 * FS) as usize] {
        *v = f64::NAN;
    }
    let a = run(&r);
    assert!(a.quality[seg_at(&a, 24.0)].non_finite);
    let inside = a
        .beat_samples
        .iter()
        .filter(|&&s| (20.5 * FS..27.5 * FS).contains(&(s as f64)))
        .count();
    assert_eq!(inside, 0, "interpolated gap must not produce beats");
    assert!(notes_mention(&a, "non-finite"), "{:?}", a.notes);
}

#[test]
fn record_shorter_than_a_window_is_analysed_with_notes() {
    let r = base();
    let short = record(r.leads[0].samples[..(3.0 * FS) as usize].to_vec(), FS);
    let a = run(&short);
    assert!(a.beat_samples.len() <= 5);
    assert!(a.embedding.n == 0 && a.dimension_suite.is_none());
    assert!(notes_mention(&a, "at least 30"), "{:?}", a.notes);
    assert!(
        notes_mention(&a, "irregular-rhythm screen"),
        "{:?}",
        a.notes
    );
}

#[test]
fn tiny_records_are_refused_or_flagged_never_panic() {
    for n in [0usize, 1, 2, 7] {
        let r = record(vec![0.1; n], FS);
        match analyze(
            &r,
            &InputInfo::default(),
            &beatfold::params::Checked::default(),
            &mut |_, _| {},
        ) {
            Ok(a) => {
                assert!(a.beat_samples.is_empty());
                let dir = tempfile::tempdir().unwrap();
                let opts = ReportOptions {
                    png: false,
                    ..ReportOptions::default()
                };
                report::write_all(&a, dir.path(), &Checked::new(opts.clone()).unwrap()).unwrap();
            }
            Err(e) => assert!(!e.to_string().is_empty()),
        }
    }
}

#[test]
fn absurd_sampling_rates_give_a_clear_answer() {
    // 1 Hz: one sample a second cannot carry a QRS complex (Nyquist 0.5 Hz).
    let slow: Vec<f64> = (0..600).map(|i| (i as f64).sin()).collect();
    match analyze(
        &record(slow, 1.0),
        &InputInfo::default(),
        &beatfold::params::Checked::default(),
        &mut |_, _| {},
    ) {
        Ok(a) => {
            assert!(a.beat_samples.len() < 2);
            assert!(!a.notes.is_empty());
        }
        Err(e) => {
            let m = e.to_string();
            assert!(m.contains("Hz"), "{m}");
            assert_eq!(e.exit_code(), 1, "{m}");
        }
    }
    // 1 MHz: resampled for detection; two seconds of the base rhythm upsampled by repetition.
    let r = base();
    let fast: Vec<f64> = r.leads[0].samples[..(2.0 * FS) as usize]
        .iter()
        .flat_map(|&v| std::iter::repeat_n(v, 4000))
        .collect();
    match analyze(
        &record(fast, 1.0e6),
        &InputInfo::default(),
        &beatfold::params::Checked::default(),
        &mut |_, _| {},
    ) {
        Ok(a) => {
            assert!(a.beat_samples.len() <= 4, "{}", a.beat_samples.len());
            assert!(
                a.embedding.n == 0 && notes_mention(&a, "at least 30"),
                "{:?}",
                a.notes
            );
        }
        Err(e) => {
            let m = e.to_string();
            assert!(m.contains("Hz"), "{m}");
            assert_eq!(e.exit_code(), 1, "{m}");
        }
    }
}

/// A lead of faint noise with one Gaussian "R wave" at 5 s.
fn single_pulse(n_pulses: usize) -> Record {
    let n = (20.0 * FS) as usize;
    let x: Vec<f64> = (0..n)
        .map(|i| {
            let t = i as f64 / FS;
            let mut v = 0.01 * ((i * 7919) % 13) as f64 / 13.0;
            for k in 0..n_pulses {
                let d = t - 5.0 - k as f64;
                v += (-(d * d) / (2.0 * 0.012f64.powi(2))).exp();
            }
            v
        })
        .collect();
    record(x, FS)
}

#[test]
fn a_single_beat_gives_no_rr_and_notes() {
    let a = run(&single_pulse(1));
    assert!(a.beat_samples.len() <= 1, "{:?}", a.beat_samples);
    assert!(a.rr_s.is_empty());
    assert_eq!(a.variability.n_rr, 0);
    assert!(
        !a.variability.sdnn_ms.is_finite(),
        "SDNN of no interval must be NaN, not a number"
    );
    assert!(!a.notes.is_empty());
}

#[test]
fn no_beats_at_all_gives_empty_results_and_notes() {
    // Faint deterministic noise only.
    let x: Vec<f64> = (0..(30.0 * FS) as usize)
        .map(|i| 0.01 * (((i * 7919) % 101) as f64 / 101.0 - 0.5))
        .collect();
    let a = run(&record(x, FS));
    assert!(a.beat_samples.len() <= 2, "{}", a.beat_samples.len());
    assert!(a.embedding.n == 0);
    assert!(notes_mention(&a, "beats"), "{:?}", a.notes);
    let s = serde_json::to_string(&a.notes).unwrap();
    assert!(!s.is_empty());
}

/// Names in `dir` that look like our temporary files.
fn temporaries(dir: &std::path::Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.contains(".tmp"))
        .collect()
}

#[test]
fn an_interrupted_write_leaves_the_previous_file_whole() {
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("summary.json");
    let previous: Vec<u8> = (0..64 * 1024).map(|i| (i % 251) as u8).collect();
    std::fs::write(&target, &previous).unwrap();
    // A writer that fails half-way: it writes 100 kB (more than the buffer, so bytes reach the
    // temporary file), then reports an error as a full disk or a killed encoder would.
    let err = beatfold::io::write_atomic_with(&target, |w| {
        w.write_all(&vec![b'x'; 100 * 1024])?;
        Err(std::io::Error::other("simulated failure half-way"))
    })
    .unwrap_err();
    let msg = err.to_string();
    assert!(
        msg.contains("summary.json") && msg.contains("half-way"),
        "{msg}"
    );
    // The very file the write aimed at still holds the previous bytes, whole.
    assert_eq!(std::fs::read(&target).unwrap(), previous);
    assert!(
        temporaries(dir.path()).is_empty(),
        "{:?}",
        temporaries(dir.path())
    );
    // The same writer completing replaces the file.
    beatfold::io::write_atomic_with(&target, |w| w.write_all(b"new")).unwrap();
    assert_eq!(std::fs::read(&target).unwrap(), b"new");
}

#[test]
fn a_failed_write_leaves_the_old_file_and_no_temporary() {
    let dir = tempfile::tempdir().unwrap();
    let old = dir.path().join("summary.json");
    std::fs::write(&old, b"{\"old\": true}").unwrap();
    // The rename onto the target fails: the target is a non-empty folder. The target itself
    // (its content) must be unchanged, and no temporary file may stay.
    let blocked = dir.path().join("results.h5");
    std::fs::create_dir(&blocked).unwrap();
    std::fs::write(blocked.join("keep"), b"x").unwrap();
    let err = beatfold::io::write_atomic(&blocked, b"new bytes").unwrap_err();
    assert!(err.to_string().contains("results.h5"), "{err}");
    assert!(blocked.is_dir());
    assert_eq!(std::fs::read(blocked.join("keep")).unwrap(), b"x");
    assert!(
        temporaries(dir.path()).is_empty(),
        "{:?}",
        temporaries(dir.path())
    );
    // A whole report into a folder where report.html cannot be replaced: the run fails and
    // every file already there is either the old or a complete new one, never a partial one.
    std::fs::create_dir(dir.path().join("report.html")).unwrap();
    std::fs::write(dir.path().join("report.html").join("keep"), b"x").unwrap();
    let a = analyze(
        &base(),
        &InputInfo::default(),
        &beatfold::params::Checked::default(),
        &mut |_, _| {},
    )
    .unwrap();
    let opts = ReportOptions {
        png: false,
        ..ReportOptions::default()
    };
    assert!(report::write_all(&a, dir.path(), &Checked::new(opts.clone()).unwrap()).is_err());
    let text = std::fs::read_to_string(&old).unwrap();
    assert!(
        serde_json::from_str::<serde_json::Value>(&text).is_ok(),
        "summary.json is partial"
    );
    let left: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.contains(".tmp"))
        .collect();
    assert!(left.is_empty(), "temporary files left behind: {left:?}");
}
