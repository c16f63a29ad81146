//! Scoring record verdicts against record labels: a label map (label → class), a label file
//! (`record,label` per line), a confusion matrix, per-class sensitivity (Se), positive
//! predictivity (+P) and F1, and irregular-versus-rest Se and specificity (Sp). The measures
//! are the usual ones of a confusion matrix (`common practice`; Se = TP/(TP+FN), +P =
//! TP/(TP+FP), F1 = 2·Se·(+P)/(Se + (+P)), Sp = TN/(TN+FP)).

use super::verdict::VerdictClass;
use crate::error::{Error, Result};
use serde::Serialize;
use std::path::Path;

/// Which class each label of a label file stands for.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LabelMap {
    /// (label, class) pairs in the order given.
    pub entries: Vec<(String, VerdictClass)>,
}

impl LabelMap {
    /// Parse `LABEL=class,LABEL=class,…` (classes: regular, irregular, other, unreadable).
    /// Errors name the entry and what is wrong (no `=`, empty label, unknown class, a label
    /// given twice).
    pub fn parse(s: &str) -> Result<LabelMap> {
        let mut entries: Vec<(String, VerdictClass)> = Vec::new();
        for item in s.split(',').map(str::trim).filter(|x| !x.is_empty()) {
            let (label, class) = item.split_once('=').ok_or_else(|| {
                Error::param(
                    "label-map",
                    format!("entry `{item}` has no `=`; expected LABEL=class"),
                )
            })?;
            let (label, class) = (label.trim(), class.trim());
            if label.is_empty() {
                return Err(Error::param(
                    "label-map",
                    format!("entry `{item}` has an empty label"),
                ));
            }
            let c = VerdictClass::parse(class).ok_or_else(|| {
                Error::param(
                    "label-map",
                    format!(
                        "entry `{item}`: class `{class}` is not one of regular, irregular, other, unreadable"
                    ),
                )
            })?;
            if entries.iter().any(|(l, _)| l == label) {
                return Err(Error::param(
                    "label-map",
                    format!("label `{label}` is given twice"),
                ));
            }
            entries.push((label.to_string(), c));
        }
        if entries.is_empty() {
            return Err(Error::param(
                "label-map",
                "no entry; expected LABEL=class,LABEL=class,…",
            ));
        }
        Ok(LabelMap { entries })
    }

    /// The class of `label`, if mapped.
    pub fn class_of(&self, label: &str) -> Option<VerdictClass> {
        self.entries
            .iter()
            .find(|(l, _)| l == label)
            .map(|(_, c)| *c)
    }

    /// The map written back as `L=class,…`.
    pub fn describe(&self) -> String {
        self.entries
            .iter()
            .map(|(l, c)| format!("{l}={}", c.name()))
            .collect::<Vec<_>>()
            .join(",")
    }
}

/// Read a label file: one `record,label` line per record (blank lines and `#` comments skipped;
/// a first line `record,label` is taken for a header). Errors name the file and the line.
pub fn read_labels(path: &Path) -> Result<Vec<(String, String)>> {
    let text = crate::io::read_text(path)?;
    parse_labels(path, &text)
}

/// [`read_labels`] on text already read.
pub fn parse_labels(path: &Path, text: &str) -> Result<Vec<(String, String)>> {
    let mut out: Vec<(String, String)> = Vec::new();
    for (i, line) in text.lines().enumerate() {
        let line = line.trim();
        if line.is_empty() || line.starts_with('#') {
            continue;
        }
        let bad =
            |what: &str| Error::Analysis(format!("{}: line {}: {what}", path.display(), i + 1));
        let mut parts = line.split(',').map(str::trim);
        let (Some(name), Some(label), None) = (parts.next(), parts.next(), parts.next()) else {
            return Err(bad(&format!(
                "expected `record,label` (two fields), found `{line}`"
            )));
        };
        if out.is_empty() && name.eq_ignore_ascii_case("record") {
            continue;
        }
        if name.is_empty() || label.is_empty() {
            return Err(bad("empty record name or label"));
        }
        if out.iter().any(|(n, _)| n == name) {
            return Err(bad(&format!("record `{name}` is labelled twice")));
        }
        out.push((name.to_string(), label.to_string()));
    }
    if out.is_empty() {
        return Err(Error::Analysis(format!(
            "{}: no `record,label` line",
            path.display()
        )));
    }
    Ok(out)
}

/// Se, +P and F1 of one class (NaN where the denominator is zero).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ClassScore {
    /// The class.
    pub class: VerdictClass,
    /// Records with this label.
    pub n_true: usize,
    /// Records given this verdict.
    pub n_predicted: usize,
    /// Sensitivity.
    pub se: f64,
    /// Positive predictivity.
    pub ppv: f64,
    /// F1.
    pub f1: f64,
}

/// The score of verdicts against labels.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LabelScore {
    /// Records scored.
    pub n: usize,
    /// `confusion[t][p]`: records labelled class t (order of [`VerdictClass::ALL`]) given
    /// verdict p.
    pub confusion: [[usize; 4]; 4],
    /// Per class, in the order of [`VerdictClass::ALL`].
    pub classes: Vec<ClassScore>,
    /// Irregular versus every other class: sensitivity.
    pub irregular_se: f64,
    /// Irregular versus every other class: specificity.
    pub irregular_sp: f64,
    /// Irregular versus every other class: F1.
    pub irregular_f1: f64,
}

fn ratio(a: usize, b: usize) -> f64 {
    if b == 0 {
        f64::NAN
    } else {
        a as f64 / b as f64
    }
}

fn idx(c: VerdictClass) -> usize {
    VerdictClass::ALL.iter().position(|&x| x == c).unwrap_or(0)
}

impl LabelScore {
    /// Score (truth, verdict) pairs.
    pub fn from_pairs(pairs: &[(VerdictClass, VerdictClass)]) -> LabelScore {
        let mut m = [[0usize; 4]; 4];
        for &(t, p) in pairs {
            m[idx(t)][idx(p)] += 1;
        }
        let classes: Vec<ClassScore> = VerdictClass::ALL
            .iter()
            .enumerate()
            .map(|(k, &c)| {
                let tp = m[k][k];
                let n_true: usize = m[k].iter().sum();
                let n_pred: usize = (0..4).map(|t| m[t][k]).sum();
                let se = ratio(tp, n_true);
                let ppv = ratio(tp, n_pred);
                ClassScore {
                    class: c,
                    n_true,
                    n_predicted: n_pred,
                    se,
                    ppv,
                    f1: ratio(2 * tp, n_true + n_pred),
                }
            })
            .collect();
        let k = idx(VerdictClass::Irregular);
        let tp = m[k][k];
        let n_true: usize = m[k].iter().sum();
        let n_pred: usize = (0..4).map(|t| m[t][k]).sum();
        let fp = n_pred - tp;
        let tn = pairs.len() - n_true - fp;
        LabelScore {
            n: pairs.len(),
            confusion: m,
            irregular_se: ratio(tp, n_true),
            irregular_sp: ratio(tn, tn + fp),
            irregular_f1: ratio(2 * tp, n_true + n_pred),
            classes,
        }
    }
}

/// [`crate::stats::roc_auc`] of (score, positive) pairs: the Mann–Whitney
/// statistic, the probability that a random positive scores above a random negative, ties
/// counting one half (Hanley & McNeil 1982). Pairs with a non-finite score are left out; NaN
/// without a finite positive and a finite negative.
pub fn auc(scores: &[(f64, bool)]) -> f64 {
    let (score, positive): (Vec<f64>, Vec<bool>) = scores.iter().copied().unzip();
    crate::stats::roc_auc(&score, &positive)
}

#[cfg(test)]
mod tests {
    use super::*;
    use VerdictClass::*;

    #[test]
    fn hand_counted_confusion() {
        // 3 irregular labels: 2 found, 1 called other; 2 regular: 1 called irregular.
        // Irregular: TP 2, FN 1, FP 1, TN 1 → Se 2/3, Sp 1/2, +P 2/3, F1 4/6 (common practice
        // definitions, counted by hand).
        let s = LabelScore::from_pairs(&[
            (Irregular, Irregular),
            (Irregular, Irregular),
            (Irregular, Other),
            (Regular, Irregular),
            (Regular, Regular),
        ]);
        assert_eq!(s.n, 5);
        assert_eq!(s.confusion[1], [0, 2, 1, 0]);
        assert!((s.irregular_se - 2.0 / 3.0).abs() < 1e-12);
        assert!((s.irregular_sp - 0.5).abs() < 1e-12);
        assert!((s.irregular_f1 - 4.0 / 6.0).abs() < 1e-12);
        assert!((s.classes[1].ppv - 2.0 / 3.0).abs() < 1e-12);
        assert!((s.classes[0].se - 0.5).abs() < 1e-12);
        assert!(s.classes[3].se.is_nan());
    }

    #[test]
    fn auc_counts_ordered_pairs() {
        // Worked by hand (Hanley & McNeil 1982, the Mann–Whitney form): positives 0.9, 0.4;
        // negatives 0.5, 0.4, 0.1 → pairs won 3 + 1.5 (a tie with 0.4 and a win over 0.1) of 6.
        let s = [
            (0.9, true),
            (0.4, true),
            (0.5, false),
            (0.4, false),
            (0.1, false),
            (f64::NAN, true),
        ];
        assert!((auc(&s) - 4.5 / 6.0).abs() < 1e-12);
        assert!(auc(&[(1.0, true)]).is_nan());
    }

    #[test]
    fn label_map_and_file_errors() {
        let m = LabelMap::parse("A=irregular,N=regular,O=other,~=unreadable").unwrap();
        assert_eq!(m.class_of("~"), Some(Unreadable));
        assert_eq!(m.class_of("X"), None);
        for bad in ["A", "A=afib", "=regular", "A=regular,A=other", ""] {
            assert!(LabelMap::parse(bad).is_err(), "{bad}");
        }
        let p = Path::new("REFERENCE.csv");
        let l = parse_labels(p, "record,label\nA1,N\n\nA2,A\n").unwrap();
        assert_eq!(
            l,
            vec![("A1".into(), "N".into()), ("A2".into(), "A".into())]
        );
        let e = parse_labels(p, "A1,N\nA2\n").unwrap_err().to_string();
        assert!(e.contains("REFERENCE.csv") && e.contains("line 2"), "{e}");
        assert!(parse_labels(p, "A1,N\nA1,A\n").is_err());
    }
}
