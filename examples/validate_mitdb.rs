//! Validation on open annotated records in PhysioNet format (e.g. the MIT-BIH Arrhythmia
//! Database subset in `../shared/data/mitdb`).
//!
//! For every record listed in the folder's `records.csv`:
//! 1. decoding: the header checksums and initial values are verified by the reader, and the
//!    numbers of beat annotations, of `V` beats and the seconds of `(AFIB`/`(AFL` rhythm are
//!    compared with the table;
//! 2. detection: beats are detected on signal 0 by the pipeline's primary detector (and, for
//!    comparison, by Pan–Tompkins alone and with both leads fused) and scored against the reference beats with
//!    the rules of ANSI/AAMI EC57: a 150 ms matching window, the first 5 minutes of each record
//!    not scored (learning period), and paced records (102, 104, 107, 217) excluded from the
//!    gross totals. (EC57 itself is not freely available; these rules are from memory of the
//!    standard and its common use.)
//!
//! Scoring uses `beatfold::beats::ec57`, the same code as `beatfold score`.
//!
//! Usage: `cargo run --release --example validate_mitdb -- FOLDER [--out docs/validation-mitdb.md]
//! [--config FILE.json] [--gate-se P] [--gate-ppv P] [--gate-duration-se P] [--gate-duration-sp P]`:
//! exits non-zero when a gate (a percentage) is given and missed. `--config` applies an analysis
//! config (as `beatfold --config`) to every detection. The written page holds no timing, so a rerun
//! on the same data gives the same bytes (CI checks that).

use beatfold::beats;
use beatfold::io::{self, ReadOptions};
use beatfold::params::Checked;
use beatfold::pipeline::{self, AnalyzeParams};
use std::fmt::Write as _;
use std::path::PathBuf;

const PACED: [&str; 4] = ["102", "104", "107", "217"];

/// Gross "Se / +P" in percent from summed (TP, FP, FN).
fn pct((tp, fp, fnn): (usize, usize, usize)) -> String {
    format!(
        "{:.2} / {:.2}",
        100.0 * tp as f64 / (tp + fnn).max(1) as f64,
        100.0 * tp as f64 / (tp + fp).max(1) as f64
    )
}

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let Some(folder) = args.first().map(PathBuf::from) else {
        anyhow::bail!("usage: validate_mitdb FOLDER [--out FILE.md] [--gate-se P] [--gate-ppv P] [--gate-duration-se P] [--gate-duration-sp P]");
    };
    let out = args
        .iter()
        .position(|a| a == "--out")
        .and_then(|i| args.get(i + 1))
        .map(PathBuf::from);
    let table = std::fs::read_to_string(folder.join("records.csv"))?;
    let mut lines = table.lines();
    let header: Vec<&str> = lines.next().unwrap_or("").split(',').collect();
    let col = |name: &str| header.iter().position(|h| *h == name);
    let (c_rec, c_nb, c_nv, c_af, c_afl) = (
        col("record").unwrap_or(0),
        col("n_beat_annotations").unwrap_or(5),
        col("n_V").unwrap_or(6),
        col("af_seconds").unwrap_or(7),
        col("afl_seconds").unwrap_or(8),
    );
    let gate = |name: &str| -> anyhow::Result<Option<f64>> {
        match args.iter().position(|a| a == name) {
            Some(i) => Ok(Some(
                args.get(i + 1)
                    .ok_or_else(|| anyhow::anyhow!("{name} needs a percentage"))?
                    .parse()?,
            )),
            None => Ok(None),
        }
    };
    let gates = [
        ("gross Se %", gate("--gate-se")?),
        ("gross +P %", gate("--gate-ppv")?),
        ("screen duration Se %", gate("--gate-duration-se")?),
        ("screen duration Sp %", gate("--gate-duration-sp")?),
    ];
    // EC57 rules as `beatfold score` applies them: paced records left out of the totals.
    let rules = beats::ec57::Ec57Rules {
        leave_out: PACED.iter().map(|s| s.to_string()).collect(),
        ..beats::ec57::Ec57Rules::default()
    };
    rules.check()?;
    let config = args
        .iter()
        .position(|a| a == "--config")
        .and_then(|i| args.get(i + 1))
        .map(PathBuf::from);
    let params = beatfold::params::Check::check(match &config {
        Some(c) => AnalyzeParams::from_json_file(c)?,
        None => AnalyzeParams::default(),
    })?;
    let mut md = String::new();
    let mut n_records = 0usize;
    let mut primary_rows = Vec::new();
    let mut decode_ok = true;
    let _ = writeln!(md, "| record | beats (table / read) | V (table / read) | AF s (table / read) | AFL s (table / read) | ref beats scored | TP | FP | FN | Se % | +P % | Pan–Tompkins Se / +P % | two leads Se / +P % | note |");
    let _ = writeln!(
        md,
        "|---|---|---|---|---|---|---|---|---|---|---|---|---|---|"
    );
    let fused_params = beatfold::params::Check::check(AnalyzeParams {
        fuse_leads: true,
        ..(*params).clone()
    })?;
    let vote_params = beatfold::params::Check::check(AnalyzeParams {
        fuse_leads: true,
        fuse_method: beatfold::beats::FuseMethod::Vote,
        ..(*params).clone()
    })?;
    let mut alt = [(0usize, 0usize, 0usize); 3];
    let (mut tp, mut fp, mut fnn) = (0usize, 0usize, 0usize);
    let mut worst: Vec<(String, f64, f64)> = Vec::new();
    let mut rhythm_md = String::from(
        "| record | reference AF/AFL s | screened s | overlap s | false s | missed s | duration Se % | duration Sp % | P-wave template (beats, agreement) |\n|---|---|---|---|---|---|---|---|---|\n",
    );
    let (mut af_ref, mut af_det, mut af_tp, mut af_total) = (0.0f64, 0.0f64, 0.0f64, 0.0f64);
    let t0 = std::time::Instant::now();
    // Per record: (beat samples, RR, labels, fs, reference intervals, duration) for the
    // sensitivity table of the screen's interior split.
    let mut kept_beats = Vec::new();
    for line in lines {
        let f: Vec<&str> = line.split(',').collect();
        let rec_name = f[c_rec];
        let hea = folder.join(format!("{rec_name}.hea"));
        let loaded = io::read_record(&hea, &ReadOptions::default())?;
        let rec = loaded.record;
        let nb = rec.annotations.beats.len();
        let nv = rec
            .annotations
            .beats
            .iter()
            .filter(|b| b.code == 'V')
            .count();
        let secs = |label: &str| -> f64 {
            rec.annotations
                .rhythms
                .iter()
                .filter(|r| r.label == label)
                .map(|r| r.end_s - r.start_s)
                .sum()
        };
        // `+ 0.0` turns an empty sum's −0 into 0 for printing.
        let (af, afl) = (secs("AFIB") + 0.0, secs("AFL") + 0.0);
        let t_nb: usize = f[c_nb].parse()?;
        let t_nv: usize = f[c_nv].parse()?;
        let t_af: f64 = f[c_af].parse()?;
        let t_afl: f64 = f[c_afl].parse()?;
        let match_counts =
            nb == t_nb && nv == t_nv && (af - t_af).abs() < 0.01 && (afl - t_afl).abs() < 0.01;
        decode_ok &= match_counts;
        let b = pipeline::detect_beats(&rec, &params)?;
        let fused = pipeline::detect_beats(&rec, &fused_params)?;
        let voted = pipeline::detect_beats(&rec, &vote_params)?;
        let reference: Vec<usize> = rec.annotations.beats.iter().map(|b| b.sample).collect();
        let score = |d: &[usize]| {
            beats::ec57::score_record(rec_name, &reference, d, rec.fs_hz, rec.n_samples(), &rules)
        };
        let row = score(&b.samples);
        let s = row.score;
        primary_rows.push(row);
        n_records += 1;
        // With the default primary (Elgendi) the second detector is Pan–Tompkins on the same lead.
        let s_pt = score(&b.second).score;
        let s_fused = score(&fused.samples).score;
        let s_voted = score(&voted.samples).score;
        // Irregular-rhythm research screen against (AFIB and (AFL intervals, by duration.
        // P-wave presence index per beat, computed once and kept for the sensitivity table.
        let pw = beatfold::rhythm::atrial::p_wave_index_with(
            &b.conditioned,
            &b.samples,
            rec.fs_hz,
            &Checked::default(),
        )?;
        let atrial = pw.index;
        let sc = beatfold::rhythm::screen::screen_beats_atrial(
            &b.samples,
            &b.rr_s,
            &b.labels,
            &atrial,
            rec.fs_hz,
            &Checked::new(params.screen.clone())?,
        )?;
        // AF and flutter only: the open records carry no synthetic labels.
        let truth = beatfold::rhythm::screen::irregular_reference(&rec.annotations);
        let found = sc.episode_bounds();
        let dur = rec.duration_s();
        kept_beats.push((
            b.samples.clone(),
            b.rr_s.clone(),
            b.labels.clone(),
            atrial,
            rec.fs_hz,
            truth.clone(),
            dur,
        ));
        let (rs, ds, _, _) = beatfold::rhythm::screen::duration_agreement(&truth, &found, dur);
        let (rs, ds) = (rs + 0.0, ds + 0.0);
        let overlap: f64 = truth
            .iter()
            .flat_map(|&(a, b)| {
                found
                    .iter()
                    .map(move |&(c, d)| (b.min(d) - a.max(c)).max(0.0))
            })
            .sum::<f64>()
            + 0.0;
        af_ref += rs;
        af_det += ds;
        af_tp += overlap;
        af_total += dur;
        let _ = writeln!(
            rhythm_md,
            "| {rec_name} | {rs:.0} | {ds:.0} | {overlap:.0} | {:.0} | {:.0} | {} | {} | {} |",
            ds - overlap + 0.0,
            rs - overlap + 0.0,
            if rs > 0.0 {
                format!("{:.1}", 100.0 * overlap / rs)
            } else {
                "–".into()
            },
            if dur - rs > 0.0 {
                format!("{:.1}", 100.0 * (dur - rs - ds + overlap) / (dur - rs))
            } else {
                "–".into()
            },
            if pw.accepted {
                format!("{}, {:.2}", pw.template_beats, pw.agreement)
            } else {
                format!("none ({} beats, {:.2})", pw.template_beats, pw.agreement)
            }
        );
        let paced = rules.left_out(rec_name);
        if !paced {
            tp += s.tp;
            fp += s.fp;
            fnn += s.fn_;
            for (k, x) in [s_pt, s_fused, s_voted].iter().enumerate() {
                alt[k].0 += x.tp;
                alt[k].1 += x.fp;
                alt[k].2 += x.fn_;
            }
            worst.push((rec_name.to_string(), s.se, s.ppv));
        }
        let _ = writeln!(
            md,
            "| {rec_name} | {t_nb} / {nb} | {t_nv} / {nv} | {t_af:.2} / {af:.2} | {t_afl:.2} / {afl:.2} | {} | {} | {} | {} | {:.2} | {:.2} | {:.2} / {:.2} | {:.2} / {:.2} | {} |",
            s.reference, s.tp, s.fp, s.fn_, 100.0 * s.se, 100.0 * s.ppv,
            100.0 * s_pt.se, 100.0 * s_pt.ppv, 100.0 * s_fused.se, 100.0 * s_fused.ppv,
            if paced { "paced: excluded from gross (EC57)" } else if match_counts { "" } else { "COUNTS DIFFER" }
        );
        eprintln!(
            "{rec_name}: Se {:.2} % +P {:.2} %",
            100.0 * s.se,
            100.0 * s.ppv
        );
    }
    // Gross totals from the library (the same as `beatfold score`'s pooled row).
    let totals = beats::ec57::totals(&primary_rows, &rules);
    let (gse, gppv) = (totals.pooled.se, totals.pooled.ppv);
    debug_assert_eq!(
        (totals.pooled.tp, totals.pooled.fp, totals.pooled.fn_),
        (tp, fp, fnn)
    );
    let _ = writeln!(
        md,
        "| **gross (non-paced)** | | | | | {} | {tp} | {fp} | {fnn} | **{:.2}** | **{:.2}** | {} | {} | |",
        tp + fnn,
        100.0 * gse,
        100.0 * gppv,
        pct(alt[0]),
        pct(alt[1])
    );
    worst.sort_by(|a, b| a.1.min(a.2).total_cmp(&b.1.min(b.2)));
    let summary = format!(
        "Decoding: every header checksum and initial value verified; annotation counts {} records.csv.\n\
         Detection (EC57 rules: 150 ms window, first 5 min not scored, paced records excluded), primary detector \
         (Elgendi et al. 2013, lead 0): gross Se {:.2} %, +P {:.2} % over {} reference beats; lowest record {} \
         (Se {:.2} %, +P {:.2} %). For comparison, gross Se / +P of Pan & Tompkins (1985) on lead 0: {} %; \
         of the primary with both leads chosen per 10 s window (`fuse_leads`): {} %; of both leads fused by vote \
         (`fuse_leads` with `fuse_method` \"vote\", `beats::fusion`): {} %.\n",
        if decode_ok { "all equal to" } else { "NOT all equal to" },
        100.0 * gse,
        100.0 * gppv,
        tp + fnn,
        worst.first().map_or("-", |w| w.0.as_str()),
        worst.first().map_or(0.0, |w| 100.0 * w.1),
        worst.first().map_or(0.0, |w| 100.0 * w.2),
        pct(alt[0]),
        pct(alt[1]),
        pct(alt[2]),
    );
    eprintln!("run time {:.1} s", t0.elapsed().as_secs_f64());
    let af_se = af_tp / af_ref.max(1e-9);
    let af_sp = (af_total - af_ref - af_det + af_tp) / (af_total - af_ref).max(1e-9);
    let rhythm_summary = format!(
        "Irregular-rhythm research screen against (AFIB and (AFL labels (all records, by duration): Se {:.2} %, Sp {:.2} % \
         ({af_ref:.0} s labelled, {af_det:.0} s screened, {af_tp:.0} s overlap).\n",
        100.0 * af_se,
        100.0 * af_sp
    );
    // Sensitivity of the screen to its interior-split parameters (each varied ±50 %).
    let base = params.screen.clone();
    let variant = |label: String, set: &dyn Fn(&mut beatfold::rhythm::screen::ScreenParams)| {
        let mut p = base.clone();
        set(&mut p);
        (label, p)
    };
    let variants: Vec<(String, beatfold::rhythm::screen::ScreenParams)> = vec![
        ("defaults".into(), base.clone()),
        variant("split_regular_s = 0 (no split)".into(), &|p| {
            p.split_regular_s = 0.0
        }),
        variant(
            format!("split_regular_s = {}", 0.5 * base.split_regular_s),
            &|p| p.split_regular_s = 0.5 * base.split_regular_s,
        ),
        variant(
            format!("split_regular_s = {}", 1.5 * base.split_regular_s),
            &|p| p.split_regular_s = 1.5 * base.split_regular_s,
        ),
        variant(format!("cosen_min = {:.2}", 0.5 * base.cosen_min), &|p| {
            p.cosen_min = 0.5 * base.cosen_min
        }),
        variant(format!("cosen_min = {:.2}", 1.5 * base.cosen_min), &|p| {
            p.cosen_min = 1.5 * base.cosen_min
        }),
        variant(format!("cosen_beats = {}", base.cosen_beats / 2), &|p| {
            p.cosen_beats = base.cosen_beats / 2
        }),
        variant(
            format!("cosen_beats = {}", base.cosen_beats * 3 / 2),
            &|p| p.cosen_beats = base.cosen_beats * 3 / 2,
        ),
        variant(format!("cosen_r_s = {:.3}", 0.5 * base.cosen_r_s), &|p| {
            p.cosen_r_s = 0.5 * base.cosen_r_s
        }),
        variant(format!("cosen_r_s = {:.3}", 1.5 * base.cosen_r_s), &|p| {
            p.cosen_r_s = 1.5 * base.cosen_r_s
        }),
        variant("atrial_veto = false".into(), &|p| p.atrial_veto = false),
        variant(format!("atrial_min = {:.2}", 0.5 * base.atrial_min), &|p| {
            p.atrial_min = 0.5 * base.atrial_min
        }),
        variant(format!("atrial_min = {:.2}", 1.5 * base.atrial_min), &|p| {
            p.atrial_min = 1.5 * base.atrial_min
        }),
        variant(
            format!("atrial_split_s = {}", 0.5 * base.atrial_split_s),
            &|p| p.atrial_split_s = 0.5 * base.atrial_split_s,
        ),
        variant(
            format!("atrial_split_s = {}", 1.5 * base.atrial_split_s),
            &|p| p.atrial_split_s = 1.5 * base.atrial_split_s,
        ),
        variant(format!("atrial_beats = {}", base.atrial_beats / 2), &|p| {
            p.atrial_beats = base.atrial_beats / 2
        }),
        variant(
            format!("atrial_beats = {}", base.atrial_beats * 3 / 2),
            &|p| p.atrial_beats = base.atrial_beats * 3 / 2,
        ),
    ];
    let mut sens_md = String::from(
        "| screen parameters | duration Se % | duration Sp % | false s | missed s | false s 201 / 219 / 222 | missed s 202 / 203 / 210 / 219 / 221 |\n|---|---|---|---|---|---|---|\n",
    );
    for (name, sp) in &variants {
        let (mut r_all, mut d_all, mut o_all, mut t_all) = (0.0f64, 0.0f64, 0.0f64, 0.0f64);
        let mut per = Vec::new();
        let mut per_missed = Vec::new();
        for (k, (smp, rr, lab, atrial, fs, truth, dur)) in kept_beats.iter().enumerate() {
            let sc = beatfold::rhythm::screen::screen_beats_atrial(
                smp,
                rr,
                lab,
                atrial,
                *fs,
                &Checked::new(sp.clone())?,
            )?;
            let found = sc.episode_bounds();
            let (rs, ds, _, _) = beatfold::rhythm::screen::duration_agreement(truth, &found, *dur);
            let ov: f64 = truth
                .iter()
                .flat_map(|&(a, b)| {
                    found
                        .iter()
                        .map(move |&(c, d)| (b.min(d) - a.max(c)).max(0.0))
                })
                .sum();
            r_all += rs;
            d_all += ds;
            o_all += ov;
            t_all += dur;
            let name_k = table
                .lines()
                .nth(k + 1)
                .and_then(|l| l.split(',').nth(c_rec))
                .unwrap_or("");
            if ["201", "219", "222"].contains(&name_k) {
                per.push(format!("{:.0}", ds - ov + 0.0));
            }
            if ["202", "203", "210", "219", "221"].contains(&name_k) {
                per_missed.push(format!("{:.0}", rs - ov + 0.0));
            }
        }
        let _ = writeln!(
            sens_md,
            "| {name} | {:.2} | {:.2} | {:.0} | {:.0} | {} | {} |",
            100.0 * o_all / r_all.max(1e-9),
            100.0 * (t_all - r_all - d_all + o_all) / (t_all - r_all).max(1e-9),
            d_all - o_all,
            r_all - o_all,
            per.join(" / "),
            per_missed.join(" / ")
        );
    }
    println!("{summary}");
    println!("{md}");
    println!("{rhythm_summary}");
    println!("{rhythm_md}");
    println!("{sens_md}");
    if let Some(out) = out {
        let doc = format!(
            "# Validation on open annotated records\n\n\
             Made by `cargo run --release --example validate_mitdb -- {} --out {}` (do not edit by hand).\n\n\
             Data: MIT-BIH Arrhythmia Database 1.0.0 subset (Moody & Mark 2001; Goldberger et al. 2000; PhysioNet, \
             ODC-By 1.0), {n_records} records; see the folder's SOURCE.md.\n\n## Decoding and beat detection\n\n{summary}\n{md}\n\
             ## Irregular-rhythm research screen\n\n{rhythm_summary}\n{rhythm_md}\n\
             ### Sensitivity\n\nThe same detected beats (and the same P-wave index) screened again with one parameter of the \
             interior split or of the atrial veto (docs/methods.md) changed by ±50 %, or the veto off; false s = screened time outside the reference AF/AFL, missed s = \
             reference time not screened.\n\n{sens_md}\n\
             Research use only: these numbers describe beatfold on this benchmark, not on your data.\n",
            folder.display(),
            out.display()
        );
        io::write_atomic(&out, doc.as_bytes())?;
    }
    if !decode_ok {
        anyhow::bail!("annotation counts differ from records.csv");
    }
    let got = [100.0 * gse, 100.0 * gppv, 100.0 * af_se, 100.0 * af_sp];
    let mut missed = Vec::new();
    for ((name, g), v) in gates.iter().zip(got) {
        if let Some(g) = g {
            if v < *g {
                missed.push(format!("{name} {v:.2} below the gate {g}"));
            }
        }
    }
    if !missed.is_empty() {
        anyhow::bail!("validation gates missed: {}", missed.join("; "));
    }
    Ok(())
}
