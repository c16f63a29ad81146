//! `analyze` and `demo`: the whole chain on one recording, written as a report.

use super::commands::{load, progress_bar, Out};
use super::InputArgs;
use anyhow::{Context, Result};
use beatfold::io;
use beatfold::params::Checked;
use beatfold::pipeline::{self, AnalyzeParams, InputInfo};
use beatfold::record::Record;
use beatfold::{report, synth};
use std::path::Path;

/// The bundled demo recording (made by `beatfold synth`, see demo-data/README.md).
const DEMO_CSV: &str = include_str!("../../demo-data/telemetry-night.csv");
/// Its exact ground truth.
const DEMO_ANN: &str = include_str!("../../demo-data/telemetry-night.annotations.csv");

/// A record to analyse: the record, where it came from, and a user's feature table with its mode.
pub(super) struct Inputs<'a> {
    pub rec: &'a Record,
    pub info: &'a InputInfo,
    pub table: Option<(
        &'a beatfold::io::beat_table::BeatTable,
        beatfold::separate::TableMode,
    )>,
}

pub(super) fn analyze_and_write(
    inputs: Inputs<'_>,
    params: &Checked<AnalyzeParams>,
    out: &Path,
    json: bool,
    ropts: &Checked<report::ReportOptions>,
    o: &Out,
) -> Result<()> {
    let Inputs { rec, info, table } = inputs;
    let pb = progress_bar(o.quiet);
    let mut cb = |i: usize, stage: &str| {
        if let Some(pb) = &pb {
            pb.set_position(i as u64);
            pb.set_message(stage.to_string());
        }
    };
    let a = pipeline::analyze_with_table(rec, info, params, table, &mut cb)?;
    if let Some(pb) = &pb {
        pb.set_message("writing report");
    }
    let written = report::write_all(&a, out, ropts)?;
    if let Some(pb) = pb {
        pb.finish_and_clear();
    }
    if json {
        println!(
            "{}",
            serde_json::to_string_pretty(&report::summary_json(&a))?
        );
        return Ok(());
    }
    o.notice();
    o.line(format!(
        "record {}: {:.1} s at {} Hz, lead {}",
        a.record_name, a.duration_s, a.fs_hz, a.raw.name
    ));
    o.line(format!(
        "beats: {}   mean HR {:.1} bpm   SDNN {:.1} ms   RMSSD {:.1} ms   pNN50 {:.3}",
        a.beat_samples.len(),
        a.variability.mean_hr_bpm,
        a.variability.sdnn_ms,
        a.variability.rmssd_ms,
        a.variability.pnn50
    ));
    if let Some(s) = &a.score {
        o.line(format!(
            "against reference: TP {} FP {} FN {}   Se {:.2} %   +P {:.2} %",
            s.tp,
            s.fp,
            s.fn_,
            100.0 * s.se,
            100.0 * s.ppv
        ));
    }
    if a.embedding.n > 0 {
        let ev: Vec<String> = a
            .embedding
            .eigenvalues
            .iter()
            .take(5)
            .map(|v| format!("{v:.4}"))
            .collect();
        o.line(format!(
            "diffusion map: {} beats, epsilon {:.4}, eigenvalues {}",
            a.embedding.n,
            a.embedding.epsilon,
            ev.join(" ")
        ));
        let noise = a
            .dimension
            .noise_scale
            .map_or("not detected".to_string(), |s| format!("{s:.4}"));
        o.line(format!(
            "dimension (k-means quantization): d ≈ {:.2}, noise scale {noise}",
            a.dimension.d
        ));
        if let Some(s) = &a.dimension_suite {
            let parts: Vec<String> = s
                .estimates
                .iter()
                .map(|e| {
                    if e.ci95[0].is_finite() && e.ci95[1].is_finite() {
                        format!(
                            "{} {:.2} [{:.2}, {:.2}]",
                            e.method.name(),
                            e.d,
                            e.ci95[0],
                            e.ci95[1]
                        )
                    } else {
                        format!("{} {:.2} (no interval)", e.method.name(), e.d)
                    }
                })
                .collect();
            o.line(format!(
                "dimension estimates (95 % bootstrap intervals): {}",
                parts.join(", ")
            ));
            if let Some(c) = &s.consensus {
                o.line(format!("dimension consensus: {}", c.sentence()));
            }
        }
    }
    for n in &a.notes {
        o.line(format!("note: {n}"));
    }
    o.line(format!(
        "report: {}",
        written.dir.join("report.html").display()
    ));
    Ok(())
}

pub(super) fn demo(
    out: &Path,
    seed: Option<u64>,
    minutes: f64,
    json: bool,
    quiet: bool,
) -> Result<()> {
    let o = Out { quiet };
    let input_dir = out.join("input");
    std::fs::create_dir_all(&input_dir)
        .with_context(|| format!("{}: cannot create folder", input_dir.display()))?;
    let rec_path = input_dir.join("telemetry-night.csv");
    match seed {
        None => {
            io::write_atomic(&rec_path, DEMO_CSV.as_bytes())?;
            io::write_atomic(
                &io::annotations::sibling_path(&rec_path),
                DEMO_ANN.as_bytes(),
            )?;
            o.line("demo: bundled recording demo-data/telemetry-night.csv (synthetic; exact ground truth)");
        }
        Some(seed) => {
            let scen = synth::Scenario::from_name("telemetry-night")?;
            let p = synth::SynthParams::for_scenario(scen, minutes, 250.0, seed);
            let rec = synth::synthesize(&Checked::new(p)?)?;
            io::csv::write_record(&rec, &rec_path)?;
            io::annotations::write(
                &rec.annotations,
                rec.fs_hz,
                &io::annotations::sibling_path(&rec_path),
            )?;
            o.line(format!(
                "demo: synthesised telemetry-night, {minutes} min, seed {seed}"
            ));
        }
    }
    let input = InputArgs {
        input: rec_path,
        read: super::ReadArgs::default(),
    };
    let (rec, params, info) = load(&input, &o)?;
    let t0 = std::time::Instant::now();
    analyze_and_write(
        Inputs {
            rec: &rec,
            info: &info,
            table: None,
        },
        &params,
        out,
        json,
        &Checked::default(),
        &o,
    )?;
    o.line(format!(
        "demo finished in {:.2} s",
        t0.elapsed().as_secs_f64()
    ));
    Ok(())
}
