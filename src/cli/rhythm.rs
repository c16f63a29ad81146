//! `rhythm`: variability, entropies, the irregular-rhythm screen and the record verdict.

use super::commands::{load, Out};
use super::InputArgs;
use anyhow::Result;
use beatfold::io;
use beatfold::pipeline;
use beatfold::NOTICE;
use serde_json::json;
use std::path::Path;

pub(super) fn rhythm_cmd(
    input: &InputArgs,
    window: &str,
    step: Option<&str>,
    windows_out: Option<&Path>,
    json: bool,
    quiet: bool,
) -> Result<()> {
    use beatfold::rhythm::windowed::{windowed_variability, Span};
    let o = Out {
        quiet: quiet || json,
    };
    // Check the window options before reading anything.
    let len = Span::parse(window)?;
    let step = match step {
        Some(s) => Span::parse(s)?,
        None => match len {
            Span::Beats(n) => Span::Beats((n / 2).max(1)),
            Span::Seconds(s) => Span::Seconds(0.5 * s),
        },
    };
    let (rec, params, _) = load(input, &o)?;
    let b = pipeline::detect_beats(&rec, &params)?;
    let nn = beatfold::rhythm::nn_intervals(&b.rr_s, &b.labels);
    let v = beatfold::rhythm::variability(&nn);
    let (sd1, sd2, sampen) = beatfold::rhythm::entropy::nn_descriptors(&nn);
    let sc = pipeline::screen_rhythm(&b, rec.fs_hz, &params)?;
    let (verdict, _) = beatfold::verdicts::record_verdict(&rec, &params)?;
    let t_end: Vec<f64> = b
        .samples
        .iter()
        .skip(1)
        .map(|&s| s as f64 / rec.fs_hz)
        .collect();
    let wins = windowed_variability(&b.rr_s, &t_end, &b.labels, len, step)?;
    if let Some(path) = windows_out {
        io::write_atomic(path, io::tables::windows_csv(&wins).as_bytes())?;
    }
    let num = |x: f64| {
        if x.is_finite() {
            json!(x)
        } else {
            serde_json::Value::Null
        }
    };
    if json {
        let wj: Vec<serde_json::Value> = wins
            .iter()
            .map(|w| {
                let v = &w.variability;
                json!({"start_s": w.start_s, "end_s": w.end_s, "n_intervals": w.n_intervals,
                    "n_nn": v.n_rr, "mean_hr_bpm": num(v.mean_hr_bpm), "sdnn_ms": num(v.sdnn_ms),
                    "rmssd_ms": num(v.rmssd_ms), "pnn50": num(v.pnn50), "cv": num(w.cv)})
            })
            .collect();
        let j = json!({"record": rec.name, "variability": v,
            "poincare": {"sd1_ms": num(sd1), "sd2_ms": num(sd2)},
            "sample_entropy": num(sampen),
            "screen": {"windows": sc.windows.len(), "short_windows": sc.short_windows.len(), "episodes": sc.episodes},
            "verdict": beatfold::rhythm::verdict::verdict_json(&verdict),
            "windows": wj,
            "notice": NOTICE});
        println!("{}", serde_json::to_string_pretty(&j)?);
        return Ok(());
    }
    o.notice();
    o.line(format!(
        "{}: {} NN intervals; mean HR {:.1} bpm, SDNN {:.1} ms, RMSSD {:.1} ms, pNN50 {:.3}",
        rec.name, v.n_rr, v.mean_hr_bpm, v.sdnn_ms, v.rmssd_ms, v.pnn50
    ));
    o.line(format!(
        "Poincaré SD1 {:.1} ms, SD2 {:.1} ms; sample entropy {:.3}",
        sd1, sd2, sampen
    ));
    o.line(format!(
        "irregular-rhythm research screen (not a diagnosis): {} windows, {} episode(s){}",
        sc.windows.len(),
        sc.episodes.len(),
        sc.episodes
            .iter()
            .map(|e| format!(" {:.0}–{:.0} s", e.start_s, e.end_s))
            .collect::<String>()
    ));
    o.line(format!(
        "rhythm verdict (research label, not a diagnosis): {} — {}",
        verdict.class.name(),
        verdict.reasons.join("; ")
    ));
    o.line(format!(
        "variability in {} sliding window(s) of {window}{}",
        wins.len(),
        windows_out.map_or(String::new(), |p| format!(": {}", p.display()))
    ));
    Ok(())
}
