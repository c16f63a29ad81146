//! Record-by-record and pooled beat scoring by the rules of ANSI/AAMI EC57, shared by the `score`
//! command and the validation example so that both give the same numbers for the same inputs.
//!
//! In: per record, the reference and detected beat samples, the rate and the record length, and
//! checked [`Ec57Rules`]. Out: one [`RecordScore`] per record and a [`Totals`] with the pooled
//! statistic (sums of TP, FP, FN over the records, "gross" in EC57's words) and the average
//! statistic (mean of the per-record Se and +P), both over the records not left out.
//!
//! Rules (ANSI/AAMI EC57, as summarised in docs/references.md; the standard itself is not freely
//! available, so these are from memory of the standard and its common use):
//! - a detection matches a reference beat within 150 ms ([`super::scoring::score`]);
//! - the first 5 minutes of each record are a learning period and are not scored;
//! - records a user names (for example paced records) are shown but left out of the pooled and
//!   average totals.

use crate::beats::{score_between, Score};
use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};

/// Default learning period excluded at the start of each record, seconds (EC57: 5 min).
pub const LEARNING_S: f64 = 300.0;
/// Default matching window, seconds (EC57: 150 ms).
pub const MATCH_WINDOW_S: f64 = 0.150;

/// Scoring rules. Defaults are EC57's.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Ec57Rules {
    /// Seconds at the start of each record that are not scored (learning period).
    pub learning_s: f64,
    /// Matching window, seconds.
    pub window_s: f64,
    /// Record names left out of the pooled and average totals (still scored and shown).
    pub leave_out: Vec<String>,
}

impl Default for Ec57Rules {
    fn default() -> Self {
        Ec57Rules {
            learning_s: LEARNING_S,
            window_s: MATCH_WINDOW_S,
            leave_out: Vec::new(),
        }
    }
}

impl Ec57Rules {
    /// Check the ranges: `learning_s` finite and ≥ 0, `window_s` in (0, 1] s.
    pub fn check(&self) -> Result<()> {
        if !(self.learning_s.is_finite() && self.learning_s >= 0.0) {
            return Err(Error::param(
                "learning_s",
                format!(
                    "{} s: the learning period must be a finite number of seconds ≥ 0",
                    self.learning_s
                ),
            ));
        }
        if !(self.window_s.is_finite() && self.window_s > 0.0 && self.window_s <= 1.0) {
            return Err(Error::param(
                "window_s",
                format!(
                    "{} s: the matching window must be in (0, 1] s (EC57: 0.150)",
                    self.window_s
                ),
            ));
        }
        Ok(())
    }

    /// True when `record` is in the leave-out list.
    pub fn left_out(&self, record: &str) -> bool {
        self.leave_out.iter().any(|r| r == record)
    }

    /// One line stating the rules, for printed output.
    pub fn describe(&self) -> String {
        format!(
            "scoring rules: {:.0} ms matching window, first {} s of each record not scored (learning period){}",
            1000.0 * self.window_s,
            fmt_s(self.learning_s),
            if self.leave_out.is_empty() {
                String::new()
            } else {
                format!(", left out of pooled totals: {}", self.leave_out.join(", "))
            }
        )
    }
}

fn fmt_s(s: f64) -> String {
    if s.fract() == 0.0 {
        format!("{s:.0}")
    } else {
        format!("{s}")
    }
}

/// The score of one record.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RecordScore {
    /// Record name.
    pub record: String,
    /// Counts and ratios over the scored part of the record.
    pub score: Score,
    /// Start of the scored part, seconds (the learning period, or the record length if shorter).
    pub scored_from_s: f64,
    /// Seconds scored.
    pub scored_s: f64,
    /// True when the record is left out of the totals.
    pub left_out: bool,
}

/// First scored sample for a learning period of `learning_s` at `fs_hz`.
pub fn first_scored_sample(learning_s: f64, fs_hz: f64, n_samples: usize) -> usize {
    ((learning_s * fs_hz) as usize).min(n_samples)
}

/// Score one record by `rules` (assumed checked): beats in `[learning_s, end)` count, matching
/// runs on the whole lists (see [`score_between`]).
pub fn score_record(
    record: &str,
    reference: &[usize],
    detected: &[usize],
    fs_hz: f64,
    n_samples: usize,
    rules: &Ec57Rules,
) -> RecordScore {
    let start = first_scored_sample(rules.learning_s, fs_hz, n_samples);
    let score = score_between(reference, detected, fs_hz, rules.window_s, start, n_samples);
    RecordScore {
        record: record.to_string(),
        score,
        scored_from_s: start as f64 / fs_hz,
        scored_s: (n_samples - start) as f64 / fs_hz,
        left_out: rules.left_out(record),
    }
}

/// Pooled and average statistics over the records not left out.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Totals {
    /// Sums of reference, detected, TP, FP, FN; Se and +P of the sums (EC57 "gross").
    pub pooled: Score,
    /// Mean of the per-record Se (EC57 "average"); 1 with no record.
    pub average_se: f64,
    /// Mean of the per-record +P.
    pub average_ppv: f64,
    /// Number of records in the totals.
    pub records: usize,
    /// Names of the records left out.
    pub left_out: Vec<String>,
}

/// Pooled sums of the scores `rows` (no record filtering); `window_ms` is reported as given.
pub fn pool<'a>(rows: impl IntoIterator<Item = &'a Score>, window_ms: f64) -> Score {
    let (mut r, mut d, mut tp, mut fp, mut fn_) = (0usize, 0usize, 0usize, 0usize, 0usize);
    for s in rows {
        r += s.reference;
        d += s.detected;
        tp += s.tp;
        fp += s.fp;
        fn_ += s.fn_;
    }
    let ratio = |n: usize, den: usize| if den == 0 { 1.0 } else { n as f64 / den as f64 };
    Score {
        reference: r,
        detected: d,
        tp,
        fp,
        fn_,
        se: ratio(tp, tp + fn_),
        ppv: ratio(tp, tp + fp),
        match_window_ms: window_ms,
    }
}

/// Pooled and average statistics of `rows`, leaving out those marked `left_out`.
pub fn totals(rows: &[RecordScore], rules: &Ec57Rules) -> Totals {
    let kept: Vec<&RecordScore> = rows.iter().filter(|r| !r.left_out).collect();
    let pooled = pool(kept.iter().map(|r| &r.score), 1000.0 * rules.window_s);
    let n = kept.len();
    let mean = |f: &dyn Fn(&Score) -> f64| {
        if n == 0 {
            1.0
        } else {
            kept.iter().map(|r| f(&r.score)).sum::<f64>() / n as f64
        }
    };
    Totals {
        pooled,
        average_se: mean(&|s| s.se),
        average_ppv: mean(&|s| s.ppv),
        records: n,
        left_out: rows
            .iter()
            .filter(|r| r.left_out)
            .map(|r| r.record.clone())
            .collect(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn learning_period_is_not_scored() {
        // 10 s at 100 Hz, learning period 3 s: the beat at 1 s (missed) and the false detection
        // at 2 s fall in it and do not count (EC57 learning period, docs/references.md).
        let fs = 100.0;
        let r = [100, 400, 600, 900];
        let d = [200, 402, 605, 900];
        let rules = Ec57Rules {
            learning_s: 3.0,
            ..Ec57Rules::default()
        };
        let s = score_record("x", &r, &d, fs, 1000, &rules);
        // In range: refs 400, 600, 900; detections 402 (TP), 605 (50 ms: TP), 900 (TP).
        assert_eq!(
            (s.score.reference, s.score.tp, s.score.fp, s.score.fn_),
            (3, 3, 0, 0)
        );
        assert_eq!(s.scored_from_s, 3.0);
        assert_eq!(s.scored_s, 7.0);
        // Learning period 0: everything counts.
        let rules0 = Ec57Rules {
            learning_s: 0.0,
            ..Ec57Rules::default()
        };
        let s0 = score_record("x", &r, &d, fs, 1000, &rules0);
        assert_eq!((s0.score.tp, s0.score.fp, s0.score.fn_), (3, 1, 1));
        // Longer than the record: nothing scored, ratios 1 by convention.
        let s_long = score_record("x", &r, &d, fs, 1000, &Ec57Rules::default());
        assert_eq!((s_long.score.reference, s_long.score.detected), (0, 0));
        assert_eq!(s_long.scored_s, 0.0);
    }

    #[test]
    fn pooled_and_average_differ_and_leave_out_works() {
        let rules = Ec57Rules {
            learning_s: 0.0,
            leave_out: vec!["p".into()],
            ..Ec57Rules::default()
        };
        let fs = 1000.0;
        // Record a: 4 refs, 4 TP. Record b: 1 ref, 0 TP (one far false detection).
        let a = score_record(
            "a",
            &[1000, 2000, 3000, 4000],
            &[1000, 2000, 3000, 4000],
            fs,
            5000,
            &rules,
        );
        let b = score_record("b", &[1000], &[3000], fs, 5000, &rules);
        let p = score_record("p", &[1000], &[], fs, 5000, &rules);
        assert!(p.left_out && !a.left_out);
        let t = totals(&[a, b, p], &rules);
        // Pooled: TP 4, FN 1, FP 1 -> Se 4/5, +P 4/5. Average: Se (1 + 0)/2, +P (1 + 0)/2.
        assert_eq!((t.pooled.tp, t.pooled.fp, t.pooled.fn_), (4, 1, 1));
        assert!((t.pooled.se - 0.8).abs() < 1e-15 && (t.pooled.ppv - 0.8).abs() < 1e-15);
        assert!((t.average_se - 0.5).abs() < 1e-15 && (t.average_ppv - 0.5).abs() < 1e-15);
        assert_eq!(t.records, 2);
        assert_eq!(t.left_out, vec!["p".to_string()]);
    }

    #[test]
    fn rules_are_checked_and_described() {
        assert!(Ec57Rules::default().check().is_ok());
        for (l, w) in [(-1.0, 0.15), (f64::NAN, 0.15), (300.0, 0.0), (300.0, 2.0)] {
            let r = Ec57Rules {
                learning_s: l,
                window_s: w,
                leave_out: vec![],
            };
            assert!(r.check().is_err(), "{l} {w}");
        }
        let d = Ec57Rules {
            leave_out: vec!["107".into(), "217".into()],
            ..Ec57Rules::default()
        }
        .describe();
        assert!(d.contains("150 ms") && d.contains("first 300 s") && d.contains("107, 217"));
    }
}
