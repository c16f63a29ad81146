//! Integer-factor decimation for detectors designed around a few hundred hertz.
//!
//! In: samples at `fs_hz`. Out: samples at `fs_hz / q` after a zero-phase anti-alias low-pass
//! (4th-order Butterworth at 40 % of the new rate, applied forward and backward, so the QRS band
//! keeps its phase), every q-th sample kept starting at sample 0, so decimated sample `k` is
//! original sample `k·q`.
//!
//! [`detection_factor`] chooses q so that a record sampled far above [`DETECTION_RATE_HZ`]
//! (e.g. 1000 or 2000 Hz) is detected at 250–500 Hz (common practice: QRS energy lies below
//! ~40 Hz, so a few hundred hertz is ample for locating beats), which cuts the detectors' cost by
//! q. Beat positions are refined afterwards on the full-rate signal.

use super::filter::Sos;
use crate::error::Result;

/// Rate, Hz, the detectors are designed around; records above twice this are decimated.
pub const DETECTION_RATE_HZ: f64 = 250.0;

/// Decimation factor for detection at `fs_hz`: 1 up to 500 Hz, else ⌊fs/250⌋.
pub fn detection_factor(fs_hz: f64) -> usize {
    if fs_hz.is_finite() && fs_hz >= 2.0 * DETECTION_RATE_HZ {
        (fs_hz / DETECTION_RATE_HZ).floor() as usize
    } else {
        1
    }
}

/// Decimate `x` (finite samples at `fs_hz`) by `q` after a zero-phase anti-alias low-pass.
/// `q ≤ 1` returns a copy.
pub fn decimate(x: &[f64], fs_hz: f64, q: usize) -> Result<Vec<f64>> {
    if q <= 1 || x.is_empty() {
        return Ok(x.to_vec());
    }
    let new_rate = fs_hz / q as f64;
    let lp = Sos::butter_lowpass(4, 0.4 * new_rate, fs_hz)?;
    let y = lp.filtfilt(x);
    Ok(y.iter().step_by(q).copied().collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn factor_and_alignment() {
        assert_eq!(detection_factor(250.0), 1);
        assert_eq!(detection_factor(360.0), 1);
        assert_eq!(detection_factor(499.0), 1);
        assert_eq!(detection_factor(500.0), 2);
        assert_eq!(detection_factor(1000.0), 4);
        assert_eq!(detection_factor(2000.0), 8);
        assert_eq!(detection_factor(f64::NAN), 1);
        // A 5 Hz sine sampled at 1000 Hz, decimated by 4: sample k equals the original at 4k
        // (the low-pass at 100 Hz leaves 5 Hz untouched to well under 0.1 %).
        let fs = 1000.0;
        let x: Vec<f64> = (0..4000)
            .map(|i| (2.0 * std::f64::consts::PI * 5.0 * i as f64 / fs).sin())
            .collect();
        let y = decimate(&x, fs, 4).unwrap();
        assert_eq!(y.len(), 1000);
        for k in 100..900 {
            assert!(
                (y[k] - x[4 * k]).abs() < 1e-3,
                "k {k}: {} vs {}",
                y[k],
                x[4 * k]
            );
        }
        // A 300 Hz tone (above the new Nyquist of 125 Hz) is removed, not aliased.
        let z: Vec<f64> = (0..4000)
            .map(|i| (2.0 * std::f64::consts::PI * 300.0 * i as f64 / fs).sin())
            .collect();
        let w = decimate(&z, fs, 4).unwrap();
        let peak = w[100..900].iter().fold(0.0f64, |m, v| m.max(v.abs()));
        assert!(peak < 1e-3, "alias {peak}");
    }
}
