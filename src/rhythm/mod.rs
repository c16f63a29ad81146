//! Rhythm: time-domain variability of the RR series (Task Force of ESC/NASPE 1996), entropies
//! and Poincaré descriptors ([`entropy`]), a windowed irregular-rhythm research screen
//! ([`screen`]), recurrence quantification of a beat trajectory ([`recurrence`]) and
//! variability in sliding windows ([`windowed`]).
//!
//! In: RR intervals in seconds (and, for recurrence, one point per beat). Out: [`Variability`],
//! [`screen::Screen`], [`recurrence::RqaWindow`]s.

pub mod atrial;
pub mod drr;
pub mod entropy;
pub mod fwave;
pub mod label_score;
pub mod qrs_match;
pub mod recurrence;
pub mod score_fit;
pub mod screen;
pub mod sqi;
pub mod verdict;
pub mod windowed;

use serde::{Deserialize, Serialize};

/// Time-domain variability of an RR series.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Variability {
    /// Number of RR intervals used.
    pub n_rr: usize,
    /// Mean heart rate, beats per minute (60 / mean RR).
    pub mean_hr_bpm: f64,
    /// Mean RR, milliseconds.
    pub mean_rr_ms: f64,
    /// Standard deviation of RR (ddof 1), milliseconds.
    pub sdnn_ms: f64,
    /// Root mean square of successive differences, milliseconds.
    pub rmssd_ms: f64,
    /// Fraction of successive differences strictly greater than 50 ms.
    pub pnn50: f64,
}

/// Keep the RR intervals whose two bounding beats are both labelled normal (`N`): the usual NN
/// series of the Task Force (1996), which excludes intervals next to ectopic or unknown beats.
/// `labels` has one entry per beat, so `labels.len() == rr_s.len() + 1`; when it has any other
/// length, every interval is kept.
pub fn nn_intervals(rr_s: &[f64], labels: &[char]) -> Vec<f64> {
    if labels.len() != rr_s.len() + 1 {
        return rr_s.to_vec();
    }
    rr_s.iter()
        .enumerate()
        .filter(|&(i, _)| labels[i] == 'N' && labels[i + 1] == 'N')
        .map(|(_, &r)| r)
        .collect()
}

/// Time-domain variability of an RR (ideally NN) series in seconds, after the Task Force of the
/// European Society of Cardiology and the North American Society of Pacing and Electrophysiology
/// (1996), Circulation 93:1043: SDNN with n − 1 in the denominator, RMSSD = √mean(ΔRR²), pNN50 =
/// share of |ΔRR| strictly greater than 50 ms. Non-finite or non-positive intervals are skipped.
/// With fewer than two intervals every spread measure is NaN.
pub fn variability(rr_s: &[f64]) -> Variability {
    let rr: Vec<f64> = rr_s
        .iter()
        .copied()
        .filter(|r| r.is_finite() && *r > 0.0)
        .collect();
    let n = rr.len();
    if n == 0 {
        return Variability {
            n_rr: 0,
            mean_hr_bpm: f64::NAN,
            mean_rr_ms: f64::NAN,
            sdnn_ms: f64::NAN,
            rmssd_ms: f64::NAN,
            pnn50: f64::NAN,
        };
    }
    let mean = rr.iter().sum::<f64>() / n as f64;
    let (sdnn, rmssd, pnn50) = if n >= 2 {
        let var = rr.iter().map(|r| (r - mean).powi(2)).sum::<f64>() / (n - 1) as f64;
        let diffs: Vec<f64> = rr.windows(2).map(|w| w[1] - w[0]).collect();
        let msd = diffs.iter().map(|d| d * d).sum::<f64>() / diffs.len() as f64;
        let nn50 = diffs.iter().filter(|d| d.abs() > 0.050).count();
        (
            var.sqrt() * 1000.0,
            msd.sqrt() * 1000.0,
            nn50 as f64 / diffs.len() as f64,
        )
    } else {
        (f64::NAN, f64::NAN, f64::NAN)
    };
    Variability {
        n_rr: n,
        mean_hr_bpm: 60.0 / mean,
        mean_rr_ms: mean * 1000.0,
        sdnn_ms: sdnn,
        rmssd_ms: rmssd,
        pnn50,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hand_computed_short_series() {
        // RR = 800, 810, 790, 820, 800, 830, 780, 805 ms. Exact arithmetic, worked by hand:
        // sum 6435 → mean 804.375; squared deviations sum 1771.875 → SDNN = √(1771.875/7)
        // = 15.90990; successive differences 10, −20, 30, −20, 30, −50, 25 → squares sum 5825 →
        // RMSSD = √(5825/7) = 28.84688; no |Δ| strictly above 50 ms → pNN50 = 0
        // (Task Force 1996 definitions; the 50 ms difference is not counted).
        let rr: Vec<f64> = [800.0, 810.0, 790.0, 820.0, 800.0, 830.0, 780.0, 805.0]
            .iter()
            .map(|v| v / 1000.0)
            .collect();
        let v = variability(&rr);
        assert_eq!(v.n_rr, 8);
        assert!((v.mean_rr_ms - 804.375).abs() < 1e-9);
        assert!((v.sdnn_ms - (1771.875f64 / 7.0).sqrt()).abs() < 1e-9);
        assert!((v.rmssd_ms - (5825.0f64 / 7.0).sqrt()).abs() < 1e-9);
        assert_eq!(v.pnn50, 0.0);
        assert!((v.mean_hr_bpm - 60_000.0 / 804.375).abs() < 1e-9);
    }

    #[test]
    fn constant_series_has_no_variability() {
        // Source: Task Force (1996) definitions; a constant series has zero spread.
        let v = variability(&[0.75; 50]);
        assert_eq!(v.rmssd_ms, 0.0);
        assert_eq!(v.sdnn_ms, 0.0);
        assert_eq!(v.pnn50, 0.0);
        assert!((v.mean_hr_bpm - 80.0).abs() < 1e-12);
    }

    #[test]
    fn pnn50_counts_strictly_greater_differences() {
        // Differences: 60 ms (counted), 50 ms (not counted: strictly greater, Task Force 1996).
        let v = variability(&[0.800, 0.860, 0.810]);
        assert!((v.pnn50 - 0.5).abs() < 1e-12);
        assert!(variability(&[0.8]).sdnn_ms.is_nan());
        assert_eq!(variability(&[]).n_rr, 0);
    }

    #[test]
    fn nn_series_drops_intervals_next_to_ectopic_beats() {
        let rr = [1.0, 0.6, 1.4, 1.0];
        let labels = ['N', 'N', 'V', 'N', 'N'];
        assert_eq!(nn_intervals(&rr, &labels), vec![1.0, 1.0]);
        assert_eq!(nn_intervals(&rr, &['N']), rr.to_vec());
    }
}
