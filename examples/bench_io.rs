//! Release-build timings of the readers (see docs/performance.md).
//!
//! Usage: `cargo run --release --example bench_io -- [HOURS]` (default 24): writes a synthetic
//! two-lead recording of HOURS at 250 Hz as EDF+ and as PhysioNet format 212 into a temporary
//! folder, then times reading each back.

use beatfold::io::{self, ReadOptions};
use beatfold::params::Checked;
use beatfold::synth::{synthesize, Scenario, SynthParams};
use std::time::Instant;

fn main() -> anyhow::Result<()> {
    let hours: f64 = std::env::args()
        .nth(1)
        .map(|s| s.parse())
        .transpose()?
        .unwrap_or(24.0);
    let mut sp = SynthParams::for_scenario(Scenario::Resting, hours * 60.0, 250.0, 3);
    sp.leads = 2;
    let rec = synthesize(&Checked::new(sp.clone())?)?;
    let dir = tempfile_dir()?;
    let edf = dir.join("day.edf");
    io::edf::write_record(&rec, &edf)?;
    let mut named = rec.clone();
    named.name = "day".into();
    io::physionet::write_record(&named, &dir, 212, 200.0)?;
    for (label, path) in [
        ("EDF+", edf.clone()),
        ("PhysioNet 212", dir.join("day.hea")),
    ] {
        let size = std::fs::metadata(if label == "EDF+" {
            edf.clone()
        } else {
            dir.join("day.dat")
        })?
        .len();
        let t0 = Instant::now();
        let l = io::read_record(&path, &ReadOptions::default())?;
        println!(
            "read {label:<14} {hours} h, {} leads x {} samples, {:.1} MB: {:.3} s",
            l.record.leads.len(),
            l.record.n_samples(),
            size as f64 / 1e6,
            t0.elapsed().as_secs_f64()
        );
    }
    std::fs::remove_dir_all(&dir)?;
    Ok(())
}

fn tempfile_dir() -> anyhow::Result<std::path::PathBuf> {
    let d = std::env::temp_dir().join(format!("beatfold-bench-io-{}", std::process::id()));
    std::fs::create_dir_all(&d)?;
    Ok(d)
}
