//! `beats` and `score`: beat detection and its EC57-style scoring against reference beats.

use super::commands::{load, Out};
use super::InputArgs;
use anyhow::{bail, Result};
use beatfold::io;
use beatfold::pipeline::{self, AnalyzeParams};
use beatfold::record::Record;
use beatfold::rhythm::screen::irregular_reference;
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
    let o = Out {
        quiet: quiet || json,
    };
    if read.reference.is_some() && inputs.len() > 1 {
        bail!("--reference names one file, but {} recordings were given; leave it out to use each recording's `<stem>.annotations.csv`", inputs.len());
    }
    let mut rows = Vec::new();
    let mut scores = Vec::new();
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
                "{}: no reference beats (give --reference ANN or put `{}` beside it)",
                path.display(),
                io::annotations::sibling_path(path).display()
            );
        }
        let b = pipeline::detect_beats(&rec, &params)?;
        let r: Vec<usize> = rec.annotations.beats.iter().map(|x| x.sample).collect();
        let rs = beatfold::beats::ec57::score_record(
            &rec.name,
            &r,
            &b.samples,
            rec.fs_hz,
            rec.n_samples(),
            rules,
        );
        let s = rs.score;
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
        let rhythm = rhythm_score(&rec, &b, &params)?;
        if let Some(r) = &rhythm {
            o.line(format!(
                "{:<24} irregular-rhythm screen (research): reference {:.0} s, screened {:.0} s, duration Se {:.2} %, Sp {:.2} %",
                "",
                r["reference_irregular_s"].as_f64().unwrap_or(0.0),
                r["detected_irregular_s"].as_f64().unwrap_or(0.0),
                100.0 * r["duration_se"].as_f64().unwrap_or(f64::NAN),
                100.0 * r["duration_sp"].as_f64().unwrap_or(f64::NAN)
            ));
        }
        rows.push(json!({
            "record": rec.name, "duration_s": rec.duration_s(),
            "beats": s, "rhythm": rhythm.unwrap_or(serde_json::Value::Null),
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
    if json {
        let j = if rows.len() == 1 {
            rows.remove(0)
        } else {
            json!({"records": rows, "rules": rules, "pooled": {"tp": tp, "fp": fp, "fn": fn_, "se": gse, "ppv": gppv}, "average": {"se": t.average_se, "ppv": t.average_ppv, "records": t.records}, "left_out": t.left_out})
        };
        println!("{}", serde_json::to_string_pretty(&j)?);
    }
    Ok(())
}

/// Duration agreement of the irregular-rhythm screen with the reference rhythm labels, or None
/// when the reference has no rhythm labels.
fn rhythm_score(
    rec: &Record,
    b: &pipeline::BeatsResult,
    params: &AnalyzeParams,
) -> Result<Option<serde_json::Value>> {
    if rec.annotations.rhythms.is_empty() {
        return Ok(None);
    }
    let sc = pipeline::screen_rhythm(b, rec.fs_hz, params)?;
    let truth = irregular_reference(&rec.annotations);
    let found = sc.episode_bounds();
    let (r, d, se, sp) =
        beatfold::rhythm::screen::duration_agreement(&truth, &found, rec.duration_s());
    let num = |v: f64| {
        if v.is_finite() {
            json!(v)
        } else {
            serde_json::Value::Null
        }
    };
    Ok(Some(json!({
        "reference_irregular_s": r, "detected_irregular_s": d,
        "duration_se": num(se), "duration_sp": num(sp),
        "reference_episodes": truth.len(), "detected_episodes": found.len(),
    })))
}
