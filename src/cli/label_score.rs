//! `beatfold score DIR --labels FILE --label-map MAP`: record verdicts scored against labels.

use anyhow::{bail, Result};
use beatfold::pipeline::AnalyzeParams;
use beatfold::rhythm::label_score::LabelMap;
use beatfold::rhythm::verdict::{verdict_json, VerdictClass};
use beatfold::verdicts::LabelledVerdict;
use serde_json::json;
use std::path::{Path, PathBuf};

/// Run the command.
pub fn run(
    inputs: &[PathBuf],
    labels: &Path,
    map: &str,
    p: &beatfold::params::Checked<AnalyzeParams>,
    json: bool,
    quiet: bool,
) -> Result<()> {
    let map = LabelMap::parse(map)?;
    let [dir] = inputs else {
        bail!(
            "--labels takes exactly one folder of records, {} given",
            inputs.len()
        );
    };
    if !dir.is_dir() {
        bail!(
            "{} is not a folder (--labels scores the records of one folder)",
            dir.display()
        );
    }
    let (s, rows) = beatfold::verdicts::score_labels(dir, labels, &map, p, true)?;
    let num = |x: f64| {
        if x.is_finite() {
            json!(x)
        } else {
            serde_json::Value::Null
        }
    };
    if json {
        let classes: Vec<_> = s
            .classes
            .iter()
            .map(|c| {
                json!({"class": c.class.name(), "n": c.n_true, "predicted": c.n_predicted,
                "se": num(c.se), "ppv": num(c.ppv), "f1": num(c.f1)})
            })
            .collect();
        let recs: Vec<_> = rows
            .iter()
            .map(|r| {
                json!({"record": r.record, "label": r.label, "truth": r.truth.name(),
                "verdict": verdict_json(&r.verdict), "geometry_index": num(r.geometry_index),
                "warnings": r.warnings})
            })
            .collect();
        let j = json!({"n": s.n,
            "classes_order": VerdictClass::ALL.iter().map(|c| c.name()).collect::<Vec<_>>(),
            "confusion": s.confusion, "classes": classes,
            "irregular_vs_rest": {"se": num(s.irregular_se), "sp": num(s.irregular_sp), "f1": num(s.irregular_f1)},
            "index_auc": {"cosen": num(auc_of(&rows, |r| r.evidence.cosen)),
                "geometry": num(auc_of(&rows, |r| r.geometry_index))},
            "label_map": map.describe(), "records": recs, "notice": beatfold::NOTICE});
        println!("{}", serde_json::to_string_pretty(&j)?);
        return Ok(());
    }
    if !quiet {
        println!("{}", beatfold::NOTICE_SHORT);
    }
    println!("{} records; rows: label class, columns: verdict", s.n);
    for (k, c) in VerdictClass::ALL.iter().enumerate() {
        println!("{:<11} {:?}", c.name(), s.confusion[k]);
    }
    for c in &s.classes {
        println!(
            "{:<11} Se {:5.1} %  +P {:5.1} %  F1 {:.3}",
            c.class.name(),
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
    println!(
        "irregular vs rest AUC: RR index (COSEn) {:.3}, beat-geometry index {:.3}",
        auc_of(&rows, |r| r.evidence.cosen),
        auc_of(&rows, |r| r.geometry_index)
    );
    Ok(())
}

/// AUC of one index for irregular against every other label.
fn auc_of(rows: &[LabelledVerdict], index: impl Fn(&LabelledVerdict) -> f64) -> f64 {
    let pairs: Vec<(f64, bool)> = rows
        .iter()
        .map(|r| (index(r), r.truth == VerdictClass::Irregular))
        .collect();
    beatfold::rhythm::label_score::auc(&pairs)
}
