//! Recurrence quantification analysis (Marwan, Romano, Thiel & Kurths 2007, Phys Rep 438:237).
//!
//! In: a trajectory (one point per beat, e.g. diffusion coordinates, or a delay embedding of the
//! RR series). Out: recurrence rate, determinism (DET), mean and longest diagonal line (L, Lmax),
//! the Shannon entropy of diagonal line lengths (ENTR), laminarity (LAM) and trapping time (TT),
//! for the whole trajectory or in sliding windows so memory stays O(window²).
//!
//! Conventions: R_ij = 1 when ‖x_i − x_j‖ ≤ ε; pairs with |i − j| < w (Theiler window) are
//! excluded (w = 0 keeps the line of identity, w = 1 removes only it); recurrence rate is the
//! share of recurrent pairs among the pairs kept; lines shorter than l_min (diagonal) or v_min
//! (vertical) do not count as lines.

use crate::error::{Error, Result};
use crate::params::Checked;
use crate::points::Points;
use serde::{Deserialize, Serialize};

/// How the recurrence threshold ε is chosen.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Threshold {
    /// A fixed distance ε.
    Distance(f64),
    /// ε chosen per window so that this share of the kept pairs recur (0 < rate < 1).
    RecurrenceRate(f64),
}

/// Parameters of recurrence quantification.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct RqaParams {
    /// Threshold rule (default: fixed recurrence rate 0.1).
    pub threshold: Threshold,
    /// Theiler window w in samples (default 1: the line of identity removed).
    pub theiler: usize,
    /// Shortest diagonal line (default 2).
    pub l_min: usize,
    /// Shortest vertical line (default 2).
    pub v_min: usize,
    /// Window length in points for the timeline (default 256).
    pub window: usize,
    /// Step between windows in points (default 64).
    pub step: usize,
}

impl Default for RqaParams {
    fn default() -> Self {
        RqaParams {
            threshold: Threshold::RecurrenceRate(0.1),
            theiler: 1,
            l_min: 2,
            v_min: 2,
            window: 256,
            step: 64,
        }
    }
}

impl RqaParams {
    /// Validate.
    pub fn check(&self) -> Result<()> {
        match self.threshold {
            Threshold::Distance(e) if !(e.is_finite() && e > 0.0) => {
                return Err(Error::param(
                    "recurrence.threshold.distance",
                    format!("{e}; must be > 0"),
                ))
            }
            Threshold::RecurrenceRate(r) if !(r > 0.0 && r < 1.0) => {
                return Err(Error::param(
                    "recurrence.threshold.recurrence_rate",
                    format!("{r}; allowed 0 < rate < 1"),
                ))
            }
            _ => {}
        }
        if self.l_min < 2 || self.v_min < 2 {
            return Err(Error::param(
                "recurrence.l_min / recurrence.v_min",
                "must be at least 2",
            ));
        }
        if self.window < 8 || self.step == 0 {
            return Err(Error::param(
                "recurrence.window / recurrence.step",
                format!(
                    "window {} (≥ 8) and step {} (≥ 1) points",
                    self.window, self.step
                ),
            ));
        }
        Ok(())
    }
}

/// Recurrence measures of one matrix.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Rqa {
    /// Recurrence rate among the kept pairs.
    pub rr: f64,
    /// Determinism: share of recurrent points on diagonal lines of length ≥ l_min.
    pub det: f64,
    /// Mean diagonal line length (lines ≥ l_min).
    pub l: f64,
    /// Longest diagonal line.
    pub lmax: usize,
    /// Shannon entropy (natural log) of the diagonal line-length distribution (lines ≥ l_min).
    pub entr: f64,
    /// Laminarity: share of recurrent points on vertical lines of length ≥ v_min.
    pub lam: f64,
    /// Trapping time: mean vertical line length (lines ≥ v_min).
    pub tt: f64,
    /// Threshold ε used.
    pub epsilon: f64,
}

/// Measures from a square boolean recurrence matrix given as a predicate `r(i, j)`; pairs with
/// |i − j| < `theiler` are treated as non-recurrent and are not counted in the rate.
pub fn rqa_from(
    n: usize,
    r: impl Fn(usize, usize) -> bool,
    theiler: usize,
    l_min: usize,
    v_min: usize,
    epsilon: f64,
) -> Rqa {
    let kept = |i: usize, j: usize| i.abs_diff(j) >= theiler;
    let mut total = 0usize;
    let mut pairs = 0usize;
    // Diagonal lines: histogram of lengths.
    let mut diag = vec![0usize; n + 1];
    for k in -(n as isize - 1)..=(n as isize - 1) {
        let mut run = 0usize;
        let len = n - k.unsigned_abs();
        for t in 0..len {
            let (i, j) = if k >= 0 {
                (t, t + k as usize)
            } else {
                (t + (-k) as usize, t)
            };
            let on = kept(i, j) && r(i, j);
            if kept(i, j) {
                pairs += 1;
            }
            if on {
                total += 1;
                run += 1;
            } else if run > 0 {
                diag[run] += 1;
                run = 0;
            }
        }
        if run > 0 {
            diag[run] += 1;
        }
    }
    let mut vert = vec![0usize; n + 1];
    for j in 0..n {
        let mut run = 0usize;
        for i in 0..n {
            if kept(i, j) && r(i, j) {
                run += 1;
            } else if run > 0 {
                vert[run] += 1;
                run = 0;
            }
        }
        if run > 0 {
            vert[run] += 1;
        }
    }
    let line_stats = |h: &[usize], lmin: usize| -> (f64, f64, usize, f64) {
        let pts: usize = h.iter().enumerate().skip(lmin).map(|(l, &c)| l * c).sum();
        let lines: usize = h.iter().skip(lmin).sum();
        let longest = h
            .iter()
            .enumerate()
            .rev()
            .find(|&(_, &c)| c > 0)
            .map_or(0, |(l, _)| l);
        let entr: f64 = if lines > 0 {
            h.iter()
                .skip(lmin)
                .filter(|&&c| c > 0)
                .map(|&c| {
                    let p = c as f64 / lines as f64;
                    -p * p.ln()
                })
                .sum()
        } else {
            0.0
        };
        let share = if total > 0 {
            pts as f64 / total as f64
        } else {
            f64::NAN
        };
        let mean = if lines > 0 {
            pts as f64 / lines as f64
        } else {
            f64::NAN
        };
        (share, mean, longest, entr)
    };
    let (det, l, lmax, entr) = line_stats(&diag, l_min);
    let (lam, tt, _, _) = line_stats(&vert, v_min);
    Rqa {
        rr: if pairs > 0 {
            total as f64 / pairs as f64
        } else {
            f64::NAN
        },
        det,
        l,
        lmax,
        entr,
        lam,
        tt,
        epsilon,
    }
}

fn dist(p: &Points, i: usize, j: usize) -> f64 {
    Points::dist2(p.row(i), p.row(j)).sqrt()
}

/// Threshold ε of points `start..end` under `params.threshold`, and their recurrence matrix
/// (row-major, n × n with n = `end − start`, symmetric, line of identity included).
fn window_matrix(p: &Points, start: usize, end: usize, params: &RqaParams) -> (Vec<bool>, f64) {
    let n = end.saturating_sub(start);
    let w = params.theiler;
    let eps = match params.threshold {
        Threshold::Distance(e) => e,
        Threshold::RecurrenceRate(rate) => {
            let mut d: Vec<f64> = Vec::with_capacity(n * n / 2);
            for i in 0..n {
                for j in (i + w.max(1))..n {
                    d.push(dist(p, start + i, start + j));
                }
            }
            if d.is_empty() {
                0.0
            } else {
                let k = ((rate * d.len() as f64).ceil() as usize).clamp(1, d.len()) - 1;
                let (_, v, _) = d.select_nth_unstable_by(k, f64::total_cmp);
                *v
            }
        }
    };
    let mut m = vec![false; n * n];
    for i in 0..n {
        for j in i..n {
            let on = dist(p, start + i, start + j) <= eps;
            m[i * n + j] = on;
            m[j * n + i] = on;
        }
    }
    (m, eps)
}

/// Recurrence measures of points `start..end` of a trajectory.
pub fn rqa_window(p: &Points, start: usize, end: usize, params: &RqaParams) -> Rqa {
    let n = end.saturating_sub(start);
    let (m, eps) = window_matrix(p, start, end, params);
    rqa_from(
        n,
        |i, j| m[i * n + j],
        params.theiler,
        params.l_min,
        params.v_min,
        eps,
    )
}

/// The recurrence matrix R_ij = [‖x_i − x_j‖ ≤ ε] of points `start..end` (Marwan et al. 2007),
/// row-major n × n with n = `end − start`, and the ε used, chosen by the same rule as
/// [`rqa_window`] (the Theiler window only affects how a recurrence-rate threshold is chosen; the
/// matrix itself is complete). Memory O(n²): meant for display windows of a few hundred points.
/// Errors when the window is empty or reaches past the last point.
pub fn recurrence_matrix(
    p: &Points,
    start: usize,
    end: usize,
    params: &Checked<RqaParams>,
) -> Result<(Vec<bool>, f64)> {
    if start >= end || end > p.n {
        return Err(Error::param(
            "recurrence window",
            format!(
                "points {start}..{end}; must be a non-empty range within 0..{}",
                p.n
            ),
        ));
    }
    Ok(window_matrix(p, start, end, params))
}

/// One window of a recurrence timeline.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct RqaWindow {
    /// First point (beat) index of the window.
    pub start: usize,
    /// One past the last point index.
    pub end: usize,
    /// Measures.
    pub rqa: Rqa,
}

/// Recurrence measures in sliding windows of `params.window` points, stepping `params.step`
/// (memory O(window²), windows processed in parallel). A trajectory shorter than one window
/// gives a single window over all points.
pub fn rqa_timeline(p: &Points, params: &Checked<RqaParams>) -> Result<Vec<RqaWindow>> {
    use rayon::prelude::*;
    if p.n < 8 {
        return Err(Error::Analysis(format!(
            "{} points are too few for recurrence quantification (at least 8)",
            p.n
        )));
    }
    let win = params.window.min(p.n);
    let starts: Vec<usize> = (0..=(p.n - win)).step_by(params.step).collect();
    Ok(starts
        .par_iter()
        .map(|&s| RqaWindow {
            start: s,
            end: s + win,
            rqa: rqa_window(p, s, s + win, params),
        })
        .collect())
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};

    fn tridiagonal(i: usize, j: usize) -> bool {
        i.abs_diff(j) <= 1
    }

    #[test]
    fn hand_made_tridiagonal_matrix() {
        // Source: docs/references.md §7 [C], counted by hand under Marwan et al. (2007): the 5 × 5
        // tridiagonal plot with the identity line kept has RR 13/25 = 0.52, DET 1, diagonal
        // lines 5, 4, 4 (L = 13/3, Lmax 5, ENTR = −(⅔ ln ⅔ + ⅓ ln ⅓) = 0.6365), and vertical
        // lines 2, 3, 3, 3, 2 (LAM 1, TT 2.6).
        let q = rqa_from(5, tridiagonal, 0, 2, 2, 1.0);
        assert!((q.rr - 0.52).abs() < 1e-12);
        assert_eq!(q.det, 1.0);
        assert!((q.l - 13.0 / 3.0).abs() < 1e-12);
        assert_eq!(q.lmax, 5);
        let entr = -((2.0f64 / 3.0) * (2.0f64 / 3.0).ln() + (1.0f64 / 3.0) * (1.0f64 / 3.0).ln());
        assert!((q.entr - entr).abs() < 1e-12);
        assert_eq!(q.lam, 1.0);
        assert!((q.tt - 2.6).abs() < 1e-12);
        // Identity line excluded (Theiler window 1): only the two lines of length 4 remain,
        // and no vertical line is 2 long.
        let q = rqa_from(5, tridiagonal, 1, 2, 2, 1.0);
        assert_eq!(q.l, 4.0);
        assert_eq!(q.lmax, 4);
        assert_eq!(q.entr, 0.0);
        assert_eq!(q.lam, 0.0);
        assert!((q.rr - 8.0 / 20.0).abs() < 1e-12);
    }

    #[test]
    fn sine_is_deterministic() {
        // Source: Marwan et al. (2007): a periodic trajectory recurs along diagonals, DET ≈ 1.
        let pts: Vec<Vec<f64>> = (0..300)
            .map(|i| {
                let t = i as f64 * 0.21;
                vec![t.sin(), (t + 0.7).sin()]
            })
            .collect();
        let p = Points::from_rows(&pts).unwrap();
        let q = rqa_window(&p, 0, 300, &RqaParams::default());
        assert!(q.det > 0.95, "DET {}", q.det);
        assert!(
            (q.rr - 0.1).abs() < 0.01,
            "fixed recurrence rate honoured: {}",
            q.rr
        );
    }

    #[test]
    fn uniform_noise_has_chance_determinism() {
        // Source: docs/references.md §7 [C]: for i.i.d. uniform values on [0,1] (m = 1) with
        // threshold ε, a pair recurs with p = 2ε − ε², and a recurrent point lies on a line of
        // length ≥ 2 when a diagonal neighbour recurs: DET ≈ 1 − (1 − p)² = 0.1855 for ε = 0.05.
        // N = 600: about 17 000 recurrent pairs, so the SD of DET is about 0.005; allow ±0.03.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(3);
        let pts: Vec<Vec<f64>> = (0..600).map(|_| vec![rng.gen::<f64>()]).collect();
        let p = Points::from_rows(&pts).unwrap();
        let params = RqaParams {
            threshold: Threshold::Distance(0.05),
            ..RqaParams::default()
        };
        let q = rqa_window(&p, 0, 600, &params);
        assert!((q.det - 0.1855).abs() < 0.03, "DET {}", q.det);
        assert!((q.lam - 0.1855).abs() < 0.03, "LAM {}", q.lam);
    }

    #[test]
    fn timeline_windows_cover_the_trajectory() {
        let pts: Vec<Vec<f64>> = (0..1000)
            .map(|i| vec![(i as f64 * 0.3).sin(), (i as f64 * 0.3).cos()])
            .collect();
        let p = Points::from_rows(&pts).unwrap();
        let t = rqa_timeline(&p, &crate::params::Checked::default()).unwrap();
        assert_eq!(t.len(), (1000 - 256) / 64 + 1);
        assert_eq!(t[1].start, 64);
        assert!(t.iter().all(|w| w.rqa.det > 0.9));
        assert!(rqa_timeline(
            &Points::from_rows(&[vec![0.0]]).unwrap(),
            &crate::params::Checked::default()
        )
        .is_err());
    }
}
