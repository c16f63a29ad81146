//! Which stretches of a record the quality index marks unreadable: where two independent
//! detectors disagree on the beats, or where the lead's quality flags say the signal is flat,
//! clipped, off, non-finite or drowned in high-frequency noise.
//!
//! In: the beats of the primary and of the second detector, the lead's quality segments
//! ([`crate::signal::quality`]), the rate and length, and checked [`ReadableParams`]. Out: merged
//! unreadable intervals `(start_s, end_s)`, sorted and disjoint.
//!
//! The detector-agreement part is the beat-matching signal-quality index bSQI of Li, Mark &
//! Clifford (2008): in each window of `window_s` seconds, matched / (|a| + |b| − matched) for the
//! beats of two detectors that work on different principles; a window is unreadable when its
//! bSQI is below `bsqi_min`. Noise produces beats that only one detector sees, so agreement falls
//! where detections are least trustworthy.
//!
//! On records with more than one lead the same index is also taken across leads (our use of the
//! bSQI of Li, Mark & Clifford 2008): the primary detector's beats on each other lead against
//! those on the analysed lead, window by window. Noise rarely strikes two leads in the same
//! way, so a window where the leads disagree is marked too. A lead that agrees with the analysed
//! one on less than half of the record as a whole is not used (it is off, or sees other beats).

use crate::beats::agreement_windows;
use crate::error::{Error, Result};
use crate::signal::QualitySegment;
use serde::{Deserialize, Serialize};

/// Parameters of the unreadable marking.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct ReadableParams {
    /// A window whose detector agreement (bSQI) is below this is unreadable (0 turns it off).
    pub bsqi_min: f64,
    /// Window length of the agreement, seconds.
    pub window_s: f64,
    /// Matching window of the two detectors' beats, seconds.
    pub match_window_s: f64,
    /// Also mark segments whose quality flags (flat, clipped, lead off, non-finite, noisy) are set.
    pub use_quality_flags: bool,
    /// Also compare the primary detector's beats across leads (records with several leads).
    pub cross_lead: bool,
}

impl Default for ReadableParams {
    fn default() -> Self {
        ReadableParams {
            bsqi_min: 0.8,
            window_s: 10.0,
            match_window_s: 0.150,
            use_quality_flags: true,
            cross_lead: true,
        }
    }
}

impl ReadableParams {
    /// Check the ranges: `bsqi_min` in [0, 1], `window_s` in [1, 600] s, `match_window_s` in
    /// (0, 1] s.
    pub fn check(&self) -> Result<()> {
        if !(0.0..=1.0).contains(&self.bsqi_min) {
            return Err(Error::param(
                "bsqi_min",
                format!("{}: must be in [0, 1]", self.bsqi_min),
            ));
        }
        if !(self.window_s.is_finite() && (1.0..=600.0).contains(&self.window_s)) {
            return Err(Error::param(
                "window_s",
                format!("{} s: must be in [1, 600] s", self.window_s),
            ));
        }
        if !(self.match_window_s.is_finite()
            && self.match_window_s > 0.0
            && self.match_window_s <= 1.0)
        {
            return Err(Error::param(
                "match_window_s",
                format!("{} s: must be in (0, 1] s", self.match_window_s),
            ));
        }
        Ok(())
    }
}

/// Unreadable intervals (seconds, sorted, merged) of a record of `n_samples` at `fs_hz`:
/// `primary` and `second` are the two detectors' beats on the analysed lead, `other_leads` the
/// primary detector's beats on the record's other leads (used when `p.cross_lead`).
pub fn unreadable_intervals(
    primary: &[usize],
    second: &[usize],
    other_leads: &[Vec<usize>],
    quality: &[QualitySegment],
    fs_hz: f64,
    n_samples: usize,
    p: &ReadableParams,
) -> Vec<(f64, f64)> {
    let end_s = n_samples as f64 / fs_hz;
    let mut marked: Vec<(f64, f64)> = Vec::new();
    if p.bsqi_min > 0.0 {
        for (start, a) in agreement_windows(
            primary,
            second,
            fs_hz,
            p.match_window_s,
            p.window_s,
            n_samples,
        ) {
            if a < p.bsqi_min {
                marked.push((start, (start + p.window_s).min(end_s)));
            }
        }
    }
    if p.bsqi_min > 0.0 && p.cross_lead {
        for other in other_leads {
            // A lead that mostly sees other beats (off, or another view) says nothing here.
            if crate::beats::agreement(primary, other, fs_hz, p.match_window_s) < 0.5 {
                continue;
            }
            for (start, a) in agreement_windows(
                primary,
                other,
                fs_hz,
                p.match_window_s,
                p.window_s,
                n_samples,
            ) {
                if a < p.bsqi_min {
                    marked.push((start, (start + p.window_s).min(end_s)));
                }
            }
        }
    }
    if p.use_quality_flags {
        for q in quality {
            if q.flat || q.clipped || q.lead_off || q.non_finite || q.noisy {
                marked.push((q.start_s, q.end_s));
            }
        }
    }
    merge(marked)
}

/// Sort and merge overlapping or touching intervals.
pub fn merge(mut v: Vec<(f64, f64)>) -> Vec<(f64, f64)> {
    v.retain(|(a, b)| a.is_finite() && b.is_finite() && b > a);
    v.sort_by(|x, y| x.0.total_cmp(&y.0));
    let mut out: Vec<(f64, f64)> = Vec::with_capacity(v.len());
    for (a, b) in v {
        match out.last_mut() {
            Some(last) if a <= last.1 => last.1 = last.1.max(b),
            _ => out.push((a, b)),
        }
    }
    out
}

/// True when `t_s` lies in one of the sorted, disjoint `intervals` (half-open).
pub fn inside(intervals: &[(f64, f64)], t_s: f64) -> bool {
    let k = intervals.partition_point(|&(a, _)| a <= t_s);
    k > 0 && t_s < intervals[k - 1].1
}

/// Seconds of `[from_s, to_s)` covered by the sorted, disjoint `intervals`.
pub fn covered_s(intervals: &[(f64, f64)], from_s: f64, to_s: f64) -> f64 {
    intervals
        .iter()
        .map(|&(a, b)| (b.min(to_s) - a.max(from_s)).max(0.0))
        .sum()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn disagreement_marks_its_window_only() {
        let fs = 100.0;
        // 30 s, a beat a second; in the second 10 s window the second detector sees 10 extra
        // beats: bSQI = 10 / (10 + 20 − 10) = 0.5 < 0.8 (Li, Mark & Clifford 2008 definition).
        let a: Vec<usize> = (0..30).map(|k| k * 100 + 50).collect();
        let mut b = a.clone();
        b.extend((10..20).map(|k| k * 100));
        b.sort_unstable();
        let p = ReadableParams {
            use_quality_flags: false,
            ..ReadableParams::default()
        };
        let u = unreadable_intervals(&a, &b, &[], &[], fs, 3000, &p);
        assert_eq!(u, vec![(10.0, 20.0)]);
        assert!(inside(&u, 10.0) && inside(&u, 19.99) && !inside(&u, 20.0) && !inside(&u, 9.9));
        assert!((covered_s(&u, 15.0, 40.0) - 5.0).abs() < 1e-12);
        // Agreement everywhere: nothing marked.
        assert!(unreadable_intervals(&a, &a, &[], &[], fs, 3000, &p).is_empty());
    }

    #[test]
    fn a_second_lead_that_disagrees_marks_its_window() {
        let fs = 100.0;
        // Both detectors agree on the analysed lead; the other lead sees the same 30 beats
        // except in 20–30 s, where it has 10 extra: cross-lead bSQI 0.5 there (Li, Mark &
        // Clifford 2008 definition), 1 elsewhere; overall 30 / 40 ≥ 0.5, so the lead is used.
        let a: Vec<usize> = (0..30).map(|k| k * 100 + 50).collect();
        let mut o = a.clone();
        o.extend((20..30).map(|k| k * 100));
        o.sort_unstable();
        let p = ReadableParams {
            use_quality_flags: false,
            ..ReadableParams::default()
        };
        let u = unreadable_intervals(&a, &a, &[o.clone()], &[], fs, 3000, &p);
        assert_eq!(u, vec![(20.0, 30.0)]);
        let off = ReadableParams {
            cross_lead: false,
            ..p.clone()
        };
        assert!(unreadable_intervals(&a, &a, &[o], &[], fs, 3000, &off).is_empty());
        // A lead with no beats at all (off) is not used.
        assert!(unreadable_intervals(&a, &a, &[vec![]], &[], fs, 3000, &p).is_empty());
    }

    #[test]
    fn quality_flags_and_merging() {
        let q = vec![
            QualitySegment {
                start_s: 0.0,
                end_s: 10.0,
                flat: true,
                ..Default::default()
            },
            QualitySegment {
                start_s: 10.0,
                end_s: 20.0,
                gain_change: true,
                ..Default::default()
            },
        ];
        let u = unreadable_intervals(&[], &[], &[], &q, 100.0, 2000, &ReadableParams::default());
        // Flat counts; a gain change alone does not.
        assert_eq!(u, vec![(0.0, 10.0)]);
        assert_eq!(
            merge(vec![(5.0, 7.0), (0.0, 5.0), (8.0, 9.0)]),
            vec![(0.0, 7.0), (8.0, 9.0)]
        );
        assert!(ReadableParams {
            bsqi_min: 1.5,
            ..Default::default()
        }
        .check()
        .is_err());
    }
}
