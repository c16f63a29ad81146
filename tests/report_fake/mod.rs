//! A made-up but self-consistent [`Analysis`] for the report tests (invented numbers: these
//! tests check the report writers, not the science). Shared by `tests/report_*.rs`.

#![allow(dead_code)]

use beatfold::beats::Score;
use beatfold::dimension::{ScalePoint, ScalingCurve};
use beatfold::embed::Embedding;
use beatfold::features::Features;
use beatfold::pipeline::Analysis;
use beatfold::points::Points;
use beatfold::record::{Annotations, BeatAnnotation, Lead, RhythmInterval};
use beatfold::rhythm::recurrence::{Rqa, RqaWindow};
use beatfold::rhythm::screen::{Episode, Screen};
use beatfold::rhythm::Variability;
use beatfold::signal::QualitySegment;
use serde_json::json;

/// Sampling rate of the fake record, Hz.
pub const FS_HZ: f64 = 250.0;
/// Period of the fake trajectory in beats (the embedding goes round a circle every 10 beats).
pub const PERIOD: usize = 10;

/// Label of beat `i`: every 10th `V` (from beat 5), every 25th `A` (from beat 3), else `N`.
pub fn label(i: usize) -> char {
    if i % 10 == 5 {
        'V'
    } else if i % 25 == 3 {
        'A'
    } else {
        'N'
    }
}

/// `n_beats` beats at about 72 beats/min, a Gaussian R wave per beat (negative and wider for
/// `V`), 3 diffusion coordinates on a circle of period [`PERIOD`] beats, a screen episode, two
/// reference rhythm intervals labelled `rhythm_label` and `(N`, and one recurrence window per
/// 64 beats. `name` is the record, lead and unit name alike (to test escaping).
pub fn fake(n_beats: usize, name: &str, rhythm_label: &str) -> Analysis {
    let fs = FS_HZ;
    let rr: Vec<f64> = (0..n_beats.saturating_sub(1))
        .map(|i| 0.83 + 0.05 * (i as f64 * 0.3).sin())
        .collect();
    let mut beat_samples = Vec::with_capacity(n_beats);
    let mut t = 1.0;
    for i in 0..n_beats {
        beat_samples.push((t * fs).round() as usize);
        if let Some(r) = rr.get(i) {
            t += r;
        }
    }
    let n_samples = ((t + 1.0) * fs) as usize;
    let mut conditioned = vec![0.0; n_samples];
    for (i, &s) in beat_samples.iter().enumerate() {
        let (amp, width) = if label(i) == 'V' {
            (-1.5, 8.0)
        } else {
            (1.0, 3.0)
        };
        let k0 = s.saturating_sub(40);
        for (k, v) in conditioned.iter_mut().enumerate().take(s + 40).skip(k0) {
            let d = (k as f64 - s as f64) / width;
            *v += amp * (-0.5 * d * d).exp();
        }
    }
    let rr_s: Vec<f64> = beat_samples
        .windows(2)
        .map(|w| (w[1] - w[0]) as f64 / fs)
        .collect();
    // Feature rows: beats 1 … n − 2, window −0.25 … +0.45 s every 10 ms.
    let offsets: Vec<f64> = (0..71).map(|j| -0.25 + 0.01 * j as f64).collect();
    let mut names: Vec<String> = offsets.iter().map(|o| format!("w{o:+.3}s")).collect();
    names.push("rr_prev_s".into());
    names.push("rr_next_s".into());
    let rows: Vec<usize> = (1..n_beats.saturating_sub(1)).collect();
    let mut data = Vec::with_capacity(rows.len() * names.len());
    for &r in &rows {
        let b = beat_samples[r] as f64;
        for o in &offsets {
            let s = (b + o * fs).round() as usize;
            data.push(conditioned.get(s).copied().unwrap_or(0.0));
        }
        data.push(rr_s[r - 1]);
        data.push(rr_s[r]);
    }
    let m = rows.len();
    let points = Points::new(m, names.len(), data).expect("consistent test matrix");
    let coords: Vec<f64> = rows
        .iter()
        .flat_map(|&r| {
            let th = 2.0 * std::f64::consts::PI * (r % PERIOD) as f64 / PERIOD as f64;
            [th.cos(), th.sin(), if label(r) == 'V' { 1.0 } else { 0.0 }]
        })
        .collect();
    let duration_s = n_samples as f64 / fs;
    let recurrence: Vec<RqaWindow> = (0..m.saturating_sub(256))
        .step_by(64)
        .map(|s| RqaWindow {
            start: s,
            end: s + 256,
            rqa: Rqa {
                rr: 0.1,
                det: 0.9,
                l: 9.0,
                lmax: 250,
                entr: 1.0,
                lam: 0.2 + 0.1 * ((s / 64) % 2) as f64,
                tt: 2.0,
                epsilon: 0.01,
            },
        })
        .collect();
    let quality: Vec<QualitySegment> = (0..(duration_s / 10.0).ceil() as usize)
        .map(|k| QualitySegment {
            start_s: 10.0 * k as f64,
            end_s: (10.0 * (k + 1) as f64).min(duration_s),
            noisy: k == 2,
            ..Default::default()
        })
        .collect();
    let half = duration_s / 2.0;
    Analysis {
        record_name: name.into(),
        input_sha256: Some("cd".repeat(32)),
        input_name: format!("{name}.csv"),
        input_warnings: Vec::new(),
        fs_hz: fs,
        duration_s,
        raw: Lead {
            name: name.into(),
            unit: "mV".into(),
            samples: Vec::new(),
        },
        conditioned,
        quality,
        beat_labels: (0..n_beats).map(label).collect(),
        beat_agreement: vec![1.0; n_beats],
        agreement: Some(1.0),
        rr_s,
        features: Features {
            points,
            names,
            beat_index: rows,
        },
        embedding: Embedding {
            n: m,
            components: 3,
            coords: coords.clone(),
            eigenvalues: vec![0.99, 0.98, 0.9],
            epsilon: 0.1,
            alpha: 1.0,
            t: 1.0,
            ..Embedding::default()
        },
        dimension_suite: None,
        dimension: ScalingCurve {
            ks: vec![2, 4, 8, 16],
            distortion: vec![0.5, 0.25, 0.125, 0.0625],
            curve: vec![
                ScalePoint { scale: 0.5, d: 2.1 },
                ScalePoint { scale: 0.3, d: 2.0 },
            ],
            d: 2.05,
            fit_slope: -1.0,
            fit_intercept: 0.0,
            noise_scale: None,
        },
        variability: Variability {
            n_rr: n_beats.saturating_sub(1),
            mean_hr_bpm: 72.0,
            mean_rr_ms: 830.0,
            sdnn_ms: 35.0,
            rmssd_ms: 20.0,
            pnn50: 0.0,
        },
        poincare_ms: (14.0, 48.0),
        sample_entropy: 0.5,
        screen: Screen {
            windows: Vec::new(),
            short_windows: Vec::new(),
            irregular: vec![false; n_beats.saturating_sub(1)],
            episodes: vec![Episode {
                start_s: 2.0,
                end_s: 6.0,
            }],
        },
        irregular_s: 4.0,
        recurrence_det_median: beatfold::stats::median(recurrence.iter().map(|w| w.rqa.det)),
        recurrence,
        recurrence_trajectory: beatfold::points::Points::new(m, 3, coords.clone()).unwrap(),
        recurrence_params: serde_json::from_value(json!({ "threshold": { "distance": 0.05 },
            "theiler": 1, "l_min": 2, "v_min": 2, "window": 256, "step": 64 }))
        .unwrap(),
        verdict: beatfold::rhythm::verdict::Verdict {
            class: beatfold::rhythm::verdict::VerdictClass::Regular,
            irregular_fraction: 0.0,
            index: -2.0,
            reasons: vec!["RR regular".to_string()],
        },
        verdict_evidence: beatfold::rhythm::verdict::evidence(
            &[],
            250.0,
            &[],
            &[],
            &[],
            false,
            f64::NAN,
            &[],
            0.0,
            &beatfold::rhythm::verdict::VerdictParams::default(),
        ),
        geometry_index: f64::NAN,
        reference: Annotations {
            beats: beat_samples
                .iter()
                .enumerate()
                .map(|(i, &s)| BeatAnnotation {
                    sample: s,
                    code: label(i),
                })
                .collect(),
            rhythms: vec![
                RhythmInterval {
                    start_s: 0.0,
                    end_s: half,
                    label: rhythm_label.into(),
                },
                RhythmInterval {
                    start_s: half,
                    end_s: duration_s,
                    label: "(N".into(),
                },
            ],
        },
        beat_samples,
        separation: None,
        score: Some(Score {
            reference: n_beats,
            detected: n_beats,
            tp: n_beats,
            fp: 0,
            fn_: 0,
            se: 1.0,
            ppv: 1.0,
            match_window_ms: 150.0,
        }),
        parameters: json!({ "recurrence": { "threshold": { "distance": 0.05 }, "theiler": 1,
            "l_min": 2, "v_min": 2, "window": 256, "step": 64 }, "recurrence_components": 3 }),
        notes: Vec::new(),
        elapsed_s: 0.5,
    }
}
