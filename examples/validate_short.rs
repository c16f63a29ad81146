//! Record verdicts scored against record labels (e.g. the shared short-record sample):
//! `cargo run --release --example validate_short -- DIR [--labels FILE] [--min-se P]
//! [--min-sp P] [--min-f1 F]`. Prints the confusion matrix, per-class Se/+P/F1, irregular-vs-rest
//! Se/Sp/F1 and the wall time; exits non-zero when a gate is given and missed.
//! Labels default to DIR/REFERENCE.csv, mapped A=irregular,N=regular,O=other,~=unreadable.
//! Research use only.

use beatfold::pipeline::AnalyzeParams;
use beatfold::rhythm::label_score::LabelMap;
use beatfold::rhythm::verdict::VerdictClass;
use std::path::PathBuf;

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let dir = PathBuf::from(args.first().ok_or_else(|| {
        anyhow::anyhow!(
            "usage: validate_short DIR [--labels FILE] [--min-se P] [--min-sp P] [--min-f1 F]"
        )
    })?);
    let mut labels = dir.join("REFERENCE.csv");
    let (mut min_se, mut min_sp, mut min_f1) = (None, None, None);
    let mut i = 1;
    while i < args.len() {
        let v = args
            .get(i + 1)
            .ok_or_else(|| anyhow::anyhow!("{} needs a value", args[i]))?;
        match args[i].as_str() {
            "--labels" => labels = PathBuf::from(v),
            "--min-se" => min_se = Some(v.parse::<f64>()?),
            "--min-sp" => min_sp = Some(v.parse::<f64>()?),
            "--min-f1" => min_f1 = Some(v.parse::<f64>()?),
            o => anyhow::bail!("unknown option {o}"),
        }
        i += 2;
    }
    let map = LabelMap::parse("A=irregular,N=regular,O=other,~=unreadable")?;
    let p = AnalyzeParams::default();
    let t0 = std::time::Instant::now();
    let (s, _) = beatfold::verdicts::score_labels(&dir, &labels, &map, &p, false)?;
    let dt = t0.elapsed().as_secs_f64();
    // The beat-geometry index needs a diffusion map per record: computed in a second pass so
    // that the time above is that of the verdicts alone.
    let (_, rows) = beatfold::verdicts::score_labels(&dir, &labels, &map, &p, true)?;
    println!("{}", beatfold::NOTICE_SHORT);
    println!("{} records scored in {dt:.2} s", s.n);
    print!("{:<12}", "label\\verdict");
    for c in VerdictClass::ALL {
        print!("{:>11}", c.name());
    }
    println!();
    for (k, c) in VerdictClass::ALL.iter().enumerate() {
        print!("{:<13}", c.name());
        for v in s.confusion[k] {
            print!("{v:>11}");
        }
        println!();
    }
    for c in &s.classes {
        println!(
            "{:<11} n {:>3}  Se {:5.1} %  +P {:5.1} %  F1 {:.3}",
            c.class.name(),
            c.n_true,
            100.0 * c.se,
            100.0 * c.ppv,
            c.f1
        );
    }
    println!(
        "irregular vs rest: Se {:.1} %, Sp {:.1} %, F1 {:.3}",
        100.0 * s.irregular_se,
        100.0 * s.irregular_sp,
        s.irregular_f1
    );
    // RR against beat geometry, side by side on the same labels: the COSEn of the record's RR
    // (Lake & Moorman 2011) and the beat-geometry index (1 − median DET of the recurrence of
    // the diffusion coordinates, Marwan et al. 2007), each alone and as the mean of their
    // ranks (no fitted weight). AUC over the records where the index is finite; then a
    // threshold chosen on four folds (records by position, k mod 5) as the lowest value that
    // keeps Sp ≥ 97 % there, applied to the fifth, pooled over the five folds.
    let truth: Vec<bool> = rows
        .iter()
        .map(|r| r.truth == VerdictClass::Irregular)
        .collect();
    let cosen: Vec<f64> = rows.iter().map(|r| r.evidence.cosen).collect();
    let geometry: Vec<f64> = rows.iter().map(|r| r.geometry_index).collect();
    let both: Vec<f64> = {
        let (a, b) = (ranks(&cosen), ranks(&geometry));
        a.iter().zip(&b).map(|(x, y)| (x + y) / 2.0).collect()
    };
    println!(
        "index       finite  AUC     CV Se %  CV Sp %  (threshold at Sp ≥ 97 % on four folds)"
    );
    for (name, score) in [
        ("cosen", &cosen),
        ("geometry", &geometry),
        ("rank mean", &both),
    ] {
        let pairs: Vec<(f64, bool)> = score.iter().copied().zip(truth.iter().copied()).collect();
        let finite = pairs.iter().filter(|p| p.0.is_finite()).count();
        let (se, sp) = cross_validated(&pairs, 5, 0.97);
        println!(
            "{name:<11} {finite:>6}  {:.3}   {:6.1}   {:6.1}",
            beatfold::rhythm::label_score::auc(&pairs),
            100.0 * se,
            100.0 * sp
        );
    }
    if std::env::var_os("VALIDATE_SHORT_DUMP").is_some() {
        for r in &rows {
            let e = &r.evidence;
            println!(
                "row {},{},{},{:.4},{:.4},{:.4},{:.4},{},{:.4},{},{:.4}",
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
                r.geometry_index
            );
        }
    }
    let mut fail = false;
    for (name, got, gate) in [
        ("Se", 100.0 * s.irregular_se, min_se),
        ("Sp", 100.0 * s.irregular_sp, min_sp),
        ("F1", s.irregular_f1, min_f1),
    ] {
        if let Some(g) = gate {
            if got.is_nan() || got < g {
                eprintln!("gate missed: irregular {name} {got:.3} below {g}");
                fail = true;
            }
        }
    }
    if fail {
        std::process::exit(2);
    }
    Ok(())
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
/// k mod `folds`. A non-finite score counts as negative (no call).
fn cross_validated(pairs: &[(f64, bool)], folds: usize, min_sp: f64) -> (f64, f64) {
    let (mut tp, mut fneg, mut tn, mut fp) = (0usize, 0usize, 0usize, 0usize);
    for f in 0..folds {
        let mut neg: Vec<f64> = pairs
            .iter()
            .enumerate()
            .filter(|(k, p)| k % folds != f && !p.1 && p.0.is_finite())
            .map(|(_, p)| p.0)
            .collect();
        neg.sort_by(f64::total_cmp);
        // At most floor((1 − min_sp)·n) negatives may lie above the threshold.
        let allowed = ((1.0 - min_sp) * neg.len() as f64).floor() as usize;
        let thr = neg
            .len()
            .checked_sub(allowed + 1)
            .map_or(f64::NEG_INFINITY, |i| neg[i]);
        for (_, p) in pairs.iter().enumerate().filter(|(k, _)| k % folds == f) {
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
