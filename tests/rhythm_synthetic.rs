//! The irregular-rhythm research screen on synthetic recordings whose irregular episodes are
//! known exactly (telemetry-night scenario: one paroxysmal episode in the middle third).

use beatfold::params::Checked;
use beatfold::pipeline::{analyze, AnalyzeParams, InputInfo};
use beatfold::record::RHYTHM_IRREGULAR;
use beatfold::rhythm::atrial::{p_wave_index_with, smoothed_index};
use beatfold::rhythm::screen::duration_agreement;
use beatfold::synth::{synthesize, Scenario, SynthParams};

#[test]
fn screen_covers_the_synthetic_episode() {
    // The rhythm issue's target: duration Se and Sp ≥ 95 % against the known episodes (exact
    // ground truth of the synthesiser). Measured when written: Se 1.000 on every seed, Sp
    // 0.992, 0.966, 0.978, 0.992, 0.957, 0.975 for seeds 1–6 (episode edges refined beat by
    // beat; without the refinement Sp fell to 0.926 on seed 3). With the interior split of
    // locally regular runs (screen.rs) re-measured: unchanged except seed 6, Sp 0.974. With
    // the atrial veto (P-wave index, src/rhythm/atrial.rs) re-measured: Se 1.000, 0.997, 1.000,
    // 1.000, 0.999, 0.999 and Sp 0.992, 0.985, 0.978, 0.992, 0.997, 0.995.
    for seed in [1u64, 2, 3, 4, 5, 6] {
        let p = SynthParams::for_scenario(Scenario::TelemetryNight, 30.0, 250.0, seed);
        let rec = synthesize(&Checked::new(p.clone()).unwrap()).unwrap();
        let a = analyze(
            &rec,
            &InputInfo::default(),
            &beatfold::params::Checked::default(),
            &mut |_, _| {},
        )
        .unwrap();
        let truth: Vec<(f64, f64)> = rec
            .annotations
            .rhythms
            .iter()
            .filter(|r| r.label == RHYTHM_IRREGULAR)
            .map(|r| (r.start_s, r.end_s))
            .collect();
        assert!(!truth.is_empty());
        let found: Vec<(f64, f64)> = a
            .screen
            .episodes
            .iter()
            .map(|e| (e.start_s, e.end_s))
            .collect();
        let (_, _, se, sp) = duration_agreement(&truth, &found, rec.duration_s());
        eprintln!("seed {seed}: Se {se:.3} Sp {sp:.3}");
        // The synthesiser's irregular episodes carry no P wave (src/synth/rr.rs, model.rs) and
        // its regular beats do: the P-wave index (running median over 16 beats, as the screen
        // uses it) must lie at or above the veto threshold 0.5 on most regular beats and below
        // it on most episode beats, else the atrial veto would cut synthetic episodes. "Most":
        // 90 % of beats away from the episode edges (16 beats, the median's length).
        let pw = p_wave_index_with(
            &a.conditioned,
            &a.beat_samples,
            a.fs_hz,
            &Checked::default(),
        )
        .unwrap();
        assert!(pw.accepted, "seed {seed}: no P-wave template");
        let sm = smoothed_index(&pw.index, 16);
        let (mut inside, mut outside) = (Vec::new(), Vec::new());
        for (k, &s) in a.beat_samples.iter().enumerate() {
            let t = s as f64 / a.fs_hz;
            let d = truth
                .iter()
                .map(|&(x, y)| {
                    if t < x {
                        x - t
                    } else if t > y {
                        t - y
                    } else {
                        -(t - x).min(y - t)
                    }
                })
                .fold(f64::INFINITY, f64::min);
            if d < -16.0 {
                inside.push(sm[k]);
            } else if d > 16.0 {
                outside.push(sm[k]);
            }
        }
        let share = |v: &[f64], hi: bool| {
            v.iter().filter(|x| (**x >= 0.5) == hi).count() as f64 / v.len().max(1) as f64
        };
        let (s_in, s_out) = (share(&inside, false), share(&outside, true));
        eprintln!("seed {seed}: P-wave index < 0.5 on {s_in:.3} of episode beats, ≥ 0.5 on {s_out:.3} of others");
        assert!(s_in >= 0.9 && s_out >= 0.9, "seed {seed}: {s_in} {s_out}");
        assert!(
            se >= 0.95 && sp >= 0.95,
            "seed {seed}: Se {se:.3} Sp {sp:.3}; truth {truth:?} found {found:?}"
        );
        // Recurrence of the embedded trajectory was computed over the record.
        assert!(!a.recurrence.is_empty());
        assert!(a
            .recurrence
            .iter()
            .all(|w| (0.0..=1.0).contains(&w.rqa.det)));
    }
}

#[test]
fn demo_episode_is_found_at_beat_resolution() {
    // The bundled demo recording (demo-data/, synthetic with exact ground truth in its
    // annotation file): one irregular episode of 54 s, 144–198 s, about 60 beats, shorter than
    // one 128-interval window. The screen must report it as one episode whose edges lie within
    // 5 s of the truth (about five beats at the episode's rate), and the record's verdict must
    // say `irregular` (an AF-like episode of 30 s or more, no P waves inside it).
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data");
    let opts = beatfold::io::ReadOptions {
        annotations: Some(root.join("telemetry-night.annotations.csv")),
        ..Default::default()
    };
    let rec = beatfold::io::read_record(&root.join("telemetry-night.csv"), &opts)
        .unwrap()
        .record;
    let truth: Vec<(f64, f64)> = rec
        .annotations
        .rhythms
        .iter()
        .filter(|r| r.label == RHYTHM_IRREGULAR)
        .map(|r| (r.start_s, r.end_s))
        .collect();
    assert_eq!(truth, vec![(144.0, 198.0)]);
    let a = analyze(
        &rec,
        &InputInfo::default(),
        &beatfold::params::Checked::default(),
        &mut |_, _| {},
    )
    .unwrap();
    let found = a.screen.episode_bounds();
    eprintln!("demo episodes: {found:?}; verdict {:?}", a.verdict);
    assert_eq!(found.len(), 1, "{found:?}");
    let (start, end) = found[0];
    assert!(
        (start - 144.0).abs() <= 5.0,
        "start {start:.1} s, truth 144 s"
    );
    assert!((end - 198.0).abs() <= 5.0, "end {end:.1} s, truth 198 s");
    assert_eq!(
        a.verdict.class,
        beatfold::rhythm::verdict::VerdictClass::Irregular,
        "{:?}",
        a.verdict.reasons
    );
}

#[test]
fn short_synthetic_records_get_their_verdict() {
    // 30 s records at 300 Hz (the rate of the short-record challenge data), synthetic with exact
    // truth (src/synth): sinus rhythm with the resting scenario's variability and P waves, an
    // irregular rhythm over the whole record (gamma RR, no P wave), and ventricular bigeminy and
    // trigeminy (`ectopic_every` 2 and 3). AF-like is `irregular` (common practice: irregularly
    // irregular RR and no organised atrial activity); a repeating ectopic pattern is not.
    use beatfold::rhythm::verdict::VerdictClass;
    let p = beatfold::params::Checked::<AnalyzeParams>::default();
    let verdict = |sp: SynthParams| {
        let rec = synthesize(&Checked::new(sp.clone()).unwrap()).unwrap();
        beatfold::verdicts::record_verdict(&rec, &p).unwrap().0
    };
    for seed in [1u64, 2, 3] {
        let base = SynthParams {
            ectopic_rate: 0.0,
            ..SynthParams::for_scenario(Scenario::Resting, 0.5, 300.0, seed)
        };
        let sinus = verdict(base.clone());
        let irregular = verdict(SynthParams {
            irregular_episodes: vec![(0.0, 30.0)],
            ..base.clone()
        });
        eprintln!("seed {seed}: sinus {sinus:?}\n irregular {irregular:?}");
        assert_eq!(sinus.class, VerdictClass::Regular, "{:?}", sinus.reasons);
        assert_eq!(
            irregular.class,
            VerdictClass::Irregular,
            "{:?}",
            irregular.reasons
        );
        // Ventricular bigeminy. Measured when written: `unreadable` on seeds 1 and 2 (the two
        // detectors agree on 68–69 % of the beats: one of them misses the wide premature
        // complexes). Either way it must not be called `irregular`.
        let v = verdict(SynthParams {
            ectopic_every: 2,
            ..base.clone()
        });
        eprintln!(" bigeminy: {v:?}");
        assert_ne!(
            v.class,
            VerdictClass::Irregular,
            "bigeminy: {:?}",
            v.reasons
        );
    }
}

#[test]
fn trigeminy_is_not_irregular() {
    // Ventricular trigeminy (N N V, `ectopic_every` 3), 30 s at 300 Hz: a repeating pattern,
    // never an irregularly irregular rhythm (common practice). No beat of such a record is
    // locally regular, so the P-wave template comes from the beats that are not premature.
    use beatfold::rhythm::verdict::VerdictClass;
    let p = beatfold::params::Checked::<AnalyzeParams>::default();
    for seed in [1u64, 2, 3] {
        let sp = SynthParams {
            ectopic_rate: 0.0,
            ectopic_every: 3,
            ..SynthParams::for_scenario(Scenario::Resting, 0.5, 300.0, seed)
        };
        let rec = synthesize(&Checked::new(sp.clone()).unwrap()).unwrap();
        let v = beatfold::verdicts::record_verdict(&rec, &p).unwrap().0;
        assert_ne!(
            v.class,
            VerdictClass::Irregular,
            "seed {seed}: {:?}",
            v.reasons
        );
    }
}

#[test]
fn bad_records_get_an_unreadable_verdict_not_a_panic() {
    // A record shorter than 10 s, an all-NaN one and a flat line, each 300 Hz, end to end
    // through `record_verdict`: each is `unreadable` with a reason that says why.
    use beatfold::record::{Annotations, Lead, Record};
    use beatfold::rhythm::verdict::VerdictClass;
    let p = beatfold::params::Checked::<AnalyzeParams>::default();
    let rec = |samples: Vec<f64>| Record {
        name: "bad".into(),
        fs_hz: 300.0,
        leads: vec![Lead {
            name: "ecg".into(),
            unit: "mV".into(),
            samples,
        }],
        start_time: None,
        annotations: Annotations::default(),
    };
    let short = synthesize(
        &Checked::new(SynthParams::for_scenario(Scenario::Resting, 0.5, 300.0, 1)).unwrap(),
    )
    .unwrap()
    .leads[0]
        .samples[..2400]
        .to_vec();
    for (name, samples, words) in [
        ("8 s", short, "shorter than"),
        ("all NaN", vec![f64::NAN; 9000], "missing"),
        ("flat", vec![0.0; 9000], "beats detected"),
    ] {
        // A clear verdict, or a typed error that says what is wrong; never a panic.
        match beatfold::verdicts::record_verdict(&rec(samples), &p) {
            Ok((v, _)) => {
                eprintln!("{name}: {:?}", v.reasons);
                assert_eq!(v.class, VerdictClass::Unreadable, "{name}: {:?}", v.reasons);
                assert!(
                    v.reasons.iter().any(|r| r.contains(words)),
                    "{name}: {:?}",
                    v.reasons
                );
            }
            Err(e) => {
                eprintln!("{name}: error {e}");
                assert!(name == "flat" && !e.to_string().is_empty(), "{name}: {e}");
            }
        }
    }
}
