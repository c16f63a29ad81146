//! `beats` and `score`: beat detection and its EC57-style scoring against reference beats.

use super::commands::{load, Out};
use super::InputArgs;
use anyhow::{bail, Result};
use beatfold::io;
use beatfold::pipeline;
use beatfold::NOTICE;
use serde_json::json;
use std::path::{Path, PathBuf};

pub(super) fn beats_cmd(
    input: &InputArgs,
    out: Option<&Path>,
    json: bool,
    quiet: bool,
) -> Result<()> {
    let o = Out {
        quiet: quiet || json,
    };
    let (rec, params, _) = load(input, &o)?;
    let b = pipeline::detect_beats(&rec, &params)?;
    // Mean heart rate from NN intervals, as `analyze` and `rhythm` report it.
    let nn = beatfold::rhythm::nn_intervals(&b.rr_s, &b.labels);
    let v = beatfold::rhythm::variability(&nn);
    if let Some(path) = out {
        io::tables::write_beats(path, &b.samples, &b.rr_s, &b.labels, rec.fs_hz)?;
    }
    if json {
        let j = json!({
            "record": rec.name, "fs_hz": rec.fs_hz, "n_beats": b.samples.len(),
            "mean_hr_bpm": v.mean_hr_bpm, "mean_hr_from": "NN intervals",
            "agreement": b.agreement, "primary_detector": b.primary_detector,
            "notice": NOTICE,
        });
        println!("{}", serde_json::to_string_pretty(&j)?);
        return Ok(());
    }
    o.notice();
    o.line(format!(
        "{}: {} beats, mean HR {:.1} bpm (NN intervals), detector agreement bSQI {:.3}",
        rec.name,
        b.samples.len(),
        v.mean_hr_bpm,
        b.agreement
    ));
    if let Some(p) = out {
        o.line(format!("wrote {}", p.display()));
    }
    Ok(())
}

pub(super) fn score_cmd(
    inputs: &[PathBuf],
    read: &super::ReadArgs,
    json: bool,
    quiet: bool,
    rules: &beatfold::beats::ec57::Ec57Rules,
) -> Result<()> {
    use beatfold::beats::noise_stress;
    use beatfold::record_score;
    let o = Out {
        quiet: quiet || json,
    };
    if read.reference.is_some() && inputs.len() > 1 {
        bail!("--reference names one file, but {} recordings were given; leave it out to use each recording's `<stem>.annotations.csv`", inputs.len());
    }
    // Noise stress records (names such as 118e06) also get the table per SNR.
    let noise_mode = !inputs.is_empty()
        && inputs
            .iter()
            .all(|p| noise_stress::snr_db_from_name(&io::file_stem(p)).is_some());
    let readable_params = beatfold::beats::readable::ReadableParams::default();
    let schedule = noise_stress::NoiseSchedule::default();
    let mut rows = Vec::new();
    let mut scores = Vec::new();
    let mut noise_rows = Vec::new();
    o.notice();
    o.line(rules.describe());
    o.line(format!(
        "{:<24} {:>8} {:>8} {:>6} {:>6} {:>6} {:>8} {:>8}",
        "record", "ref", "detected", "TP", "FP", "FN", "Se %", "+P %"
    ));
    for path in inputs {
        let input = InputArgs {
            input: path.clone(),
            read: read.clone(),
        };
        let (rec, params, _) = load(&input, &o)?;
        if rec.annotations.beats.is_empty() {
            bail!(
                "{}: no reference beats (give --reference FILE or put `{}` beside it)",
                path.display(),
                io::annotations::sibling_path(path).display()
            );
        }
        let b = pipeline::detect_beats(&rec, &params)?;
        let rs = record_score::beat_score(&rec, &b, rules);
        let s = rs.score;
        let (scored_from_s, left_out) = (rs.scored_from_s, rs.left_out);
        scores.push(rs);
        o.line(format!(
            "{:<24} {:>8} {:>8} {:>6} {:>6} {:>6} {:>8.2} {:>8.2}",
            rec.name,
            s.reference,
            s.detected,
            s.tp,
            s.fp,
            s.fn_,
            100.0 * s.se,
            100.0 * s.ppv
        ));
        let rhythm = record_score::rhythm_duration(&rec, &b, &params)?;
        if let Some(r) = &rhythm {
            let pct = |v: Option<f64>| v.map_or("–".to_string(), |x| format!("{:.2}", 100.0 * x));
            o.line(format!(
                "{:<24} irregular-rhythm screen (research): reference {:.0} s, screened {:.0} s, duration Se {} %, Sp {} %",
                "",
                r.reference_irregular_s,
                r.detected_irregular_s,
                pct(r.duration_se),
                pct(r.duration_sp)
            ));
        }
        if noise_mode {
            noise_rows.push(record_score::noise_record(
                &rec,
                &b,
                &params,
                &readable_params,
                rules,
                &schedule,
            )?);
        }
        rows.push(json!({
            "record": rec.name, "duration_s": rec.duration_s(),
            "scored_from_s": scored_from_s, "left_out": left_out,
            "beats": s, "rhythm": rhythm,
        }));
    }
    let t = beatfold::beats::ec57::totals(&scores, rules);
    let (tp, fp, fn_, gse, gppv) = (
        t.pooled.tp,
        t.pooled.fp,
        t.pooled.fn_,
        t.pooled.se,
        t.pooled.ppv,
    );
    if inputs.len() > 1 {
        o.line(format!(
            "{:<24} {:>8} {:>8} {:>6} {:>6} {:>6} {:>8.2} {:>8.2}",
            "pooled",
            tp + fn_,
            tp + fp,
            tp,
            fp,
            fn_,
            100.0 * gse,
            100.0 * gppv
        ));
        o.line(format!(
            "{:<24} average over {} records: Se {:.2} %, +P {:.2} %",
            "",
            t.records,
            100.0 * t.average_se,
            100.0 * t.average_ppv
        ));
    }
    let snr_rows = noise_stress::by_snr(&noise_rows);
    if noise_mode {
        o.line(format!(
            "noise stress test (research): per SNR; noise from {:.0} s, {:.0} s noisy then {:.0} s clean in turn; unreadable = agreement bSQI of the two detectors, or of the leads, below {} per {:.0} s window, or a quality flag",
            schedule.first_noisy_s, schedule.noisy_s, schedule.clean_s, readable_params.bsqi_min, readable_params.window_s
        ));
        o.line(noise_stress::snr_table_markdown(&snr_rows).trim_end());
    }
    if json {
        let mut j = if rows.len() == 1 {
            rows.remove(0)
        } else {
            json!({"records": rows, "pooled": {"tp": tp, "fp": fp, "fn": fn_, "se": gse, "ppv": gppv}, "average": {"se": t.average_se, "ppv": t.average_ppv, "records": t.records}, "left_out": t.left_out})
        };
        if noise_mode {
            j["noise_stress"] = json!({"schedule": schedule, "unreadable": readable_params,
                "records": noise_rows, "by_snr": snr_rows});
        }
        j["rules"] = json!(rules);
        j["notice"] = json!(beatfold::NOTICE);
        println!("{}", serde_json::to_string_pretty(&j)?);
    }
    Ok(())
}
