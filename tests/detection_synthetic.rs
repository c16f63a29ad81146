//! Beat detection on synthetic recordings whose every beat is known exactly (the dynamical model
//! of McSharry et al. 2003 with noise, ectopic beats and irregular episodes), scored with the
//! beat-by-beat 150 ms matching window of ANSI/AAMI EC57.

use beatfold::beats::{pan_tompkins, score, Score};
use beatfold::params::Checked;
use beatfold::pipeline::detect_beats;
use beatfold::synth::{synthesize, Scenario, SynthParams};

fn run(scenario: Scenario, hr: f64, seed: u64, minutes: f64) -> (Score, Score) {
    let mut p = SynthParams::for_scenario(scenario, minutes, 250.0, seed);
    p.mean_hr_bpm = hr;
    p.hr_std_bpm = p.hr_std_bpm.min(0.1 * hr);
    let rec = synthesize(&Checked::new(p.clone()).unwrap()).unwrap();
    let reference: Vec<usize> = rec.annotations.beats.iter().map(|b| b.sample).collect();
    // The pipeline's beats (primary detector, Elgendi et al. 2013) and the second detector
    // (Pan & Tompkins 1985) on its own.
    let b = detect_beats(&rec, &beatfold::params::Checked::default()).unwrap();
    let pt = pan_tompkins(&rec.leads[0].samples, rec.fs_hz, &Checked::default()).unwrap();
    (
        score(&reference, &b.samples, rec.fs_hz, 0.150),
        score(&reference, &pt.samples, rec.fs_hz, 0.150),
    )
}

#[test]
fn both_detectors_meet_99_percent_from_30_to_220_bpm_with_noise_and_ectopy() {
    // Target of the detection issue: Se and +P ≥ 99 % on synthetic recordings with noise bursts,
    // ectopic beats and rates from 30 to 220 bpm. Matching: ANSI/AAMI EC57, 150 ms window.
    // Recordings last long enough for at least ~150 beats, so one error costs < 1 %.
    let mut gross = [(0usize, 0usize, 0usize); 2];
    for (i, &hr) in [
        30.0_f64, 45.0, 60.0, 90.0, 120.0, 150.0, 180.0, 200.0, 220.0,
    ]
    .iter()
    .enumerate()
    {
        let minutes = (150.0_f64 / hr).max(1.0);
        for scenario in [Scenario::Resting, Scenario::AmbulatoryNoisy] {
            let (primary, second) = run(scenario, hr, 100 + i as u64, minutes);
            for (k, s) in [primary, second].iter().enumerate() {
                gross[k].0 += s.tp;
                gross[k].1 += s.fp;
                gross[k].2 += s.fn_;
                assert!(
                    s.se >= 0.99 && s.ppv >= 0.99,
                    "{} detector, {} at {hr} bpm: Se {:.4} +P {:.4} (TP {} FP {} FN {})",
                    ["primary", "Pan-Tompkins"][k],
                    scenario.name(),
                    s.se,
                    s.ppv,
                    s.tp,
                    s.fp,
                    s.fn_
                );
            }
        }
    }
    eprintln!(
        "gross (TP, FP, FN): primary {:?}, Pan-Tompkins {:?}",
        gross[0], gross[1]
    );
}

#[test]
fn irregular_episode_and_ectopic_beats_are_detected() {
    // telemetry-night carries a paroxysmal irregular episode and premature beats.
    let p = SynthParams::for_scenario(Scenario::TelemetryNight, 6.0, 250.0, 21);
    let rec = synthesize(&Checked::new(p.clone()).unwrap()).unwrap();
    let b = detect_beats(&rec, &beatfold::params::Checked::default()).unwrap();
    let reference: Vec<usize> = rec.annotations.beats.iter().map(|b| b.sample).collect();
    let s = score(&reference, &b.samples, rec.fs_hz, 0.150);
    assert!(s.se >= 0.99 && s.ppv >= 0.99, "Se {} +P {}", s.se, s.ppv);
    // The second detector agrees with the first on clean synthetic data (bSQI, Li, Mark &
    // Clifford 2008; 1 means every beat matched).
    assert!(b.agreement > 0.97, "agreement {}", b.agreement);
    // Heuristic labels: premature ectopic beats of the model should mostly be labelled
    // non-normal, and normal beats mostly normal (research heuristic; loose bounds).
    let mut v_hit = 0;
    let mut v_total = 0;
    let mut n_ok = 0;
    let mut n_total = 0;
    for a in &rec.annotations.beats {
        let Some(k) = b.samples.iter().position(|&s| s.abs_diff(a.sample) <= 37) else {
            continue;
        };
        if a.code == 'V' {
            v_total += 1;
            v_hit += usize::from(b.labels[k] != 'N');
        } else {
            n_total += 1;
            n_ok += usize::from(b.labels[k] == 'N' || b.labels[k] == 'A');
        }
    }
    assert!(v_total > 0);
    assert!(v_hit * 10 >= v_total * 8, "V recognised {v_hit}/{v_total}");
    assert!(n_ok * 100 >= n_total * 95, "N kept {n_ok}/{n_total}");
}
