//! The noise stress test (Moody, Muldrow & Mark 1984) on a folder of noise-stress records
//! (e.g. `../shared/data/nstdb`): every header `NNNeSS.hea` whose name carries an SNR is read,
//! its beats are detected with the default parameters, and it is scored by the EC57 rules
//! (`beatfold::record_score`, the same code as `beatfold score`), per SNR, with the beats in
//! stretches the quality index marks unreadable counted apart.
//!
//! Usage: `cargo run --release --example validate_noise -- FOLDER [--out docs/validation-noise.md]
//! [--config FILE.json] [--gate SNR:SE:PPV]... [--gate-quality SNR:CAUGHT:MARKED]...`. A gate such
//! as `12:99:98` requires pooled Se ≥ 99 % and +P ≥ 98 % at 12 dB; `6:80:5` for the quality
//! index requires at 6 dB at least 80 % of the false detections inside stretches marked
//! unreadable and at most 5 % of the clean time marked. The command exits non-zero when a gate is
//! missed. `--config` applies an analysis config (as `beatfold --config`) to every detection. The
//! page holds no timing, so a rerun gives the same bytes.

use anyhow::{bail, Context};
use beatfold::beats::ec57::Ec57Rules;
use beatfold::beats::noise_stress::{self, NoiseSchedule};
use beatfold::beats::readable::ReadableParams;
use beatfold::io::{self, ReadOptions};
use beatfold::pipeline::{self, AnalyzeParams};
use beatfold::record_score;
use std::path::PathBuf;

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let Some(folder) = args.first().map(PathBuf::from) else {
        bail!("usage: validate_noise FOLDER [--out FILE.md] [--config FILE.json] [--gate SNR:SE:PPV]... [--gate-quality SNR:CAUGHT:MARKED]...");
    };
    let mut out = None;
    let mut config = None;
    let mut gates: Vec<(i32, f64, f64)> = Vec::new();
    let mut quality_gates: Vec<(i32, f64, f64)> = Vec::new();
    let triple = |g: &str| -> anyhow::Result<(i32, f64, f64)> {
        let f: Vec<&str> = g.split(':').collect();
        if f.len() != 3 {
            bail!("gate `{g}`: expected three numbers separated by `:`, e.g. 12:99:98");
        }
        Ok((f[0].parse()?, f[1].parse()?, f[2].parse()?))
    };
    let mut i = 1;
    while i < args.len() {
        match args[i].as_str() {
            "--out" => out = args.get(i + 1).map(PathBuf::from),
            "--config" => config = args.get(i + 1).map(PathBuf::from),
            "--gate" => gates.push(triple(args.get(i + 1).context("--gate needs SNR:SE:PPV")?)?),
            "--gate-quality" => quality_gates.push(triple(
                args.get(i + 1)
                    .context("--gate-quality needs SNR:CAUGHT:MARKED")?,
            )?),
            other => bail!("unknown argument `{other}`"),
        }
        i += 2;
    }
    let mut heads: Vec<PathBuf> = std::fs::read_dir(&folder)
        .with_context(|| format!("{}: cannot list", folder.display()))?
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| {
            p.extension().is_some_and(|e| e == "hea")
                && noise_stress::snr_db_from_name(&io::file_stem(p)).is_some()
        })
        .collect();
    heads.sort();
    if heads.is_empty() {
        bail!("{}: no noise stress records (NNNeSS.hea)", folder.display());
    }
    let params = beatfold::params::Check::check(match &config {
        Some(c) => AnalyzeParams::from_json_file(c)?,
        None => AnalyzeParams::default(),
    })?;
    let rules = Ec57Rules::default();
    let readable = ReadableParams::default();
    let schedule = NoiseSchedule::default();
    let t0 = std::time::Instant::now();
    // The quality index without the comparison across leads, for the page's second table.
    let one_lead = ReadableParams {
        cross_lead: false,
        ..readable.clone()
    };
    let mut one_lead_rows = Vec::new();
    let mut rows = Vec::new();
    for h in &heads {
        let rec = io::read_record(h, &ReadOptions::default())?.record;
        let b = pipeline::detect_beats(&rec, &params)?;
        let r = record_score::noise_record(&rec, &b, &params, &readable, &rules, &schedule)?;
        one_lead_rows.push(record_score::noise_record(
            &rec, &b, &params, &one_lead, &rules, &schedule,
        )?);
        eprintln!(
            "{}: Se {:.2} % +P {:.2} %",
            r.record,
            100.0 * r.all.se,
            100.0 * r.all.ppv
        );
        rows.push(r);
    }
    eprintln!("run time {:.1} s", t0.elapsed().as_secs_f64());
    let by_snr = noise_stress::by_snr(&rows);
    let table = noise_stress::snr_table_markdown(&by_snr);
    let records: Vec<&str> = rows.iter().map(|r| r.record.as_str()).collect();
    let mut compare = String::from(
        "| SNR dB | FP in unreadable %, both detectors and both leads | clean time marked % | FP in unreadable %, both detectors on lead 0 only | clean time marked % |\n|---|---|---|---|---|\n",
    );
    for (a, b) in by_snr.iter().zip(noise_stress::by_snr(&one_lead_rows)) {
        compare.push_str(&format!(
            "| {} | {:.1} | {:.1} | {:.1} | {:.1} |\n",
            a.snr_db.map_or("–".into(), |v| v.to_string()),
            100.0 * a.fp_caught(),
            100.0 * a.clean_marked(),
            100.0 * b.fp_caught(),
            100.0 * b.clean_marked()
        ));
    }
    let page = format!(
        "# Noise stress test\n\n\
         Made by `cargo run --release --example validate_noise -- {} --out {}` (do not edit by hand).\n\n\
         Data: MIT-BIH Noise Stress Test Database 1.0.0 (Moody, Muldrow & Mark 1984; PhysioNet, ODC-By 1.0): {}.\n\
         Beats detected with the default parameters (primary detector on lead 0), scored by the EC57 rules of \
         `beatfold score` ({}). Noise from {:.0} s, {:.0} s noisy then {:.0} s clean in turn. A stretch is \
         unreadable when the two detectors' agreement bSQI (Li, Mark & Clifford 2008) is below {} in a {:.0} s \
         window, between the two detectors on lead 0 or between the primary detector on the two leads, or a quality \
         flag is set; nothing here was tuned on these records.\n\n{table}\n\
         The quality index with and without the comparison across leads:\n\n{compare}\n\
         Targets: at 6 dB pooled Se ≥ 97 % and +P ≥ 95 %; at 12 dB Se ≥ 99 % and +P ≥ 98 %; at 6 dB at \
         least 80 % of the false detections in unreadable stretches while at most 5 % of the clean time is marked.\n\n\
         Research use only: these numbers describe beatfold on this benchmark, not on your data.\n",
        folder.display(),
        out.as_ref().map_or("FILE".into(), |p: &PathBuf| p.display().to_string()),
        records.join(", "),
        rules.describe(),
        schedule.first_noisy_s,
        schedule.noisy_s,
        schedule.clean_s,
        readable.bsqi_min,
        readable.window_s,
    );
    println!("{page}");
    if let Some(p) = &out {
        io::write_atomic(p, page.as_bytes())?;
    }
    let mut missed = Vec::new();
    for (snr, se, ppv) in gates {
        let Some(r) = by_snr.iter().find(|r| r.snr_db == Some(snr)) else {
            bail!("--gate {snr}: no records at {snr} dB");
        };
        if 100.0 * r.all.se < se || 100.0 * r.all.ppv < ppv {
            missed.push(format!(
                "{snr} dB: Se {:.2} % (gate {se}), +P {:.2} % (gate {ppv})",
                100.0 * r.all.se,
                100.0 * r.all.ppv
            ));
        }
    }
    for (snr, caught, marked) in quality_gates {
        let Some(r) = by_snr.iter().find(|r| r.snr_db == Some(snr)) else {
            bail!("--gate-quality {snr}: no records at {snr} dB");
        };
        if 100.0 * r.fp_caught() < caught || 100.0 * r.clean_marked() > marked {
            missed.push(format!(
                "{snr} dB quality index: {:.1} % of false detections in unreadable stretches (gate ≥ {caught}), {:.1} % of clean time marked (gate ≤ {marked})",
                100.0 * r.fp_caught(),
                100.0 * r.clean_marked()
            ));
        }
    }
    if !missed.is_empty() {
        bail!("noise gates missed: {}", missed.join("; "));
    }
    Ok(())
}
