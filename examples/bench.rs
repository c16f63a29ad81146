//! Release-build timings of the main stages (see docs/performance.md).
//!
//! Usage: `cargo run --release --example bench -- [HOURS]` (default 24): synthesises a
//! telemetry-night recording of HOURS at 250 Hz, then times conditioning, detection (both
//! detectors), features, the diffusion map, k-means quantization scaling, rhythm measures and the
//! whole `analyze` + report.

use beatfold::params::Checked;
use beatfold::pipeline::{self, AnalyzeParams, InputInfo};
use beatfold::synth::{synthesize, Scenario, SynthParams};
use std::time::Instant;

fn time<T>(label: &str, f: impl FnOnce() -> T) -> T {
    let t0 = Instant::now();
    let v = f();
    println!("{label:<48} {:>8.2} s", t0.elapsed().as_secs_f64());
    v
}

fn main() -> anyhow::Result<()> {
    let hours: f64 = std::env::args()
        .nth(1)
        .map(|s| s.parse())
        .transpose()?
        .unwrap_or(24.0);
    let mut sp = SynthParams::for_scenario(Scenario::TelemetryNight, hours * 60.0, 250.0, 1);
    sp.leads = 2;
    let rec = time(&format!("synthesise {hours} h, 2 leads, 250 Hz"), || {
        synthesize(&Checked::new(sp.clone())?)
    })?;
    let x = &rec.leads[0].samples;
    println!("samples per lead: {}", x.len());
    let p = beatfold::params::Checked::<AnalyzeParams>::default();
    let c = time("condition one lead (band-pass, notch, baseline)", || {
        beatfold::signal::condition(x, rec.fs_hz, &Checked::new(p.condition.clone())?)
    })?;
    let det = time("Pan-Tompkins detection, one lead", || {
        beatfold::beats::pan_tompkins(x, rec.fs_hz, &Checked::new(p.pan_tompkins.clone())?)
    })?;
    time("second detector (Elgendi), one lead", || {
        beatfold::beats::elgendi(x, rec.fs_hz, &Checked::new(p.elgendi.clone())?)
    })?;
    println!("beats: {}", det.samples.len());
    let f = time("beat features", || {
        beatfold::features::beat_features(
            &c,
            rec.fs_hz,
            &det.samples,
            &Checked::new(p.features.clone())?,
        )
    })?;
    println!("feature matrix: {} x {}", f.points.n, f.points.dim);
    let e = time("diffusion map (fit 2000, Nystrom for the rest)", || {
        beatfold::embed::diffusion_map(&f.points, &Checked::new(p.diffusion.clone())?)
    })?;
    println!("eigenvalues: {:?}", &e.eigenvalues[..4]);
    let d = time("k-means quantization scaling", || {
        beatfold::dimension::kmeans_scaling(&f.points, &Checked::new(p.dimension.kmeans.clone())?)
    })?;
    println!("d = {:.2}, noise scale {:?}", d.d, d.noise_scale);
    let tmp = std::env::temp_dir().join("beatfold-bench");
    let a = time("whole analyze (all stages)", || {
        pipeline::analyze(&rec, &InputInfo::default(), &p, &mut |_, _| {})
    })?;
    time("report (figures, HTML, HDF5, JSON)", || {
        beatfold::report::write_all(&a, &tmp, &Checked::default())
    })?;
    let size = std::fs::metadata(tmp.join("report.html"))?.len();
    println!("report.html: {:.2} MB", size as f64 / 1e6);
    Ok(())
}
