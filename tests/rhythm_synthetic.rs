//! The irregular-rhythm research screen on synthetic recordings whose irregular episodes are
//! known exactly (telemetry-night scenario: one paroxysmal episode in the middle third).

use beatfold::pipeline::{analyze, AnalyzeParams, InputInfo};
use beatfold::record::RHYTHM_IRREGULAR;
use beatfold::rhythm::screen::duration_agreement;
use beatfold::synth::{synthesize, Scenario, SynthParams};

#[test]
fn screen_covers_the_synthetic_episode() {
    // The rhythm issue's target: duration Se and Sp ≥ 95 % against the known episodes (exact
    // ground truth of the synthesiser). Measured when written: Se 1.000 on every seed, Sp
    // 0.992, 0.966, 0.978, 0.992, 0.957, 0.975 for seeds 1–6 (episode edges refined beat by
    // beat; without the refinement Sp fell to 0.926 on seed 3). With the interior split of
    // locally regular runs (screen.rs) re-measured: unchanged except seed 6, Sp 0.974.
    for seed in [1u64, 2, 3, 4, 5, 6] {
        let p = SynthParams::for_scenario(Scenario::TelemetryNight, 30.0, 250.0, seed);
        let rec = synthesize(&p).unwrap();
        let a = analyze(
            &rec,
            &InputInfo::default(),
            &AnalyzeParams::default(),
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
