//! `synth`: a synthetic recording with its exact ground truth.

use super::commands::Out;
use anyhow::{bail, Result};
use beatfold::params::Checked;
use beatfold::{io, synth};
use std::path::Path;

#[allow(clippy::too_many_arguments)]
pub(super) fn synth_cmd(
    out: &Path,
    minutes: f64,
    fs_hz: f64,
    scenario: &str,
    seed: u64,
    leads: usize,
    mean_hr_bpm: Option<f64>,
    quiet: bool,
) -> Result<()> {
    let o = Out { quiet };
    let scen = synth::Scenario::from_name(scenario)?;
    let mut p = synth::SynthParams::for_scenario(scen, minutes, fs_hz, seed);
    p.leads = leads;
    if let Some(hr) = mean_hr_bpm {
        p.mean_hr_bpm = hr;
    }
    let rec = synth::synthesize(&Checked::new(p)?)?;
    let ext = out
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    match ext.as_str() {
        "csv" => io::csv::write_record(&rec, out)?,
        "edf" => io::edf::write_record(&rec, out)?,
        "hea" => {
            let dir = out.parent().filter(|d| !d.as_os_str().is_empty()).unwrap_or(Path::new("."));
            let mut named = rec.clone();
            named.name = match io::file_stem(out) {
                s if s.is_empty() => "synthetic".to_string(),
                s => s,
            };
            io::physionet::write_record(&named, dir, 212, 200.0)?;
        }
        _ => bail!(
            "{}: unsupported output extension `.{ext}`; synth writes .csv, .edf or .hea (PhysioNet format 212)",
            out.display()
        ),
    }
    let ann = io::annotations::sibling_path(out);
    io::annotations::write(&rec.annotations, rec.fs_hz, &ann)?;
    o.notice();
    o.line(format!(
        "wrote {} ({} lead(s), {} samples at {} Hz, scenario {}, seed {seed})",
        out.display(),
        rec.leads.len(),
        rec.n_samples(),
        rec.fs_hz,
        scen.name()
    ));
    o.line(format!(
        "wrote {} ({} beats, {} rhythm intervals)",
        ann.display(),
        rec.annotations.beats.len(),
        rec.annotations.rhythms.len()
    ));
    Ok(())
}
