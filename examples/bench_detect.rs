//! Release-build timing of conditioning + beat detection on a long single-lead recording (the
//! detection issue's target: 24 h at 250 Hz in under 1 s).
//!
//! Usage: `cargo run --release --example bench_detect -- [HOURS]` (default 24). Synthesises a
//! telemetry-night recording (one lead, 250 Hz, seed 1), then times, best of three runs:
//! conditioning alone, each detector alone, and `pipeline::detect_beats` (conditioning, both
//! detectors, agreement, RR and labels; stages run concurrently on the available cores).

use beatfold::params::Checked;
use beatfold::pipeline::{self, AnalyzeParams};
use beatfold::synth::{synthesize, Scenario, SynthParams};

#[path = "common/timing.rs"]
mod timing;
use timing::best_of_3;

fn main() -> anyhow::Result<()> {
    let hours: f64 = std::env::args()
        .nth(1)
        .map(|s| s.parse())
        .transpose()?
        .unwrap_or(24.0);
    let mut sp = SynthParams::for_scenario(Scenario::TelemetryNight, hours * 60.0, 250.0, 1);
    sp.leads = 1;
    let t0 = std::time::Instant::now();
    let rec = synthesize(&Checked::new(sp.clone())?)?;
    println!(
        "synthesised {hours} h, 1 lead, 250 Hz: {} samples in {:.1} s; {} threads",
        rec.n_samples(),
        t0.elapsed().as_secs_f64(),
        rayon::current_num_threads()
    );
    let x = &rec.leads[0].samples;
    let p = beatfold::params::Checked::<AnalyzeParams>::default();
    best_of_3("conditioning (band-pass, notch, baseline)", || {
        beatfold::signal::condition(x, rec.fs_hz, &Checked::new(p.condition.clone())?)
    })?;
    best_of_3("Elgendi et al. (2013) alone", || {
        beatfold::beats::elgendi(x, rec.fs_hz, &Checked::new(p.elgendi.clone())?)
    })?;
    best_of_3("Pan & Tompkins (1985) alone", || {
        beatfold::beats::pan_tompkins(x, rec.fs_hz, &Checked::new(p.pan_tompkins.clone())?)
    })?;
    let (c, el) = best_of_3(
        "conditioning + primary detection (Elgendi), side by side",
        || {
            rayon::join(
                || beatfold::signal::condition(x, rec.fs_hz, &Checked::new(p.condition.clone())?),
                || beatfold::beats::elgendi(x, rec.fs_hz, &Checked::new(p.elgendi.clone())?),
            )
        },
    );
    c?;
    el?;
    let c = beatfold::signal::condition(x, rec.fs_hz, &Checked::new(p.condition.clone())?)?;
    let el = beatfold::beats::elgendi(x, rec.fs_hz, &Checked::new(p.elgendi.clone())?)?;
    best_of_3("heuristic beat labels", || {
        beatfold::beats::label_beats(&c, rec.fs_hz, &el)
    });
    let b = best_of_3(
        "detect_beats: conditioning + both detectors + labels",
        || pipeline::detect_beats(&rec, &p),
    )?;
    let reference: Vec<usize> = rec.annotations.beats.iter().map(|b| b.sample).collect();
    let s = beatfold::beats::score(&reference, &b.samples, rec.fs_hz, 0.150);
    println!(
        "beats {} (reference {}), Se {:.4} +P {:.4}, agreement {:.4}",
        b.samples.len(),
        reference.len(),
        s.se,
        s.ppv,
        b.agreement
    );
    Ok(())
}
