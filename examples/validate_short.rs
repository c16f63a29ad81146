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
    let (s, rows) = beatfold::verdicts::score_labels(&dir, &labels, &map, &p)?;
    let dt = t0.elapsed().as_secs_f64();
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
    if std::env::var_os("VALIDATE_SHORT_DUMP").is_some() {
        for r in &rows {
            let e = &r.evidence;
            println!(
                "row {},{},{},{:.4},{:.4},{:.4},{:.4},{},{:.4},{}",
                r.record,
                r.label,
                r.verdict.class.name(),
                e.cosen,
                e.nrmssd,
                e.agreement,
                e.flagged_fraction,
                e.p_template,
                e.p_wave_median,
                e.n_beats
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
