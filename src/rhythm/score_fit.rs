//! **Fitting the irregular-rhythm score** ([`super::verdict::IrregularScore`]) on labelled
//! records, and estimating what an unseen record would see by nested cross-validation.
//!
//! In: one [`FitRow`] per labelled record (its [`super::verdict::score_features`], whether the
//! verdict's readability rules pass, whether its label is irregular). Out: a [`FitChoice`] (the
//! coefficients, the threshold `score_min` and the L2 penalty chosen), written to and read from
//! a small JSON file ([`ScoreFile`]); out-of-fold probabilities and calls.
//!
//! Method:
//! - the model is a logistic regression (Cox 1958) of irregular against every other label on
//!   the standardised measures (mean and sample standard deviation of the readable training
//!   records; a NaN measure counts as its centre), fitted by Newton's method with an L2 penalty
//!   (ridge; le Cessie & van Houwelingen 1992) on the weights, not on the intercept. Only
//!   readable records whose RR does not follow an organised pattern are fitted: the verdict gives
//!   the others `unreadable` or `other` whatever their score;
//! - the choice ([`choose_and_fit`]): for each readability rule of [`READABILITY_RULES`] (the
//!   lower detector agreement at which a record with plausible beats is still read,
//!   `VerdictParams::min_agreement_plausible`, and the lead kurtosis such a record needs,
//!   `VerdictParams::min_kurtosis_plausible`) and each penalty of [`RIDGE_GRID`], the
//!   out-of-fold probabilities of an inner stratified [`INNER_FOLDS`]-fold cross-validation;
//!   the (rule, penalty, threshold of [`THRESHOLD_GRID`]) triple with the highest
//!   irregular-vs-rest F1 over every training record (an unreadable record is never called
//!   irregular, so an irregular record called unreadable is a miss) is kept, the first of
//!   equals (the stricter rule, the larger penalty, the lower threshold); the model is then
//!   fitted on every training record readable under that rule, with that penalty;
//! - the honest estimate ([`out_of_fold`]): the whole choice above is redone inside each of
//!   [`OUTER_FOLDS`] stratified outer folds and applied to the held-out fold (nested
//!   cross-validation, Varma & Simon 2006). Folds are assigned by a seeded shuffle within each
//!   class ([`stratified_folds`]), so they are the same on every run and at any thread count.

use super::verdict::{IrregularScore, SCORE_FEATURES, SCORE_FEATURE_NAMES};
use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};

/// Readability rules tried, (`min_agreement_plausible`, `min_kurtosis_plausible`), strictest
/// first. An agreement of 0.8, equal to `min_agreement`, is off: every record below 80 %
/// agreement is unreadable, and the kurtosis rule has nothing to add. A kurtosis of 0 is off; 5
/// is the clean-ECG bound of kSQI (Clifford et al. 2012, [`super::sqi`]).
pub const READABILITY_RULES: [(f64, f64); 5] =
    [(0.8, 0.0), (0.7, 5.0), (0.7, 0.0), (0.6, 5.0), (0.6, 0.0)];
/// L2 penalties tried (on the standardised weights), largest first.
pub const RIDGE_GRID: [f64; 4] = [30.0, 10.0, 3.0, 1.0];
/// Thresholds of the probability tried, lowest first (0.1 to 0.9 in steps of 0.05).
pub const THRESHOLD_GRID: [f64; 17] = [
    0.1, 0.15, 0.2, 0.25, 0.3, 0.35, 0.4, 0.45, 0.5, 0.55, 0.6, 0.65, 0.7, 0.75, 0.8, 0.85, 0.9,
];
/// Folds of the inner cross-validation that chooses the penalty and the threshold.
pub const INNER_FOLDS: usize = 5;
/// Folds of the outer cross-validation that estimates the held-out performance.
pub const OUTER_FOLDS: usize = 10;
/// Seed of the fold assignment.
pub const FOLD_SEED: u64 = 2017;

/// One labelled record for the fit.
#[derive(Debug, Clone, PartialEq)]
pub struct FitRow {
    /// The record's measures ([`super::verdict::score_features`]).
    pub x: [f64; SCORE_FEATURES],
    /// The verdict's readability rules pass ([`super::verdict::unreadable_reason`] is `None`)
    /// under each rule of [`READABILITY_RULES`].
    pub readable: [bool; READABILITY_RULES.len()],
    /// RR follows an organised pattern ([`super::verdict::returns_to_base_cycle`]): the
    /// verdict never calls such a record irregular by its score, so it is neither fitted nor
    /// called.
    pub base_cycle: bool,
    /// The label is irregular.
    pub irregular: bool,
}

impl FitRow {
    /// The row of a record with evidence `e` and label `truth`, readability by the rules of `p`.
    pub fn of(
        e: &super::verdict::VerdictEvidence,
        truth: super::verdict::VerdictClass,
        p: &super::verdict::VerdictParams,
    ) -> FitRow {
        FitRow {
            x: super::verdict::score_features(e),
            readable: READABILITY_RULES.map(|(m, k)| {
                let q = super::verdict::VerdictParams {
                    min_agreement_plausible: m,
                    min_kurtosis_plausible: k,
                    ..p.clone()
                };
                super::verdict::unreadable_reason(e, &q).is_none()
            }),
            base_cycle: super::verdict::returns_to_base_cycle(e, p),
            irregular: truth == super::verdict::VerdictClass::Irregular,
        }
    }
}

/// The result of [`choose_and_fit`].
#[derive(Debug, Clone, PartialEq)]
pub struct FitChoice {
    /// The fitted coefficients.
    pub score: IrregularScore,
    /// The threshold chosen.
    pub score_min: f64,
    /// The L2 penalty chosen.
    pub ridge: f64,
    /// The `min_agreement_plausible` chosen.
    pub min_agreement_plausible: f64,
    /// The `min_kurtosis_plausible` chosen.
    pub min_kurtosis_plausible: f64,
    /// The inner cross-validated F1 of the choice.
    pub inner_f1: f64,
}

/// Fold of each of `n` items, 0..k: items of each class (`y`) shuffled with a ChaCha8 generator
/// seeded by `seed` and dealt to the folds in turn, so every fold holds ⌊n_c/k⌋ or ⌈n_c/k⌉
/// items of class c. Deterministic.
pub fn stratified_folds(y: &[bool], k: usize, seed: u64) -> Vec<usize> {
    use rand::seq::SliceRandom;
    use rand::SeedableRng;
    let k = k.max(1);
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
    let mut fold = vec![0; y.len()];
    let mut next = 0;
    for class in [true, false] {
        let mut idx: Vec<usize> = (0..y.len()).filter(|&i| y[i] == class).collect();
        idx.shuffle(&mut rng);
        for i in idx {
            fold[i] = next % k;
            next += 1;
        }
    }
    fold
}

/// Logistic regression of `y` on `x` (see the module documentation), L2 penalty `ridge`.
#[allow(clippy::needless_range_loop)]
pub fn fit_logistic(x: &[[f64; SCORE_FEATURES]], y: &[bool], ridge: f64) -> IrregularScore {
    const D: usize = SCORE_FEATURES + 1;
    let mut center = [0.0; SCORE_FEATURES];
    let mut scale = [1.0; SCORE_FEATURES];
    for k in 0..SCORE_FEATURES {
        let v: Vec<f64> = x.iter().map(|r| r[k]).filter(|v| v.is_finite()).collect();
        if v.len() >= 2 {
            let m = v.iter().sum::<f64>() / v.len() as f64;
            let sd = (v.iter().map(|a| (a - m).powi(2)).sum::<f64>() / (v.len() - 1) as f64).sqrt();
            center[k] = m;
            scale[k] = if sd > 0.0 { sd } else { 1.0 };
        }
    }
    let rows: Vec<[f64; D]> = x
        .iter()
        .map(|r| {
            let mut z = [1.0; D];
            for k in 0..SCORE_FEATURES {
                let v = (r[k] - center[k]) / scale[k];
                z[k + 1] = if v.is_finite() { v } else { 0.0 };
            }
            z
        })
        .collect();
    let mut beta = [0.0; D];
    for _ in 0..100 {
        let mut g = [0.0; D];
        let mut h = [[0.0; D]; D];
        for (z, &t) in rows.iter().zip(y) {
            let eta: f64 = (0..D).map(|i| beta[i] * z[i]).sum();
            let pr = 1.0 / (1.0 + (-eta).exp());
            let wgt = (pr * (1.0 - pr)).max(1e-12);
            let r = if t { 1.0 } else { 0.0 } - pr;
            for i in 0..D {
                g[i] += r * z[i];
                for j in 0..D {
                    h[i][j] += wgt * z[i] * z[j];
                }
            }
        }
        for i in 1..D {
            g[i] -= ridge * beta[i];
            h[i][i] += ridge;
        }
        // A tiny ridge on the intercept keeps the system solvable with one class only.
        h[0][0] += 1e-9;
        let d = solve(h, g);
        let step: f64 = d.iter().map(|v| v.abs()).fold(0.0, f64::max);
        if !step.is_finite() {
            break;
        }
        for i in 0..D {
            beta[i] += d[i];
        }
        if step < 1e-10 {
            break;
        }
    }
    let mut weights = [0.0; SCORE_FEATURES];
    weights.copy_from_slice(&beta[1..]);
    IrregularScore {
        center,
        scale,
        weights,
        intercept: beta[0],
    }
}

/// Solve `a x = b` by Gaussian elimination with partial pivoting (a small dense system).
#[allow(clippy::needless_range_loop)]
fn solve<const D: usize>(mut a: [[f64; D]; D], mut b: [f64; D]) -> [f64; D] {
    for c in 0..D {
        let piv = (c..D)
            .max_by(|&i, &j| a[i][c].abs().total_cmp(&a[j][c].abs()))
            .unwrap_or(c);
        a.swap(c, piv);
        b.swap(c, piv);
        let d = a[c][c];
        for r in c + 1..D {
            let f = a[r][c] / d;
            for k in c..D {
                a[r][k] -= f * a[c][k];
            }
            b[r] -= f * b[c];
        }
    }
    let mut x = [0.0; D];
    for c in (0..D).rev() {
        let s: f64 = (c + 1..D).map(|k| a[c][k] * x[k]).sum();
        x[c] = (b[c] - s) / a[c][c];
    }
    x
}

/// The probability of each row under `score` (0 for a row unreadable under rule `a` of
/// [`READABILITY_RULES`] or whose RR follows an organised pattern: it is never called).
fn probabilities(rows: &[&FitRow], score: &IrregularScore, a: usize) -> Vec<f64> {
    rows.iter()
        .map(|r| {
            if r.readable[a] && !r.base_cycle {
                score.probability_of(&r.x)
            } else {
                0.0
            }
        })
        .collect()
}

/// Fit on the rows of `rows` readable under rule `a` with penalty `ridge`.
fn fit_rows(rows: &[&FitRow], ridge: f64, a: usize) -> IrregularScore {
    let (x, y): (Vec<[f64; SCORE_FEATURES]>, Vec<bool>) = rows
        .iter()
        .filter(|r| r.readable[a] && !r.base_cycle)
        .map(|r| (r.x, r.irregular))
        .unzip();
    fit_logistic(&x, &y, ridge)
}

/// Irregular-vs-rest F1 of the calls `prob ≥ t` (an unreadable row has probability 0 and is
/// never called: [`probabilities`]).
pub fn f1_at(prob: &[f64], truth: &[bool], t: f64) -> f64 {
    let (mut tp, mut fp, mut fneg) = (0usize, 0usize, 0usize);
    for (&p, &y) in prob.iter().zip(truth) {
        match (y, p >= t && p > 0.0) {
            (true, true) => tp += 1,
            (false, true) => fp += 1,
            (true, false) => fneg += 1,
            _ => {}
        }
    }
    if tp == 0 {
        0.0
    } else {
        2.0 * tp as f64 / (2 * tp + fp + fneg) as f64
    }
}

/// Choose the penalty and the threshold by inner cross-validation, then fit on every row (see
/// the module documentation). `seed` seeds the inner folds.
pub fn choose_and_fit(rows: &[&FitRow], seed: u64) -> FitChoice {
    let truth: Vec<bool> = rows.iter().map(|r| r.irregular).collect();
    let folds = stratified_folds(&truth, INNER_FOLDS, seed);
    let mut best = (0, RIDGE_GRID[0], THRESHOLD_GRID[0], f64::NEG_INFINITY);
    for a in 0..READABILITY_RULES.len() {
        for ridge in RIDGE_GRID {
            let mut prob = vec![0.0; rows.len()];
            for f in 0..INNER_FOLDS {
                let train: Vec<&FitRow> = (0..rows.len())
                    .filter(|&i| folds[i] != f)
                    .map(|i| rows[i])
                    .collect();
                let test: Vec<usize> = (0..rows.len()).filter(|&i| folds[i] == f).collect();
                let s = fit_rows(&train, ridge, a);
                let tr: Vec<&FitRow> = test.iter().map(|&i| rows[i]).collect();
                for (&i, p) in test.iter().zip(probabilities(&tr, &s, a)) {
                    prob[i] = p;
                }
            }
            for t in THRESHOLD_GRID {
                let f1 = f1_at(&prob, &truth, t);
                if f1 > best.3 {
                    best = (a, ridge, t, f1);
                }
            }
        }
    }
    FitChoice {
        score: fit_rows(rows, best.1, best.0),
        score_min: best.2,
        ridge: best.1,
        min_agreement_plausible: READABILITY_RULES[best.0].0,
        min_kurtosis_plausible: READABILITY_RULES[best.0].1,
        inner_f1: best.3,
    }
}

/// The result of [`out_of_fold`].
#[derive(Debug, Clone, PartialEq)]
pub struct OutOfFold {
    /// Out-of-fold probability of every row (0 when unreadable under its fold's rule).
    pub prob: Vec<f64>,
    /// Whether the row is called irregular by its fold's choice.
    pub call: Vec<bool>,
    /// The outer fold of every row.
    pub fold: Vec<usize>,
    /// The choice made without each fold.
    pub choices: Vec<FitChoice>,
}

/// Nested cross-validation: for each of [`OUTER_FOLDS`] stratified folds (seed [`FOLD_SEED`]),
/// [`choose_and_fit`] on the other folds and the held-out rows' probabilities under it.
pub fn out_of_fold(rows: &[FitRow]) -> OutOfFold {
    out_of_fold_seeded(rows, FOLD_SEED)
}

/// [`out_of_fold`] with the outer folds drawn by `seed` (the inner folds of outer fold f by
/// `seed + 1 + f`): another draw of the same estimate, to see how much it depends on the folds.
pub fn out_of_fold_seeded(rows: &[FitRow], seed: u64) -> OutOfFold {
    let truth: Vec<bool> = rows.iter().map(|r| r.irregular).collect();
    let folds = stratified_folds(&truth, OUTER_FOLDS, seed);
    let mut prob = vec![0.0; rows.len()];
    let mut call = vec![false; rows.len()];
    let mut choices = Vec::with_capacity(OUTER_FOLDS);
    for f in 0..OUTER_FOLDS {
        let train: Vec<&FitRow> = rows
            .iter()
            .zip(&folds)
            .filter(|(_, &g)| g != f)
            .map(|(r, _)| r)
            .collect();
        let c = choose_and_fit(&train, seed + 1 + f as u64);
        let a = READABILITY_RULES
            .iter()
            .position(|&r| r == (c.min_agreement_plausible, c.min_kurtosis_plausible))
            .unwrap_or(0);
        for i in (0..rows.len()).filter(|&i| folds[i] == f) {
            let p = probabilities(&[&rows[i]], &c.score, a)[0];
            prob[i] = p;
            call[i] = rows[i].readable[a] && !rows[i].base_cycle && p >= c.score_min;
        }
        choices.push(c);
    }
    OutOfFold {
        prob,
        call,
        fold: folds,
        choices,
    }
}

/// The committed coefficient file of the score: what [`choose_and_fit`] chose on every
/// labelled record, with the measures' names so that a file written for other measures is
/// refused. On disk: a JSON object with the fields below, `score` spelt out as `center`,
/// `scale`, `weights` (arrays in the order of `features`) and `intercept`.
#[derive(Debug, Clone, PartialEq)]
pub struct ScoreFile {
    /// The command that wrote the file.
    pub fitted_by: String,
    /// Labelled records used, and how many of them are irregular.
    pub records: usize,
    /// Irregular records among them.
    pub irregular: usize,
    /// The L2 penalty chosen.
    pub ridge: f64,
    /// The threshold chosen (the default `score_min`).
    pub score_min: f64,
    /// The readability rule chosen (the default `min_agreement_plausible`).
    pub min_agreement_plausible: f64,
    /// The readability rule chosen (the default `min_kurtosis_plausible`).
    pub min_kurtosis_plausible: f64,
    /// Names of the measures, in the order of [`SCORE_FEATURE_NAMES`].
    pub features: Vec<String>,
    /// The coefficients.
    pub score: IrregularScore,
}

/// [`ScoreFile`] as written on disk.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct ScoreFileText {
    fitted_by: String,
    records: usize,
    irregular: usize,
    ridge: f64,
    score_min: f64,
    min_agreement_plausible: f64,
    min_kurtosis_plausible: f64,
    features: Vec<String>,
    center: Vec<f64>,
    scale: Vec<f64>,
    weights: Vec<f64>,
    intercept: f64,
}

impl ScoreFile {
    /// Parse and check a coefficient file; `path` names it in errors.
    pub fn parse(text: &str, path: &str) -> Result<ScoreFile> {
        let t: ScoreFileText = serde_json::from_str(text).map_err(|e| {
            Error::input(
                path,
                format!("line {}, column {}", e.line(), e.column()),
                format!("not a coefficient file of the irregular-rhythm score: {e}"),
            )
        })?;
        let names: Vec<&str> = t.features.iter().map(|s| s.as_str()).collect();
        if names != SCORE_FEATURE_NAMES {
            return Err(Error::input(
                path,
                "features",
                format!(
                    "the file's measures are [{}], this version's are [{}]; fit the score again",
                    names.join(", "),
                    SCORE_FEATURE_NAMES.join(", ")
                ),
            ));
        }
        let array = |name: &str, v: &[f64]| -> Result<[f64; SCORE_FEATURES]> {
            v.try_into().map_err(|_| {
                Error::input(
                    path,
                    name,
                    format!(
                        "{} numbers; {} expected, one per measure",
                        v.len(),
                        SCORE_FEATURES
                    ),
                )
            })
        };
        let f = ScoreFile {
            score: IrregularScore {
                center: array("center", &t.center)?,
                scale: array("scale", &t.scale)?,
                weights: array("weights", &t.weights)?,
                intercept: t.intercept,
            },
            fitted_by: t.fitted_by,
            records: t.records,
            irregular: t.irregular,
            ridge: t.ridge,
            score_min: t.score_min,
            min_agreement_plausible: t.min_agreement_plausible,
            min_kurtosis_plausible: t.min_kurtosis_plausible,
            features: t.features,
        };
        f.check(path)?;
        Ok(f)
    }

    /// Check the coefficients, the threshold, the readability rule and the penalty; `path`
    /// names the file in errors.
    pub fn check(&self, path: &str) -> Result<()> {
        let f = self;
        f.score
            .check()
            .map_err(|e| Error::input(path, "center/scale/weights/intercept", e.to_string()))?;
        if !(f.score_min > 0.0 && f.score_min <= 1.0) {
            return Err(Error::input(
                path,
                "score_min",
                format!("{}; allowed 0 < v ≤ 1 (a probability)", f.score_min),
            ));
        }
        if !(0.0..=1.0).contains(&f.min_agreement_plausible) {
            return Err(Error::input(
                path,
                "min_agreement_plausible",
                format!(
                    "{}; allowed 0 ≤ v ≤ 1 (a share of beats)",
                    f.min_agreement_plausible
                ),
            ));
        }
        if !(f.min_kurtosis_plausible.is_finite() && f.min_kurtosis_plausible >= 0.0) {
            return Err(Error::input(
                path,
                "min_kurtosis_plausible",
                format!(
                    "{}; allowed a finite value ≥ 0 (0 is off)",
                    f.min_kurtosis_plausible
                ),
            ));
        }
        if !(f.ridge.is_finite() && f.ridge >= 0.0) {
            return Err(Error::input(
                path,
                "ridge",
                format!("{}; allowed a finite value ≥ 0", f.ridge),
            ));
        }
        Ok(())
    }

    /// The file's text (pretty JSON, numbers as the fit gave them, a final newline).
    pub fn to_text(&self) -> String {
        let t = ScoreFileText {
            fitted_by: self.fitted_by.clone(),
            records: self.records,
            irregular: self.irregular,
            ridge: self.ridge,
            score_min: self.score_min,
            min_agreement_plausible: self.min_agreement_plausible,
            min_kurtosis_plausible: self.min_kurtosis_plausible,
            features: self.features.clone(),
            center: self.score.center.to_vec(),
            scale: self.score.scale.to_vec(),
            weights: self.score.weights.to_vec(),
            intercept: self.score.intercept,
        };
        let mut s = serde_json::to_string_pretty(&t).unwrap_or_default();
        s.push('\n');
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};

    #[test]
    fn committed_file_parses() {
        let f = ScoreFile::parse(
            super::super::verdict::FITTED_SCORE_FILE,
            "src/rhythm/irregular_score.json",
        )
        .unwrap();
        assert_eq!(f.features.len(), SCORE_FEATURES);
        assert!(RIDGE_GRID.contains(&f.ridge) && THRESHOLD_GRID.contains(&f.score_min));
        assert!(READABILITY_RULES.contains(&(f.min_agreement_plausible, f.min_kurtosis_plausible)));
        // The file round-trips through its writer.
        assert_eq!(
            ScoreFile::parse(&f.to_text(), "x").unwrap(),
            f,
            "writer and parser agree"
        );
    }

    #[test]
    fn bad_files_are_refused_with_the_field_named() {
        let good = super::super::verdict::FITTED_SCORE_FILE;
        let err = |text: &str| ScoreFile::parse(text, "coef.json").unwrap_err().to_string();
        let e = err("{ not json");
        assert!(e.starts_with("coef.json: line 1"), "{e}");
        let e = err(&good.replacen("\"ridge\"", "\"ridge\": 1, \"extra\"", 1));
        assert!(e.contains("unknown field `extra`"), "{e}");
        let e = err(&good.replacen("\"cosen\"", "\"sample_entropy\"", 1));
        assert!(
            e.contains("coef.json: features:") && e.contains("sample_entropy"),
            "{e}"
        );
        let mut f = ScoreFile::parse(good, "x").unwrap();
        f.score.scale[1] = 0.0;
        let e = err(&f.to_text());
        assert!(
            e.contains("coef.json: center/scale") && e.contains("scale 0"),
            "{e}"
        );
        let mut f = ScoreFile::parse(good, "x").unwrap();
        f.score_min = 1.5;
        assert!(err(&f.to_text()).contains("coef.json: score_min: 1.5"));
        let mut f = ScoreFile::parse(good, "x").unwrap();
        f.min_kurtosis_plausible = -1.0;
        assert!(err(&f.to_text()).contains("coef.json: min_kurtosis_plausible: -1"));
    }

    #[test]
    fn folds_are_deterministic_and_stratified() {
        let y: Vec<bool> = (0..300).map(|i| i % 6 == 0).collect();
        let a = stratified_folds(&y, 10, FOLD_SEED);
        assert_eq!(a, stratified_folds(&y, 10, FOLD_SEED));
        assert_ne!(a, stratified_folds(&y, 10, FOLD_SEED + 1));
        for f in 0..10 {
            let pos = (0..300).filter(|&i| a[i] == f && y[i]).count();
            let all = (0..300).filter(|&i| a[i] == f).count();
            assert_eq!((pos, all), (5, 30), "fold {f}");
        }
    }

    #[test]
    fn fit_recovers_a_separating_measure_and_cv_is_reproducible() {
        // Irregular rows have the first measure around +1, the others around −1 (standard
        // normal noise otherwise): the fitted weight of that measure is the largest and
        // positive, and the nested cross-validation separates the classes.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(1);
        let rows: Vec<FitRow> = (0..200)
            .map(|i| {
                let irregular = i % 4 == 0;
                let mut x = [0.0; SCORE_FEATURES];
                for v in x.iter_mut() {
                    *v = rng.gen_range(-1.0..1.0);
                }
                x[0] += if irregular { 1.5 } else { -1.5 };
                FitRow {
                    x,
                    readable: [i % 50 != 1; READABILITY_RULES.len()],
                    base_cycle: false,
                    irregular,
                }
            })
            .collect();
        let refs: Vec<&FitRow> = rows.iter().collect();
        let c = choose_and_fit(&refs, 3);
        let w = c.score.weights;
        assert!(w[0] > 0.0 && w[1..].iter().all(|v| v.abs() < w[0]), "{w:?}");
        let o = out_of_fold(&rows);
        assert_eq!(o.choices.len(), OUTER_FOLDS);
        let truth: Vec<bool> = rows.iter().map(|r| r.irregular).collect();
        let (tp, fp, fneg) = (0..rows.len()).fold((0, 0, 0), |(a, b, c), i| {
            (
                a + (o.call[i] && truth[i]) as usize,
                b + (o.call[i] && !truth[i]) as usize,
                c + (!o.call[i] && truth[i]) as usize,
            )
        });
        assert!(2 * tp * 100 > 90 * (2 * tp + fp + fneg), "{tp} {fp} {fneg}");
        assert!(o.call.iter().zip(&rows).all(|(c, r)| r.readable[0] || !c));
        assert_eq!(out_of_fold(&rows), o);
    }
}
