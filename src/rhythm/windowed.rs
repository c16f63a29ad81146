//! Time-domain variability in sliding windows: the measures of [`super::variability`] (Task Force
//! of ESC/NASPE 1996) and the coefficient of variation, window by window, so a long recording
//! becomes a timeline.
//!
//! In: RR intervals in seconds, the time each interval ends, beat labels (one per beat, for the
//! NN rule of [`super::nn_intervals`]), a window length and a step, each in beats or in seconds.
//! Out: one [`VariabilityWindow`] per window. Windows in beats count RR intervals of the whole
//! series (NN selection happens inside each window); windows in seconds hold the intervals that
//! end in `(start, start + length]`. Memory O(number of windows).

use super::{variability, Variability};
use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};

/// A window length or step.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Span {
    /// A number of RR intervals.
    Beats(usize),
    /// Seconds.
    Seconds(f64),
}

impl Span {
    /// Half of this span (at least one beat): the default step between windows.
    pub fn half(self) -> Span {
        match self {
            Span::Beats(n) => Span::Beats((n / 2).max(1)),
            Span::Seconds(s) => Span::Seconds(0.5 * s),
        }
    }

    /// Parse `300s`, `5m` (minutes) or `128b` (beats); a bare number is seconds.
    pub fn parse(s: &str) -> Result<Span> {
        let t = s.trim();
        let bad = || {
            Error::param(
                "window",
                format!("`{s}`: expected e.g. `300s`, `5m` or `128b` (beats)"),
            )
        };
        let (num, unit) = match t.char_indices().last() {
            Some((i, c)) if c.is_ascii_alphabetic() => (&t[..i], c),
            _ => (t, 's'),
        };
        match unit {
            'b' => {
                let n: usize = num.parse().map_err(|_| bad())?;
                if n < 2 {
                    return Err(Error::param("window", format!("`{s}`: at least 2 beats")));
                }
                Ok(Span::Beats(n))
            }
            's' | 'm' => {
                let v: f64 = num.parse().map_err(|_| bad())?;
                let v = if unit == 'm' { 60.0 * v } else { v };
                if !(v.is_finite() && v > 0.0) {
                    return Err(Error::param("window", format!("`{s}`: must be positive")));
                }
                Ok(Span::Seconds(v))
            }
            _ => Err(bad()),
        }
    }
}

/// Variability of one window.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct VariabilityWindow {
    /// Window start, seconds.
    pub start_s: f64,
    /// Window end, seconds.
    pub end_s: f64,
    /// RR intervals in the window (before the NN selection).
    pub n_intervals: usize,
    /// Variability of the window's NN intervals.
    pub variability: Variability,
    /// Coefficient of variation SDNN / mean NN (dimensionless); NaN when undefined.
    pub cv: f64,
}

fn summarise(rr: &[f64], labels: Option<&[char]>, start_s: f64, end_s: f64) -> VariabilityWindow {
    let nn: Vec<f64> = match labels {
        Some(l) => super::nn_intervals(rr, l),
        None => rr.to_vec(),
    };
    let v = variability(&nn);
    VariabilityWindow {
        start_s,
        end_s,
        n_intervals: rr.len(),
        variability: v,
        cv: v.sdnn_ms / v.mean_rr_ms,
    }
}

/// Variability in windows of `length`, advanced by `step` (both beats or both seconds).
/// `labels` may be empty (every interval counts as NN) or hold one label per beat
/// (`rr_s.len() + 1`).
pub fn windowed_variability(
    rr_s: &[f64],
    t_end_s: &[f64],
    labels: &[char],
    length: Span,
    step: Span,
) -> Result<Vec<VariabilityWindow>> {
    if rr_s.len() != t_end_s.len() {
        return Err(Error::Analysis(
            "RR intervals and their times differ in length".into(),
        ));
    }
    let use_labels = labels.len() == rr_s.len() + 1;
    let n = rr_s.len();
    let mut out = Vec::new();
    match (length, step) {
        (Span::Beats(len), Span::Beats(st)) => {
            if len < 2 || st == 0 {
                return Err(Error::param("window", "at least 2 beats, step at least 1"));
            }
            let mut s = 0;
            while s + len <= n {
                let e = s + len;
                let l = use_labels.then(|| &labels[s..=e]);
                out.push(summarise(
                    &rr_s[s..e],
                    l,
                    t_end_s[s] - rr_s[s],
                    t_end_s[e - 1],
                ));
                s += st;
            }
        }
        (Span::Seconds(len), Span::Seconds(st)) => {
            if !(len > 0.0 && st > 0.0 && len.is_finite() && st.is_finite()) {
                return Err(Error::param(
                    "window",
                    "length and step must be positive seconds",
                ));
            }
            let (Some(&first_end), Some(&last)) = (t_end_s.first(), t_end_s.last()) else {
                return Ok(out);
            };
            let t0 = first_end - rr_s[0];
            let mut k = 0usize;
            let mut lo = 0usize;
            loop {
                let ws = t0 + k as f64 * st;
                let we = ws + len;
                if we > last + 1e-9 {
                    break;
                }
                // Intervals ending in (ws, we], with 1 ns of slack for rounding.
                while lo < n && t_end_s[lo] <= ws + 1e-9 {
                    lo += 1;
                }
                let mut hi = lo;
                while hi < n && t_end_s[hi] <= we + 1e-9 {
                    hi += 1;
                }
                let l = use_labels.then(|| &labels[lo..=hi.max(lo)]);
                let l = l.filter(|l| l.len() == hi - lo + 1);
                out.push(summarise(&rr_s[lo..hi], l, ws, we));
                k += 1;
            }
        }
        _ => {
            return Err(Error::param(
                "window / step",
                "give both in beats or both in seconds",
            ))
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn constant_rhythm_has_no_variability_in_any_window() {
        // Task Force (1996) definitions: a constant RR series has SDNN = RMSSD = 0, pNN50 = 0.
        let rr = vec![0.8; 500];
        let t: Vec<f64> = (1..=500).map(|i| 0.8 * i as f64).collect();
        let w = windowed_variability(&rr, &t, &[], Span::Beats(100), Span::Beats(50)).unwrap();
        assert_eq!(w.len(), 9); // starts 0, 50, …, 400
        for x in &w {
            assert_eq!(x.n_intervals, 100);
            assert!(x.variability.rmssd_ms.abs() < 1e-9 && x.variability.pnn50 == 0.0);
            assert!((x.variability.mean_hr_bpm - 75.0).abs() < 1e-9);
            assert!(x.cv.abs() < 1e-12);
        }
        // 60 s windows every 30 s over 400 s: ⌊(400 − 60)/30⌋ + 1 = 12 windows of 75 intervals.
        let s =
            windowed_variability(&rr, &t, &[], Span::Seconds(60.0), Span::Seconds(30.0)).unwrap();
        assert_eq!(s.len(), 12);
        assert!(s.iter().all(|x| x.n_intervals == 75), "{:?}", s[0]);
    }

    #[test]
    fn windows_follow_a_rate_change_and_drop_ectopic_intervals() {
        // 200 intervals at 1.0 s then 200 at 0.5 s; a V beat in the first half.
        let mut rr = vec![1.0; 200];
        rr.extend(vec![0.5; 200]);
        let mut t = Vec::new();
        let mut acc = 0.0;
        for r in &rr {
            acc += r;
            t.push(acc);
        }
        let mut labels = vec!['N'; 401];
        labels[50] = 'V';
        let w = windowed_variability(&rr, &t, &labels, Span::Beats(100), Span::Beats(100)).unwrap();
        assert_eq!(w.len(), 4);
        assert!((w[0].variability.mean_hr_bpm - 60.0).abs() < 1e-9);
        assert!((w[3].variability.mean_hr_bpm - 120.0).abs() < 1e-9);
        // The two intervals next to the V beat are set aside (Task Force NN rule).
        assert_eq!(w[0].variability.n_rr, 98);
        assert_eq!(w[1].variability.n_rr, 100);
        assert!(
            windowed_variability(&rr, &t, &labels, Span::Beats(10), Span::Seconds(5.0)).is_err()
        );
    }

    #[test]
    fn spans_parse() {
        assert_eq!(Span::parse("300s").unwrap(), Span::Seconds(300.0));
        assert_eq!(Span::parse("5m").unwrap(), Span::Seconds(300.0));
        assert_eq!(Span::parse("128b").unwrap(), Span::Beats(128));
        assert_eq!(Span::parse("90").unwrap(), Span::Seconds(90.0));
        assert!(Span::parse("1b").is_err());
        assert!(Span::parse("-3s").is_err());
        assert!(Span::parse("abc").is_err());
    }
}
