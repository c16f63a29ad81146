//! Minimum support of the estimates in the cohort table: a number is shown only where the
//! record holds enough beats, points or windows for it to mean something; below that the cell
//! stays empty and the row's notes say why.
//!
//! In: a finished [`Analysis`] and [`Support`]. Out: [`Cells`], the gated measures with their
//! reasons. The supports and where they come from (docs/cohort.md, "Minimum support"):
//! - variability (SDNN, RMSSD): NN intervals. The relative standard error of a standard
//!   deviation from n values is about 1/√(2(n − 1)) (common practice, normal theory); at the
//!   default 20 intervals it is about 16 %.
//! - mean heart rate: NN intervals (default 5).
//! - dimension: beat feature points (default 100). Eckmann & Ruelle (1992) show that N points
//!   cannot resolve a dimension above about 2·log10 N; 100 points reach d = 4. An estimate above
//!   2·log10 N is not shown either, at any N.
//! - recurrence: windows of the recurrence timeline (default 3), so the median DET (Marwan et
//!   al. 2007) rests on more than one window.
//!
//! The dimension cell is made in one place, [`dimension_cell`], so the column switches to
//! another estimator (a consensus of the suite) by changing that function alone.

use crate::error::{Error, Result};
use crate::pipeline::{Analysis, MIN_BEATS_FOR_GEOMETRY};
use serde::{Deserialize, Serialize};

/// Minimum support of each estimate (see the module notes).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Support {
    /// Fewest NN intervals for the mean heart rate (default 5; at least 1).
    pub hr_intervals: usize,
    /// Fewest NN intervals for SDNN and RMSSD (default 20; at least 3).
    pub variability_intervals: usize,
    /// Fewest beat feature points for a dimension (default 100; at least 30, the embedding's
    /// own minimum).
    pub dimension_points: usize,
    /// Fewest recurrence windows for the median determinism (default 3; at least 1).
    pub recurrence_windows: usize,
}

impl Default for Support {
    fn default() -> Self {
        Support {
            hr_intervals: 5,
            variability_intervals: 20,
            dimension_points: 100,
            recurrence_windows: 3,
        }
    }
}

impl Support {
    /// Validate the lower bounds given on each field.
    pub fn check(&self) -> Result<()> {
        let bad = |name: &str, v: usize, min: usize, unit: &str| {
            Err(Error::param(
                name,
                format!("{v} {unit}; must be at least {min}"),
            ))
        };
        if self.hr_intervals < 1 {
            return bad("hr_intervals", self.hr_intervals, 1, "NN intervals");
        }
        if self.variability_intervals < 3 {
            return bad(
                "variability_intervals",
                self.variability_intervals,
                3,
                "NN intervals",
            );
        }
        if self.dimension_points < MIN_BEATS_FOR_GEOMETRY {
            return bad(
                "dimension_points",
                self.dimension_points,
                MIN_BEATS_FOR_GEOMETRY,
                "points",
            );
        }
        if self.recurrence_windows < 1 {
            return bad("recurrence_windows", self.recurrence_windows, 1, "windows");
        }
        Ok(())
    }
}

/// The gated measures of one record; `None` where the support is too small or the value is
/// not finite, with the reason in `notes`.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Cells {
    /// Mean heart rate of the NN series, bpm.
    pub mean_hr_bpm: Option<f64>,
    /// SDNN, ms.
    pub sdnn_ms: Option<f64>,
    /// RMSSD, ms.
    pub rmssd_ms: Option<f64>,
    /// Median determinism of the recurrence windows, 0..1.
    pub det: Option<f64>,
    /// The dimension shown in the table.
    pub dimension: Option<f64>,
    /// What the dimension cell holds (see [`dimension_cell`]).
    pub dimension_status: String,
    /// Why cells are empty, one sentence each.
    pub notes: Vec<String>,
}

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

/// The largest dimension `n` points can resolve, 2·log10 n (Eckmann & Ruelle 1992).
pub fn resolvable_dimension(n: usize) -> f64 {
    2.0 * (n.max(1) as f64).log10()
}

/// The dimension cell of a record: `(value, status, reason when empty)`.
///
/// Status `insufficient`: fewer feature points than [`Support::dimension_points`];
/// otherwise the consensus d of the dimension suite ([`crate::dimension::consensus`]) with its
/// status, `resolved` or `unresolved` (the best d is still shown, with the reason in the notes).
/// No number is shown when there is no finite consensus or it lies above
/// [`resolvable_dimension`].
pub fn dimension_cell(a: &Analysis, s: &Support) -> (Option<f64>, String, Option<String>) {
    let n = a.features.points.n;
    if n < s.dimension_points {
        return (
            None,
            "insufficient".into(),
            Some(format!(
                "dimension: {n} beat feature points, fewer than the {} needed",
                s.dimension_points
            )),
        );
    }
    let Some(c) = a
        .dimension_suite
        .as_ref()
        .and_then(|suite| suite.consensus.as_ref())
    else {
        return (
            None,
            "unresolved".into(),
            Some("dimension: no consensus was computed".into()),
        );
    };
    let d = c.d;
    if !d.is_finite() {
        return (
            None,
            "unresolved".into(),
            Some(format!("dimension: no finite consensus ({})", c.reason)),
        );
    }
    let cap = resolvable_dimension(n);
    if d > cap {
        return (
            None,
            "unresolved".into(),
            Some(format!(
                "dimension: consensus {d:.2} is above {cap:.2} = 2·log10 {n}, the most {n} points can resolve"
            )),
        );
    }
    match c.status {
        crate::dimension::consensus::Status::Resolved => (Some(d), "resolved".into(), None),
        crate::dimension::consensus::Status::Unresolved => (
            Some(d),
            "unresolved".into(),
            Some(format!("dimension: consensus unresolved ({})", c.reason)),
        ),
    }
}

/// Gate every measure of `a` by its support.
pub fn cells(a: &Analysis, s: &Support) -> Cells {
    let mut c = Cells::default();
    let n_nn = a.variability.n_rr;
    if n_nn >= s.hr_intervals {
        c.mean_hr_bpm = finite(a.variability.mean_hr_bpm);
    } else {
        c.notes.push(format!(
            "heart rate: {n_nn} NN intervals, fewer than the {} needed",
            s.hr_intervals
        ));
    }
    if n_nn >= s.variability_intervals {
        c.sdnn_ms = finite(a.variability.sdnn_ms);
        c.rmssd_ms = finite(a.variability.rmssd_ms);
    } else {
        c.notes.push(format!(
            "variability: {n_nn} NN intervals, fewer than the {} needed",
            s.variability_intervals
        ));
    }
    let windows = a.recurrence.len();
    if windows >= s.recurrence_windows {
        c.det = finite(crate::stats::median(a.recurrence.iter().map(|w| w.rqa.det)));
    } else {
        c.notes.push(format!(
            "recurrence: {windows} windows, fewer than the {} needed",
            s.recurrence_windows
        ));
    }
    let (d, status, reason) = dimension_cell(a, s);
    c.dimension = d;
    c.dimension_status = status;
    c.notes.extend(reason);
    c
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn resolvable_dimension_follows_the_bound() {
        // Source: Eckmann & Ruelle (1992): N points resolve at most d = 2·log10 N.
        assert!((resolvable_dimension(100) - 4.0).abs() < 1e-12);
        assert!((resolvable_dimension(10_000) - 8.0).abs() < 1e-12);
        assert!(resolvable_dimension(40) < 3.3);
    }

    #[test]
    fn support_check_names_the_field() {
        assert!(Support::default().check().is_ok());
        let e = Support {
            dimension_points: 10,
            ..Support::default()
        }
        .check()
        .unwrap_err()
        .to_string();
        assert!(e.contains("dimension_points") && e.contains("30"), "{e}");
    }
}
