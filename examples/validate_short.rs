//! Record verdicts scored against record labels (e.g. the shared short-record sample):
//! `cargo run --release --example validate_short -- DIR [--labels FILE] [--out PAGE.md]
//! [--min-se P] [--min-sp P] [--min-f1 F]`. Writes (to stdout, and to PAGE.md with `--out`) the
//! confusion matrix, per-class Se/+P/F1, irregular-vs-rest Se/Sp/F1, the RR index against the
//! beat-geometry index and the irregular-rhythm score, the sensitivity of the decision to the
//! score's threshold, and the out-of-fold verdicts of a nested cross-validation of the score's
//! whole fit (`rhythm::score_fit::out_of_fold`); prints the wall time of the verdicts on stderr
//! (not on the page, which must not change from run to run). Exits non-zero when a gate is given
//! and missed; the gates apply to the out-of-fold numbers. With the environment variable
//! `VALIDATE_SHORT_DUMP` set, one CSV line per record follows the page on stdout (lines
//! starting `row `, a header first): its evidence, in-sample and out-of-fold verdicts and scores.
//! Labels default to DIR/REFERENCE.csv, mapped A=irregular,N=regular,O=other,~=unreadable.
//! Research use only.

use beatfold::pipeline::AnalyzeParams;
use beatfold::rhythm::label_score::{auc, LabelMap, LabelScore};
use beatfold::rhythm::score_fit::{
    out_of_fold, out_of_fold_seeded, FitRow, FOLD_SEED, INNER_FOLDS, OUTER_FOLDS,
    READABILITY_RULES, RIDGE_GRID, THRESHOLD_GRID,
};
use beatfold::rhythm::verdict::{decide, VerdictClass, VerdictParams, SCORE_FEATURE_NAMES};
use beatfold::verdicts::LabelledVerdict;
use std::fmt::Write as _;
use std::path::PathBuf;

/// Thresholds of the score scanned for the sensitivity table; above 1 the score is off and the
/// earlier rule decides.
const SCORE_GRID: [f64; 10] = [2.0, 0.2, 0.25, 0.3, 0.35, 0.4, 0.45, 0.5, 0.55, 0.6];
/// Fold seeds of the repeated nested cross-validation (FOLD_SEED and the next ones).
const SEEDS: usize = 8;

/// Irregular-vs-rest Se, Sp and F1 of the calls `call` against `truth`.
fn se_sp_f1(call: &[bool], truth: &[bool]) -> (f64, f64, f64) {
    let (mut tp, mut fp, mut fneg, mut tn) = (0usize, 0usize, 0usize, 0usize);
    for (&c, &t) in call.iter().zip(truth) {
        match (t, c) {
            (true, true) => tp += 1,
            (false, true) => fp += 1,
            (true, false) => fneg += 1,
            (false, false) => tn += 1,
        }
    }
    (
        tp as f64 / (tp + fneg).max(1) as f64,
        tn as f64 / (tn + fp).max(1) as f64,
        2.0 * tp as f64 / (2 * tp + fp + fneg).max(1) as f64,
    )
}

/// Folds of the cross-validation of the index thresholds (record k in fold k mod 5).
const FOLDS: usize = 5;

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let usage = "usage: validate_short DIR [--labels FILE] [--out PAGE.md] [--min-se P] [--min-sp P] [--min-f1 F]";
    let dir = PathBuf::from(args.first().ok_or_else(|| anyhow::anyhow!(usage))?);
    let mut labels = dir.join("REFERENCE.csv");
    let (mut min_se, mut min_sp, mut min_f1, mut out) = (None, None, None, None);
    let mut i = 1;
    while i < args.len() {
        let v = args
            .get(i + 1)
            .ok_or_else(|| anyhow::anyhow!("{} needs a value", args[i]))?;
        match args[i].as_str() {
            "--labels" => labels = PathBuf::from(v),
            "--out" => out = Some(PathBuf::from(v)),
            "--min-se" => min_se = Some(v.parse::<f64>()?),
            "--min-sp" => min_sp = Some(v.parse::<f64>()?),
            "--min-f1" => min_f1 = Some(v.parse::<f64>()?),
            o => anyhow::bail!("unknown option {o}; {usage}"),
        }
        i += 2;
    }
    let map = LabelMap::parse("A=irregular,N=regular,O=other,~=unreadable")?;
    let p = beatfold::params::Checked::<AnalyzeParams>::default();
    let t0 = std::time::Instant::now();
    let (s, _) = beatfold::verdicts::score_labels(&dir, &labels, &map, &p, false)?;
    let dt = t0.elapsed().as_secs_f64();
    // The beat-geometry index needs a diffusion map per record: a second pass, so that the time
    // above is that of the verdicts alone.
    let t1 = std::time::Instant::now();
    let (_, rows) = beatfold::verdicts::score_labels(&dir, &labels, &map, &p, true)?;
    let dt_geometry = t1.elapsed().as_secs_f64();
    eprintln!(
        "{} records: verdicts in {dt:.2} s; verdicts and beat-geometry index in {dt_geometry:.2} s (wall)",
        s.n
    );

    let mut page = String::new();
    let w = &mut page;
    writeln!(
        w,
        "# Validation: record verdicts on short single-lead records\n"
    )?;
    writeln!(
        w,
        "Made by `cargo run --release --example validate_short -- {} --out docs/validation-short.md` \
         (do not edit by hand). {} records of `{}`, labels mapped {} (PhysioNet/CinC Challenge \
         2017, Clifford et al. 2017; see the folder's SOURCE.md). Every parameter at its default \
         (docs/methods.md, \"Record verdict\"). The irregular-rhythm score (a logistic \
         combination of {} measures: {}), its L2 penalty ({}), its threshold `score_min` ({}) \
         and the readability rule (`min_agreement_plausible` {}, `min_kurtosis_plausible` {}) \
         were fitted and chosen **on \
         these records** by `cargo run --release --example fit_short \
         -- {} --out src/rhythm/irregular_score.json` (the file the library reads), so the \
         confusion matrix below is in-sample. The section \"Out of fold\" repeats the whole \
         fit inside a nested cross-validation: its numbers are what an unseen record should \
         see. The ectopy-aware parameters (`base_tolerance` {}, `off_base_min` {}) were chosen \
         on the development set of \
         docs/validation-short-dev.md (MIT-BIH segments, noise-stress segments and synthetic \
         records), the other thresholds come from the literature. {}\n",
        dir.display(),
        s.n,
        labels.file_name().and_then(|n| n.to_str()).unwrap_or("labels"),
        map.describe(),
        SCORE_FEATURE_NAMES.len(),
        SCORE_FEATURE_NAMES.join(", "),
        fitted_ridge(),
        p.verdict.score_min,
        p.verdict.min_agreement_plausible,
        p.verdict.min_kurtosis_plausible,
        dir.display(),
        p.verdict.base_tolerance,
        p.verdict.off_base_min,
        beatfold::NOTICE_SHORT
    )?;
    writeln!(w, "## Confusion matrix (in-sample)\n")?;
    write_score(w, &s)?;

    // Nested cross-validation of the whole fit.
    let fit_rows: Vec<FitRow> = rows
        .iter()
        .map(|r| FitRow::of(&r.evidence, r.truth, &p.verdict))
        .collect();
    let oof = out_of_fold(&fit_rows);
    writeln!(w, "\n## Out of fold\n")?;
    writeln!(
        w,
        "Nested cross-validation (Varma & Simon 2006): the records are dealt to {OUTER_FOLDS} \
         folds stratified by label (a seeded shuffle within each class, \
         `score_fit::stratified_folds`). For each fold, the fit of `fit_short` is redone on the \
         other nine: the readability rule (`min_agreement_plausible`, `min_kurtosis_plausible`: \
         the detector agreement at which a record with plausible beats is still read and the \
         lead kurtosis, kSQI, such a record needs; from {:?}; an agreement of 0.8 or a kurtosis \
         of 0 is off), \
         the L2 penalty (from {:?}) and the threshold (0.1–0.9 in steps of 0.05) with the \
         highest irregular-vs-rest F1 over an inner {INNER_FOLDS}-fold \
         cross-validation (an irregular record called unreadable counts as a miss), then the \
         coefficients on every readable training record whose RR does not follow an organised \
         pattern (`verdict::returns_to_base_cycle`: such a record is never called irregular); \
         the held-out records are decided with that fold's score. The measures, the \
         readability rules, the organised-pattern rule and the grids were fixed beforehand (the measures were picked by a forward selection over all {} \
         records, `scripts/short_measure_selection.py`, which the nested estimate does not \
         undo; docs/methods.md, \"Record verdict\").\n",
        READABILITY_RULES,
        RIDGE_GRID,
        rows.len()
    )?;
    writeln!(
        w,
        "| fold | records | min_agreement_plausible | min_kurtosis_plausible | ridge | score_min | inner F1 |\n|---|---|---|---|---|---|---|"
    )?;
    for (f, c) in oof.choices.iter().enumerate() {
        writeln!(
            w,
            "| {f} | {} | {} | {} | {} | {} | {:.3} |",
            oof.fold.iter().filter(|&&g| g == f).count(),
            c.min_agreement_plausible,
            c.min_kurtosis_plausible,
            c.ridge,
            c.score_min,
            c.inner_f1
        )?;
    }
    debug_assert!(THRESHOLD_GRID.contains(&p.verdict.score_min));
    let oof_pairs: Vec<(VerdictClass, VerdictClass)> = rows
        .iter()
        .enumerate()
        .map(|(k, r)| {
            let c = &oof.choices[oof.fold[k]];
            let vpar = VerdictParams {
                score: c.score.clone(),
                score_min: c.score_min,
                min_agreement_plausible: c.min_agreement_plausible,
                min_kurtosis_plausible: c.min_kurtosis_plausible,
                ..p.verdict.clone()
            };
            (r.truth, decide(&r.evidence, &vpar).class)
        })
        .collect();
    let oof_score = LabelScore::from_pairs(&oof_pairs);
    writeln!(w, "\nThe held-out verdicts, pooled:\n")?;
    write_score(w, &oof_score)?;

    // The same estimate over other fold draws: one draw of ten folds moves Se and Sp by a
    // record or two, more than the distance to the targets.
    writeln!(
        w,
        "\nThe same nested cross-validation with the folds drawn by {} seeds ({}–{}; seed {} \
         above), irregular against the rest:\n",
        SEEDS,
        FOLD_SEED,
        FOLD_SEED + SEEDS as u64 - 1,
        FOLD_SEED
    )?;
    writeln!(w, "| fold seed | Se % | Sp % | F1 |\n|---|---|---|---|")?;
    let truth: Vec<bool> = fit_rows.iter().map(|r| r.irregular).collect();
    let mut sum = [0.0; 3];
    for k in 0..SEEDS {
        let seed = FOLD_SEED + k as u64;
        let call = if k == 0 {
            oof.call.clone()
        } else {
            out_of_fold_seeded(&fit_rows, seed).call
        };
        let (se, sp, f1) = se_sp_f1(&call, &truth);
        sum = [sum[0] + se, sum[1] + sp, sum[2] + f1];
        writeln!(
            w,
            "| {seed} | {:.1} | {:.1} | {f1:.3} |",
            100.0 * se,
            100.0 * sp
        )?;
    }
    let n = SEEDS as f64;
    writeln!(
        w,
        "| mean | {:.1} | {:.1} | {:.3} |",
        100.0 * sum[0] / n,
        100.0 * sum[1] / n,
        sum[2] / n
    )?;

    // RR against beat geometry, side by side on the same labels.
    writeln!(w, "\n## RR irregularity against beat geometry\n")?;
    writeln!(
        w,
        "Irregular against every other label. RR index: COSEn of the record's RR (Lake & Moorman \
         2011). Beat-geometry index: 1 − median DET of the recurrence of the first 3 diffusion \
         coordinates over consecutive beats (Marwan et al. 2007). Rank mean: the mean of the two \
         ranks (no fitted weight). Score: the irregular-rhythm score of the verdict (fitted on \
         these records: in-sample); out-of-fold score: its probability from the nested \
         cross-validation above (0 for a record the readability rules refuse or whose RR follows an organised pattern). AUC (Hanley & McNeil 1982) over the records whose index is \
         finite. CV: a threshold chosen on four folds as the lowest that keeps Sp ≥ 97 % there, \
         applied to the fifth (record k in fold k mod 5), pooled. \"readable\": the records whose \
         verdict is not `unreadable`.\n"
    )?;
    writeln!(
        w,
        "| records | index | finite | AUC | CV Se % | CV Sp % |\n|---|---|---|---|---|---|"
    )?;
    let truth: Vec<bool> = rows
        .iter()
        .map(|r| r.truth == VerdictClass::Irregular)
        .collect();
    let readable: Vec<bool> = rows
        .iter()
        .map(|r| r.verdict.class != VerdictClass::Unreadable)
        .collect();
    let cosen: Vec<f64> = rows.iter().map(|r| r.evidence.cosen).collect();
    let geometry: Vec<f64> = rows.iter().map(|r| r.geometry_index).collect();
    let both: Vec<f64> = {
        let (a, b) = (ranks(&cosen), ranks(&geometry));
        a.iter().zip(&b).map(|(x, y)| (x + y) / 2.0).collect()
    };
    let prob: Vec<f64> = rows
        .iter()
        .map(|r| p.verdict.score.probability(&r.evidence))
        .collect();
    for set in ["all", "readable"] {
        for (name, score) in [
            ("RR (COSEn)", &cosen),
            ("beat geometry", &geometry),
            ("rank mean", &both),
            ("score (in-sample)", &prob),
            ("score (out of fold)", &oof.prob),
        ] {
            let pairs: Vec<(f64, bool)> = score
                .iter()
                .copied()
                .zip(truth.iter().copied())
                .zip(&readable)
                .filter(|(_, &ok)| set == "all" || ok)
                .map(|(p, _)| p)
                .collect();
            let finite = pairs.iter().filter(|p| p.0.is_finite()).count();
            let (se, sp) = cross_validated(&pairs, 0.97);
            writeln!(
                w,
                "| {set} | {name} | {finite} | {:.3} | {:.1} | {:.1} |",
                auc(&pairs),
                100.0 * se,
                100.0 * sp
            )?;
        }
    }

    // Sensitivity of the decision to its two thresholds, decided again from the same evidence.
    writeln!(w, "\n## Sensitivity to the decision threshold\n")?;
    writeln!(
        w,
        "The verdict decided again from each record's evidence with `score_min` changed (every \
         other parameter at its default; 2 turns the score off: the earlier rule, irregularly \
         irregular RR without organised P waves). In-sample: shown to describe the trade-off; \
         the default was chosen by inner cross-validation (`fit_short`), not from this table.\n"
    )?;
    writeln!(w, "| score_min | Se % | Sp % | F1 |\n|---|---|---|---|")?;
    for c in SCORE_GRID {
        let sc = rescore(&rows, (0..rows.len()).collect(), &vp(&p.verdict, c));
        writeln!(
            w,
            "| {c} | {:.1} | {:.1} | {:.3} |",
            100.0 * sc.irregular_se,
            100.0 * sc.irregular_sp,
            sc.irregular_f1
        )?;
    }

    print!("{page}");
    if let Some(out) = &out {
        beatfold::io::write_atomic(out, page.as_bytes())?;
    }
    if std::env::var_os("VALIDATE_SHORT_DUMP").is_some() {
        println!(
            "row record,label,verdict,cosen,nrmssd,agreement,flagged_fraction,p_template,p_wave_median,n_beats,geometry_index,off_base_share,plausible_beats,fwave_band_share,fwave_organisation,fwave_amplitude,score,qrs_match,drr_occupancy,organised_pattern,out_of_fold_verdict,out_of_fold_score"
        );
        for (k, r) in rows.iter().enumerate() {
            let e = &r.evidence;
            println!(
                "row {},{},{},{:.4},{:.4},{:.4},{:.4},{},{:.4},{},{:.4},{:.4},{},{:.4},{:.4},{:.4},{:.4},{:.4},{:.4},{},{},{:.4}",
                r.record,
                r.label,
                r.verdict.class.name(),
                e.cosen,
                e.nrmssd,
                e.agreement,
                e.flagged_fraction,
                e.p_template,
                e.p_wave_median,
                e.n_beats,
                r.geometry_index,
                e.off_base_share,
                e.plausible_beats,
                e.fwave.band_share,
                e.fwave.organisation,
                e.fwave.amplitude,
                p.verdict.score.probability(e),
                e.qrs_match,
                e.delta_rr.occupancy,
                beatfold::rhythm::verdict::returns_to_base_cycle(e, &p.verdict),
                oof_pairs[k].1.name(),
                oof.prob[k]
            );
        }
    }
    eprintln!(
        "in-sample: Se {:.1} %, Sp {:.1} %, F1 {:.3}; out of fold: Se {:.1} %, Sp {:.1} %, F1 {:.3}",
        100.0 * s.irregular_se,
        100.0 * s.irregular_sp,
        s.irregular_f1,
        100.0 * oof_score.irregular_se,
        100.0 * oof_score.irregular_sp,
        oof_score.irregular_f1
    );
    // The gates apply to the out-of-fold numbers: what an unseen record should see.
    let mut fail = false;
    for (name, got, gate) in [
        ("Se", 100.0 * oof_score.irregular_se, min_se),
        ("Sp", 100.0 * oof_score.irregular_sp, min_sp),
        ("F1", oof_score.irregular_f1, min_f1),
    ] {
        if let Some(g) = gate {
            if got.is_nan() || got < g {
                eprintln!("gate missed: out-of-fold irregular {name} {got:.3} below {g}");
                fail = true;
            }
        }
    }
    if fail {
        std::process::exit(2);
    }
    Ok(())
}

/// The confusion matrix, per-class scores and irregular-vs-rest scores as markdown.
fn write_score(w: &mut String, s: &LabelScore) -> std::fmt::Result {
    write!(w, "| label \\ verdict |")?;
    for c in VerdictClass::ALL {
        write!(w, " {} |", c.name())?;
    }
    writeln!(w, "\n|---|---|---|---|---|")?;
    for (k, c) in VerdictClass::ALL.iter().enumerate() {
        write!(w, "| {} |", c.name())?;
        for v in s.confusion[k] {
            write!(w, " {v} |")?;
        }
        writeln!(w)?;
    }
    writeln!(
        w,
        "\n| class | n | Se % | +P % | F1 |\n|---|---|---|---|---|"
    )?;
    for c in &s.classes {
        writeln!(
            w,
            "| {} | {} | {:.1} | {:.1} | {:.3} |",
            c.class.name(),
            c.n_true,
            100.0 * c.se,
            100.0 * c.ppv,
            c.f1
        )?;
    }
    writeln!(
        w,
        "\nIrregular vs rest: **Se {:.1} %, Sp {:.1} %, F1 {:.3}**.",
        100.0 * s.irregular_se,
        100.0 * s.irregular_sp,
        s.irregular_f1
    )
}

/// The default verdict parameters with the score's threshold replaced.
fn vp(base: &VerdictParams, score_min: f64) -> VerdictParams {
    VerdictParams {
        score_min,
        ..base.clone()
    }
}

/// The score of the records `idx` decided again from their evidence with `params`.
fn rescore(rows: &[LabelledVerdict], idx: Vec<usize>, params: &VerdictParams) -> LabelScore {
    let pairs: Vec<(VerdictClass, VerdictClass)> = idx
        .into_iter()
        .map(|k| (rows[k].truth, decide(&rows[k].evidence, params).class))
        .collect();
    LabelScore::from_pairs(&pairs)
}

/// Ranks 1..n of the finite values (ties share their mean rank); NaN stays NaN.
fn ranks(v: &[f64]) -> Vec<f64> {
    let mut idx: Vec<usize> = (0..v.len()).filter(|&i| v[i].is_finite()).collect();
    idx.sort_by(|&a, &b| v[a].total_cmp(&v[b]));
    let mut r = vec![f64::NAN; v.len()];
    let mut k = 0;
    while k < idx.len() {
        let mut e = k + 1;
        while e < idx.len() && v[idx[e]] == v[idx[k]] {
            e += 1;
        }
        let mean = (k + e + 1) as f64 / 2.0;
        for &i in &idx[k..e] {
            r[i] = mean;
        }
        k = e;
    }
    r
}

/// Pooled held-out (Se, Sp) of the rule "score above a threshold", the threshold chosen on the
/// other folds as the lowest that keeps their specificity at least `min_sp`. Fold of record k:
/// k mod [`FOLDS`]. A non-finite score counts as no call.
fn cross_validated(pairs: &[(f64, bool)], min_sp: f64) -> (f64, f64) {
    let (mut tp, mut fneg, mut tn, mut fp) = (0usize, 0usize, 0usize, 0usize);
    for f in 0..FOLDS {
        let mut neg: Vec<f64> = pairs
            .iter()
            .enumerate()
            .filter(|(k, p)| k % FOLDS != f && !p.1 && p.0.is_finite())
            .map(|(_, p)| p.0)
            .collect();
        neg.sort_by(f64::total_cmp);
        // At most floor((1 − min_sp)·n) negatives may lie above the threshold.
        let allowed = ((1.0 - min_sp) * neg.len() as f64).floor() as usize;
        let thr = neg
            .len()
            .checked_sub(allowed + 1)
            .map_or(f64::NEG_INFINITY, |i| neg[i]);
        for (_, p) in pairs.iter().enumerate().filter(|(k, _)| k % FOLDS == f) {
            let call = p.0.is_finite() && p.0 > thr;
            match (p.1, call) {
                (true, true) => tp += 1,
                (true, false) => fneg += 1,
                (false, true) => fp += 1,
                (false, false) => tn += 1,
            }
        }
    }
    (
        tp as f64 / (tp + fneg).max(1) as f64,
        tn as f64 / (tn + fp).max(1) as f64,
    )
}

/// The L2 penalty recorded in the library's coefficient file.
fn fitted_ridge() -> f64 {
    beatfold::rhythm::score_fit::ScoreFile::parse(
        beatfold::rhythm::verdict::FITTED_SCORE_FILE,
        "src/rhythm/irregular_score.json",
    )
    .map_or(f64::NAN, |f| f.ridge)
}
