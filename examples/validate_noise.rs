//! The noise stress test (Moody, Muldrow & Mark 1984) on a folder of noise-stress records
//! (e.g. `../shared/data/nstdb`): every header `NNNeSS.hea` whose name carries an SNR is read,
//! its beats are detected with the default parameters on lead 0 and with both leads fused
//! (`fuse_leads`, the main table), and it is scored by the EC57 rules
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
use beatfold::beats::scoring::paired_flags;
use beatfold::beats::{detect_leads, detect_leads_with, FuseMethod, FusionParams, VoteParams};
use beatfold::io::{self, ReadOptions};
use beatfold::params::Checked;
use beatfold::pipeline::{self, AnalyzeParams};
use beatfold::record::Record;
use beatfold::record_score;
use std::path::PathBuf;

/// The development grid of the morphology check and search-back, as printed by
/// `scripts/fusion_dev/morph2.py` (see its README); development records only.
const DEV_GRID: &str = "\
| similarity below | RR below (× median) | search-back gap (× median), lists, similarity | dev errors, synthetic noise | dev errors, recorded ma + bw noise | dev 6 dB Se / +P % | MIT-BIH without 118, 119: Se / +P % |
|---|---|---|---|---|---|---|
| off | – | off | 3683 | 432 | 96.31 / 95.63 | 99.65 / 99.76 |
| 0.5 | 0.8 | off | 3295 | 434 | 96.15 / 96.67 | 99.63 / 99.76 |
| 0.6 | 0.9 | off | 3118 | 427 | 95.94 / 97.28 | 99.62 / 99.77 |
| 0.7 | 0.9 | off | 2951 | 436 | 95.78 / 97.82 | 99.61 / 99.78 |
| 0.5 | 0.8 | 1.5, 2, 0.8 | 2696 | 327 | 97.78 / 96.41 | 99.75 / 99.72 |
| 0.6 | 0.9 | 1.5, 2, 0.8 | 2509 | 322 | 97.62 / 97.01 | 99.74 / 99.72 |
| 0.6 | 0.9 | 1.5, 1, 0.85 | 2627 | 344 | 97.49 / 96.92 | 99.74 / 99.69 |
| 0.6 | 0.9 | 1.5, 2, 0.7 | 2565 | 317 | 97.75 / 96.82 | 99.75 / 99.70 |
| 0.6 | 0.9 | 1.3, 2, 0.8 | 2505 | 308 | 97.80 / 96.88 | 99.76 / 99.71 |
| 0.7 | 0.9 | 1.5, 2, 0.8 | 2317 | 330 | 97.51 / 97.53 | 99.73 / 99.74 |
| 0.7 | 0.9 | 1.3, 2, 0.8 | 2318 | 319 | 97.66 / 97.41 | 99.75 / 99.73 |
| 0.7 | 1.0 | 1.5, 2, 0.8 | 2319 | 343 | 97.27 / 97.75 | 99.71 / 99.74 |
| **0.8** | **0.9** | **1.5, 2, 0.8** | **2205** | **349** | **97.13 / 98.09** | **99.70 / 99.77** |
";

/// The development grid of the beat shapes, lead weighting and repeated search-back, as printed
/// by `scripts/fusion_dev/morph3.py` (see its README); development records only.
const DEV_GRID3: &str = "\
| search-back depth | beat shapes (at most, clean beats needed) | lead weighting | search-back similarity | dev errors, synthetic noise | dev errors, recorded ma + bw noise | dev 6 dB Se / +P % | MIT-BIH without 118, 119: Se / +P % |
|---|---|---|---|---|---|---|---|
| 1 | off | equal | 0.8 | 2205 | 349 | 97.13 / 98.09 | 99.70 / 99.77 |
| 4 | off | equal | 0.8 | 2090 | 330 | 97.40 / 98.02 | 99.73 / 99.75 |
| 1 | off | bSQI | 0.8 | 2167 | 340 | 97.21 / 98.09 | 99.70 / 99.76 |
| 1 | 8, 2 | equal | 0.8 | 2222 | 329 | 97.51 / 97.72 | 99.75 / 99.74 |
| 4 | 8, 2 | equal | 0.8 | 2082 | 305 | 97.89 / 97.63 | 99.78 / 99.73 |
| 4 | off | bSQI | 0.8 | 2029 | 314 | 97.53 / 98.03 | 99.73 / 99.75 |
| 4 | 8, 2 | bSQI | 0.8 | 2038 | 290 | 97.97 / 97.65 | 99.78 / 99.72 |
| 4 | 8, 2 | bSQI | 0.85 | 2035 | 308 | 97.76 / 97.81 | 99.77 / 99.73 |
| **4** | **8, 3** | **bSQI** | **0.8** | **1998** | **290** | **97.95 / 97.77** | **99.78 / 99.72** |
";

/// The third development grid (beat-like motion noise added, split check in clean windows), as
/// printed by `scripts/fusion_dev/morph4.py` (see its README); development records only. FP / FN
/// over the 20 noisy development records of each noise (12 and 6 dB); morphology check at
/// similarity 0.8 and RR 0.9, 2 lists for the search-back throughout.
const DEV_GRID4: &str = "\
| search-back depth | beat shapes (at most, clean beats needed) | lead weighting | search-back gap, similarity | split check in clean windows | synthetic FP / FN | recorded ma + bw FP / FN | beat-like FP / FN | FP within the first row's | missed beats, three noises | dev 6 dB Se / +P %, three noises | MIT-BIH without 118, 119: Se / +P % |
|---|---|---|---|---|---|---|---|---|---|---|---|
| 1 | off | equal | 1.5, 0.8 | off | 930 / 1275 | 119 / 230 | 908 / 1107 | yes | 2612 | 96.72 / 97.80 | 99.70 / 99.77 |
| 1 | off | equal | 1.5, 0.8 | on | 896 / 1275 | 110 / 231 | 812 / 1112 | yes | 2618 | 96.71 / 97.88 | 99.67 / 99.77 |
| 1 | 8, 3 | equal | 1.5, 0.8 | on | 1026 / 1112 | 118 / 204 | 974 / 993 | no | 2309 | 97.08 / 97.56 | 99.74 / 99.75 |
| 1 | 8, 3 | bSQI | 1.5, 0.8 | on | 1028 / 1095 | 118 / 198 | 981 / 990 | no | 2283 | 97.13 / 97.56 | 99.74 / 99.74 |
| 4 | 8, 3 | bSQI | 1.5, 0.8 | off | 1098 / 900 | 127 / 163 | 1087 / 848 | no | 1911 | 97.54 / 97.40 | 99.78 / 99.72 |
| 4 | 8, 3 | bSQI | 1.5, 0.8 | on | 1069 / 900 | 122 / 163 | 1035 / 850 | no | 1913 | 97.54 / 97.46 | 99.77 / 99.72 |
| 4 | 8, 3 | bSQI | 1.5, 0.85 | on | 978 / 987 | 112 / 190 | 982 / 884 | no | 2061 | 97.36 / 97.61 | 99.77 / 99.74 |
| 4 | 8, 3 | equal | 1.5, 0.8 | on | 1074 / 927 | 124 / 175 | 1029 / 863 | no | 1965 | 97.47 / 97.45 | 99.77 / 99.73 |
| 4 | off | equal | 1.5, 0.8 | on | 930 / 1126 | 114 / 208 | 853 / 994 | yes | 2328 | 97.03 / 97.79 | 99.70 / 99.76 |
| 4 | off | bSQI | 1.5, 0.8 | on | 922 / 1074 | 113 / 193 | 859 / 972 | yes | 2239 | 97.14 / 97.79 | 99.71 / 99.75 |
| 4 | off | bSQI | 1.3, 0.8 | on | 1008 / 973 | 120 / 176 | 935 / 856 | no | 2005 | 97.44 / 97.60 | 99.73 / 99.73 |
| 4 | off | bSQI | 1.5, 0.75 | on | 1025 / 948 | 126 / 162 | 904 / 898 | no | 2008 | 97.44 / 97.61 | 99.73 / 99.74 |
| **8** | **off** | **bSQI** | **1.5, 0.8** | **on** | **922 / 1070** | **113 / 193** | **859 / 959** | **yes** | **2222** | **97.17 / 97.79** | **99.71 / 99.75** |
| 16 | off | bSQI | 1.5, 0.8 | on | 922 / 1070 | 113 / 193 | 859 / 959 | yes | 2222 | 97.17 / 97.79 | 99.71 / 99.75 |
";

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
    let mut lead0_rows = Vec::new();
    let mut rows = Vec::new();
    let mut breakdown: Vec<(Option<i32>, Breakdown)> = Vec::new();
    // Lead 0 alone (the default), and both leads fused (`fuse_leads`, the main table).
    let lead0 = beatfold::params::Check::check(AnalyzeParams {
        fuse_leads: false,
        ..(*params).clone()
    })?;
    let fused = beatfold::params::Check::check(AnalyzeParams {
        fuse_leads: true,
        fuse_method: FuseMethod::Vote,
        ..(*params).clone()
    })?;
    for h in &heads {
        let rec = io::read_record(h, &ReadOptions::default())?.record;
        let b0 = pipeline::detect_beats(&rec, &lead0)?;
        let b = pipeline::detect_beats(&rec, &fused)?;
        let r = record_score::noise_record(&rec, &b, &lead0, &readable, &rules, &schedule)?;
        lead0_rows.push(record_score::noise_record(
            &rec, &b0, &lead0, &readable, &rules, &schedule,
        )?);
        one_lead_rows.push(record_score::noise_record(
            &rec, &b0, &lead0, &one_lead, &rules, &schedule,
        )?);
        let bd = breakdown_of(&rec, &b.samples, &fused, &rules, &schedule)?;
        eprintln!(
            "{}: Se {:.2} % +P {:.2} %",
            r.record,
            100.0 * r.all.se,
            100.0 * r.all.ppv
        );
        match breakdown.iter_mut().find(|x| x.0 == r.snr_db) {
            Some(x) => x.1.add(&bd),
            None => breakdown.push((r.snr_db, bd)),
        }
        rows.push(r);
    }
    eprintln!("run time {:.1} s", t0.elapsed().as_secs_f64());
    let by_snr = noise_stress::by_snr(&rows);
    let table = noise_stress::snr_table_markdown(&by_snr);
    let records: Vec<&str> = rows.iter().map(|r| r.record.as_str()).collect();
    let mut compare = String::from(
        "| SNR dB | FP in unreadable %, both detectors and both leads | clean time marked % | FP in unreadable %, both detectors on lead 0 only | clean time marked % |\n|---|---|---|---|---|\n",
    );
    let by_snr_lead0 = noise_stress::by_snr(&lead0_rows);
    let mut lead0_table = String::from(
        "| SNR dB | lead 0 alone: TP | FP | FN | Se % | +P % | both leads fused: Se % | +P % |\n|---|---|---|---|---|---|---|---|\n",
    );
    for (a, f) in by_snr_lead0.iter().zip(&by_snr) {
        lead0_table.push_str(&format!(
            "| {} | {} | {} | {} | {:.2} | {:.2} | {:.2} | {:.2} |\n",
            a.snr_db.map_or("–".into(), |v| v.to_string()),
            a.all.tp,
            a.all.fp,
            a.all.fn_,
            100.0 * a.all.se,
            100.0 * a.all.ppv,
            100.0 * f.all.se,
            100.0 * f.all.ppv
        ));
    }
    breakdown.sort_by_key(|x| std::cmp::Reverse(x.0));
    let mut best_table =
        String::from("| SNR dB | TP | FP | FN | Se % | +P % |\n|---|---|---|---|---|---|\n");
    for (snr, x) in &breakdown {
        let [tp, fp, fn_] = x.dev_best;
        let pct = |a: usize, b: usize| 100.0 * a as f64 / (a + b).max(1) as f64;
        best_table.push_str(&format!(
            "| {} | {tp} | {fp} | {fn_} | {:.2} | {:.2} |\n",
            snr.map_or("–".into(), |v| v.to_string()),
            pct(tp, fn_),
            pct(tp, fp),
        ));
    }
    let mut fp_table = String::from(
        "| SNR dB | fused FP | in noisy segments | in clean segments | from clean windows | from another lead's windows | from voted windows | FP found by all / all but one / fewer lists | fused FN (in noisy segments) | FP of each list alone: lead 0 primary / second, lead 1 primary / second |\n|---|---|---|---|---|---|---|---|---|---|\n",
    );
    for (snr, x) in &breakdown {
        fp_table.push_str(&format!(
            "| {} | {} | {} | {} | {} | {} | {} | {} / {} / {} | {} ({}) | {} |\n",
            snr.map_or("–".into(), |v| v.to_string()),
            x.fp,
            x.fp_noisy,
            x.fp - x.fp_noisy,
            x.fp_by_kind[0],
            x.fp_by_kind[1],
            x.fp_by_kind[2],
            x.fp_seen_by[0],
            x.fp_seen_by[1],
            x.fp_seen_by[2],
            x.fn_,
            x.fn_noisy,
            x.fp_lists
                .iter()
                .map(|v| v.to_string())
                .collect::<Vec<_>>()
                .join(" / ")
        ));
    }
    let vote = VoteParams::default();
    let mut why = String::new();
    for (snr, se_t, ppv_t) in [(12, 99.0, 98.0), (6, 97.0, 95.0)] {
        let (Some(r), Some((_, x))) = (
            by_snr.iter().find(|r| r.snr_db == Some(snr)),
            breakdown.iter().find(|b| b.0 == Some(snr)),
        ) else {
            continue;
        };
        let (se, ppv) = (100.0 * r.all.se, 100.0 * r.all.ppv);
        if se >= se_t && ppv >= ppv_t {
            why.push_str(&format!(
                "- {snr} dB: target met (Se {se:.2} % ≥ {se_t}, +P {ppv:.2} % ≥ {ppv_t}).\n"
            ));
            continue;
        }
        // False detections allowed for the target +P at the measured TP.
        let allowed = (r.all.tp as f64 * (100.0 - ppv_t) / ppv_t).floor();
        let best_list = x.fp_lists.iter().min().copied().unwrap_or(0);
        why.push_str(&format!(
            "- {snr} dB: Se {se:.2} % (target {se_t}), +P {ppv:.2} % (target {ppv_t}). At {} true detections the \
             +P target allows {allowed:.0} false ones; there are {}, all but {} in the noisy segments. {} of them come \
             from voted windows and {} from windows where the lead-0 detectors agree (bSQI ≥ {}), i.e. both detectors \
             took the same artefact. {} were found by all four detector × lead lists and {} by three: the artefact is \
             on both leads at the same instant (the noise of the two leads is not independent), which no vote between \
             these lists can remove; those left passed the morphology check too (they resemble recent beats, or do \
             not come early). The best single list alone has {best_list} false detections. Of the {} missed \
             beats, {} lie in noisy segments, where a real beat had fewer than three lists, was taken for an artefact \
             (splitting an RR interval, or early and unlike the recent clean beats), or was not found again by the \
             search-back (too few lists, or too unlike the recent clean beats in the noise).\n",
            r.all.tp,
            x.fp,
            x.fp - x.fp_noisy,
            x.fp_by_kind[2],
            x.fp_by_kind[0],
            vote.clean_bsqi,
            x.fp_seen_by[0],
            x.fp_seen_by[1],
            x.fn_,
            x.fn_noisy,
        ));
    }
    for (a, b) in by_snr_lead0
        .iter()
        .zip(noise_stress::by_snr(&one_lead_rows))
    {
        compare.push_str(&format!(
            "| {} | {:.1} | {:.1} | {:.1} | {:.1} |\n",
            a.snr_db.map_or("–".into(), |v| v.to_string()),
            100.0 * a.fp_caught(),
            100.0 * a.clean_marked(),
            100.0 * b.fp_caught(),
            100.0 * b.clean_marked()
        ));
    }
    let shapes = if vote.morph_classes > 0 {
        format!(
            " and up to {} beat shapes seen in at least {} clean-window beats",
            vote.morph_classes, vote.morph_class_min
        )
    } else {
        String::new()
    };
    let weighting = if vote.morph_quality_weight {
        " weighted by each lead's detector agreement bSQI in the window"
    } else {
        ""
    };
    let split = if vote.morph_clean_split {
        " (the same test is also applied, in clean windows, to a beat that splits a normal RR interval into two short ones by the RR-context ratios)"
    } else {
        ""
    };
    let depth = if vote.searchback_depth > 1 {
        format!(
            ", and searches the two parts again while they are still that long, up to {} candidates deep",
            vote.searchback_depth
        )
    } else {
        String::new()
    };
    let page = format!(
        "# Noise stress test\n\n\
         Made by `cargo run --release --example validate_noise -- {} --out {}` (do not edit by hand).\n\n\
         Data: MIT-BIH Noise Stress Test Database 1.0.0 (Moody, Muldrow & Mark 1984; PhysioNet, ODC-By 1.0): {}.\n\
         Beats detected with the default parameters and both leads fused (`fuse_leads` with `fuse_method` `\"vote\"`: the vote fusion of `beats::fusion`), scored by the EC57 rules of \
         `beatfold score` ({}). Noise from {:.0} s, {:.0} s noisy then {:.0} s clean in turn. A stretch is \
         unreadable when the two detectors' agreement bSQI (Li, Mark & Clifford 2008) is below {} in a {:.0} s \
         window, between the two detectors on lead 0 or between the primary detector on the two leads, or a quality \
         flag is set.\n\n\
         The fusion's parameters (`beats::fusion::VoteParams`: clean window at bSQI ≥ {}, at least a fraction {} of the \
         detector × lead lists, RR-context ratios {} and {}; then the morphology check, which drops a beat outside \
         clean windows that comes early (an RR interval below {} of the local median) and whose correlation \
         with the last {} clean-window beats{shapes}, averaged over the leads{weighting}, is below {}{split}, and the \
         search-back, which fills an RR interval longer than {} times the local median with the candidate of at \
         least {} lists most like the clean beats, at similarity ≥ {}{depth}) were chosen on ten MIT-BIH records other than 118 and 119 \
         (100, 103, 105, 106, 113, 200, 201, 208, 213, 221) with noise added to both leads at 12 and 6 dB \
         (`scripts/fusion_dev/`): seeded synthetic electrode-motion-like noise (`mknoise.py`), for the \
         morphology check and search-back also the recorded muscle-artefact and baseline-wander noise of this \
         database (`ma`, `bw`) from a seeded offset (`mknoise_real.py`), and last beat-like motion artefacts made here \
         (`mknoise_beat.py`); in three small grids (`morph2.py`, `morph3.py`, `morph4.py`, listed in \
         `scripts/fusion_dev/README.md`), all keeping MIT-BIH pooled Se and +P ≥ 99.6 % on the clean records \
         other than 118 and 119, the first two by the fewest false plus missed beats, the third by the rule \
         below. The \
         records below were not used for the choice; the page was generated once with the chosen setting. Earlier \
         versions of the fusion were developed while these summary numbers were seen, so this is not a fully \
         blind check. The development grid (dev errors: false plus missed beats over the 20 noisy development \
         records of each noise; a similarity of 0.8 is the grid's edge):\n\n{DEV_GRID}\n\
         Then, on the chosen row, the beat shapes, the lead weighting and the repeated search-back \
         (`morph3.py`; morphology check at similarity 0.8 and RR 0.9, search-back gap 1.5 and 2 lists throughout; \
         a beat shape needing 3 clean beats is the grid's edge):\n\n{DEV_GRID3}\n\
         The second grid's fewest-error row (`VoteParams::dev_best`), run once on the records below, missed the \
         6 dB +P target (table after the next two) while the first grid's row met it with Se below target: the \
         development noise had too few artefacts shaped and spaced like beats on both leads. The third grid \
         (`morph4.py`) adds a third development noise made here, beat-like motion artefacts (`mknoise_beat.py`: \
         QRS-like complexes on relaxing baseline steps, isolated and in rhythm-like bursts, reaching both leads \
         with correlated gains), and the split check in clean windows (`morph_clean_split`), under a choice rule \
         written down before the grid was run: no more false detections than the first grid's row on any of the \
         three noises, MIT-BIH pooled Se and +P ≥ 99.6 % without 118 and 119, and among those the fewest missed \
         beats over the three noises (the first row is the first grid's row; FP / FN over the 20 noisy records of \
         each noise; depth 16 ties with depth 8, and the smaller depth is kept):\n\n{DEV_GRID4}\n\
         The chosen row (bold) is the default, and the tables below were generated once with it.\n\n\
         On the noise stress test:\n\n{table}\n\
         Lead 0 alone (the default for `beatfold score` without `fuse_leads`) against both leads fused:\n\n{lead0_table}\n\
         Where the false detections of the fused beats come from (scored part; a window is clean when the \
         lead-0 detectors agree with bSQI ≥ {}, it takes another lead's beats when that lead's bSQI is higher by \
         `fuse_margin`, else it is voted; the last column counts the false detections of each detector × lead \
         list on its own):\n\n{fp_table}\n\
         The second development grid's fewest-error row (`VoteParams::dev_best`: search-back {} candidates deep, \
         up to {} beat shapes of at least {} clean beats, leads weighted by bSQI), not the default:\n\n{best_table}\n\
         Against the targets:\n\n{why}\n\
         The quality index of lead 0 alone with and without the comparison across leads:\n\n{compare}\n\
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
        vote.clean_bsqi,
        vote.min_vote_fraction,
        vote.rr_short_ratio,
        vote.rr_merge_ratio,
        vote.morph_rr_ratio,
        vote.morph_bank,
        vote.morph_similarity,
        vote.searchback_ratio,
        vote.searchback_lists,
        vote.searchback_similarity,
        vote.clean_bsqi,
        VoteParams::dev_best().searchback_depth,
        VoteParams::dev_best().morph_classes,
        VoteParams::dev_best().morph_class_min,
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

/// False detections of the fused beats of one record, split by where they come from.
#[derive(Default)]
struct Breakdown {
    fp: usize,
    fp_noisy: usize,
    /// Clean windows, another lead's windows, voted windows.
    fp_by_kind: [usize; 3],
    fn_: usize,
    fn_noisy: usize,
    /// False detections found by all, by all but one, and by fewer of the single lists.
    fp_seen_by: [usize; 3],
    /// Each detector × lead list alone: lead 0 primary, lead 0 second, lead 1 primary, ...
    fp_lists: Vec<usize>,
    /// `VoteParams::dev_best` instead of the default: TP, FP, FN (scored part).
    dev_best: [usize; 3],
}

impl Breakdown {
    fn add(&mut self, o: &Breakdown) {
        self.fp += o.fp;
        self.fp_noisy += o.fp_noisy;
        self.fn_ += o.fn_;
        self.fn_noisy += o.fn_noisy;
        for k in 0..3 {
            self.dev_best[k] += o.dev_best[k];
        }
        for k in 0..3 {
            self.fp_seen_by[k] += o.fp_seen_by[k];
        }
        for k in 0..3 {
            self.fp_by_kind[k] += o.fp_by_kind[k];
        }
        self.fp_lists
            .resize(self.fp_lists.len().max(o.fp_lists.len()), 0);
        for (a, b) in self.fp_lists.iter_mut().zip(&o.fp_lists) {
            *a += b;
        }
    }
}

fn breakdown_of(
    rec: &Record,
    fused_beats: &[usize],
    p: &AnalyzeParams,
    rules: &Ec57Rules,
    schedule: &NoiseSchedule,
) -> anyhow::Result<Breakdown> {
    let fs = rec.fs_hz;
    let leads: Vec<&[f64]> = rec.leads.iter().map(|l| l.samples.as_slice()).collect();
    let fp_params = FusionParams {
        method: p.fuse_method,
        pan_tompkins: &Checked::new(p.pan_tompkins.clone())?,
        elgendi: &Checked::new(p.elgendi.clone())?,
        primary: p.primary_detector,
        match_window_s: p.score_window_s,
        window_s: p.agreement_window_s,
        fuse_margin: p.fuse_margin,
    };
    let det = detect_leads(&leads, fs, &fp_params)?;
    if det.primary != fused_beats {
        bail!("{}: the fusion differs from the pipeline's", rec.name);
    }
    let reference = record_score::reference_beats(rec);
    let first = beatfold::beats::ec57::first_scored_sample(rules.learning_s, fs, rec.n_samples());
    let false_ones = |beats: &[usize]| -> Vec<usize> {
        let (_, d) = paired_flags(&reference, beats, fs, rules.window_s);
        beats
            .iter()
            .zip(d)
            .filter(|(&s, paired)| !paired && s >= first)
            .map(|(&s, _)| s)
            .collect()
    };
    let mut out = Breakdown::default();
    let fps = false_ones(&det.primary);
    let clean_bsqi = VoteParams::default().clean_bsqi;
    let len = ((p.agreement_window_s * fs).round() as usize).max(1);
    for &s in &fps {
        out.fp += 1;
        if schedule.is_noisy(s as f64 / fs) {
            out.fp_noisy += 1;
        }
        let kind = match det.windows.get(s / len) {
            Some(&(_, q, 0)) if q >= clean_bsqi => 0,
            Some(&(_, _, 0)) | None => 2,
            Some(_) => 1,
        };
        out.fp_by_kind[kind] += 1;
    }
    let (r, _) = paired_flags(&reference, &det.primary, fs, rules.window_s);
    for (&s, paired) in reference.iter().zip(r) {
        if !paired && s >= first {
            out.fn_ += 1;
            if schedule.is_noisy(s as f64 / fs) {
                out.fn_noisy += 1;
            }
        }
    }
    // The development grid's fewest-error setting, for the page's comparison table.
    let best = detect_leads_with(
        &leads,
        fs,
        &fp_params,
        &Checked::new(VoteParams::dev_best())?,
    )?;
    let (r, _) = paired_flags(&reference, &best.primary, fs, rules.window_s);
    let scored = reference.iter().filter(|&&s| s >= first).count();
    let missed = reference
        .iter()
        .zip(r)
        .filter(|(&s, paired)| !paired && s >= first)
        .count();
    out.dev_best = [scored - missed, false_ones(&best.primary).len(), missed];
    let mut lists = Vec::new();
    for l in &leads {
        let one = detect_leads(&[l], fs, &fp_params)?;
        out.fp_lists.push(false_ones(&one.primary).len());
        out.fp_lists.push(false_ones(&one.second).len());
        lists.push(one.primary);
        lists.push(one.second);
    }
    let tol = (VoteParams::default().cluster_s * fs).round() as usize;
    for &s in &fps {
        let seen = lists
            .iter()
            .filter(|l| {
                let k = l.partition_point(|&b| b + tol < s);
                l.get(k).is_some_and(|&b| b <= s + tol)
            })
            .count();
        let k = if seen >= lists.len() {
            0
        } else if seen + 1 == lists.len() {
            1
        } else {
            2
        };
        out.fp_seen_by[k] += 1;
    }
    Ok(out)
}
