//! Aligned beat windows with RR context.
//!
//! In: conditioned samples `x`, the rate `fs_hz`, R-peak sample indices and [`FeatureParams`].
//! Out: [`Features`]: one row per beat whose window `[peak − pre_s, peak + post_s]` lies inside
//! the record. The window is averaged down to about `decimate_to_hz` (block means over equal
//! stretches of samples; an averaging low-pass, so no extra filter is needed), then two RR
//! context columns follow: the previous and next RR interval in seconds, multiplied by
//! `rr_weight × A`, where `A` is the median peak-to-peak amplitude of the kept (decimated)
//! windows. The multiplication puts RR on the scale of the waveform so that a premature beat
//! (shorter previous RR, longer next RR) moves the point noticeably, as beat-window-plus-RR
//! descriptions usually do (common practice).

use super::Features;
use crate::error::{Error, Result};
use crate::params::Checked;
use crate::points::Points;
use serde::{Deserialize, Serialize};

/// Parameters of [`beat_features`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct FeatureParams {
    /// Window start before the R peak, seconds (default 0.25).
    pub pre_s: f64,
    /// Window end after the R peak, seconds (default 0.45).
    pub post_s: f64,
    /// Target rate of the window columns, Hz (default 100: a 0.7 s window gives 70 columns).
    /// Samples are averaged in equal blocks; a target at or above `fs_hz` keeps every sample.
    pub decimate_to_hz: f64,
    /// Weight of the RR-context columns relative to the waveform amplitude (default 1; 0 makes
    /// the RR columns zero).
    pub rr_weight: f64,
}

impl Default for FeatureParams {
    fn default() -> Self {
        FeatureParams {
            pre_s: 0.25,
            post_s: 0.45,
            decimate_to_hz: 100.0,
            rr_weight: 1.0,
        }
    }
}

impl FeatureParams {
    /// Validate: `pre_s`, `post_s` in [0, 5] s with `pre_s + post_s > 0`; `decimate_to_hz` in
    /// (0, 100 000] Hz; `rr_weight` in [0, 1000].
    pub fn check(&self) -> Result<&Self> {
        if !(self.pre_s.is_finite() && (0.0..=5.0).contains(&self.pre_s)) {
            return Err(Error::param(
                "pre_s",
                format!("{} s; allowed 0 to 5 s", self.pre_s),
            ));
        }
        if !(self.post_s.is_finite() && (0.0..=5.0).contains(&self.post_s)) {
            return Err(Error::param(
                "post_s",
                format!("{} s; allowed 0 to 5 s", self.post_s),
            ));
        }
        if self.pre_s + self.post_s <= 0.0 {
            return Err(Error::param(
                "post_s",
                "pre_s + post_s must be above 0 s (the window is empty)",
            ));
        }
        if !(self.decimate_to_hz.is_finite()
            && self.decimate_to_hz > 0.0
            && self.decimate_to_hz <= 100_000.0)
        {
            return Err(Error::param(
                "decimate_to_hz",
                format!("{} Hz; allowed (0, 100000] Hz", self.decimate_to_hz),
            ));
        }
        if !(self.rr_weight.is_finite() && (0.0..=1000.0).contains(&self.rr_weight)) {
            return Err(Error::param(
                "rr_weight",
                format!("{}; allowed 0 to 1000 (dimensionless)", self.rr_weight),
            ));
        }
        Ok(self)
    }
}

/// Beat feature matrix: decimated signal windows around each R peak plus scaled RR context.
///
/// Beats whose window leaves the record are skipped; `beat_index` says which peaks were kept.
/// Column names are `w+0.120s` style (time of the block centre relative to the peak) followed by
/// `rr_prev_s` and `rr_next_s` (scaled, see the module notes; [`beat_features_scaled`] also
/// returns the scale factor). The first beat uses its next RR for both, the last its previous.
///
/// Errors: bad parameters or rate, fewer than two peaks, peaks not strictly increasing or outside
/// the record, no beat with a complete window, non-finite samples in a window.
pub fn beat_features(
    x: &[f64],
    fs_hz: f64,
    peaks: &[usize],
    p: &Checked<FeatureParams>,
) -> Result<Features> {
    beat_features_scaled(x, fs_hz, peaks, p).map(|(f, _)| f)
}

/// As [`beat_features`], also returning the factor `rr_weight × A` that multiplies the RR columns
/// (divide them by it to get seconds; the factor is 0 when `rr_weight` is 0).
pub fn beat_features_scaled(
    x: &[f64],
    fs_hz: f64,
    peaks: &[usize],
    p: &Checked<FeatureParams>,
) -> Result<(Features, f64)> {
    if !(fs_hz.is_finite() && fs_hz > 0.0) {
        return Err(Error::param(
            "fs_hz",
            format!("{fs_hz} Hz; must be a finite rate above 0 Hz"),
        ));
    }
    if peaks.len() < 2 {
        return Err(Error::Analysis(format!(
            "beat features need at least 2 R peaks for RR context, got {}",
            peaks.len()
        )));
    }
    for (i, w) in peaks.windows(2).enumerate() {
        if w[1] <= w[0] {
            return Err(Error::Analysis(format!(
                "R peaks must be strictly increasing: peak {} at sample {} follows sample {}",
                i + 1,
                w[1],
                w[0]
            )));
        }
    }
    if let Some(&last) = peaks.last() {
        if last >= x.len() {
            return Err(Error::Analysis(format!(
                "R peak at sample {last} lies beyond the record ({} samples)",
                x.len()
            )));
        }
    }

    let pre = (p.pre_s * fs_hz).round() as usize;
    let post = (p.post_s * fs_hz).round() as usize;
    let len = pre + post + 1;
    let cols = ((p.pre_s + p.post_s) * p.decimate_to_hz).round().max(1.0) as usize;
    let cols = cols.min(len);
    // Block edges (sample offsets within the window): block c covers edges[c]..edges[c+1].
    let edges: Vec<usize> = (0..=cols)
        .map(|c| ((c as f64) * (len as f64) / (cols as f64)).round() as usize)
        .collect();
    let spacing_s = (len as f64 / cols as f64) / fs_hz;
    let decimals = if spacing_s >= 0.002 { 3 } else { 5 };
    let mut names: Vec<String> = edges
        .windows(2)
        .map(|e| {
            let centre = (e[0] + e[1] - 1) as f64 / 2.0;
            let t = (centre - pre as f64) / fs_hz;
            format!("w{t:+.decimals$}s")
        })
        .collect();
    names.push("rr_prev_s".to_string());
    names.push("rr_next_s".to_string());
    let dim = cols + 2;

    let mut data = Vec::new();
    let mut kept = Vec::new();
    let mut ptp = Vec::new();
    for (i, &pk) in peaks.iter().enumerate() {
        if pk < pre || pk + post >= x.len() {
            continue;
        }
        let win = &x[pk - pre..pk + post + 1];
        let row_start = data.len();
        for e in edges.windows(2) {
            let block = &win[e[0]..e[1]];
            let mean = block.iter().sum::<f64>() / block.len().max(1) as f64;
            if !mean.is_finite() {
                return Err(Error::Analysis(format!(
                    "non-finite sample in the window of beat {i} (R peak at sample {pk})"
                )));
            }
            data.push(mean);
        }
        let row = &data[row_start..];
        let hi = row.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let lo = row.iter().copied().fold(f64::INFINITY, f64::min);
        ptp.push(hi - lo);
        let rr_prev = if i > 0 {
            Some((pk - peaks[i - 1]) as f64 / fs_hz)
        } else {
            None
        };
        let rr_next = peaks.get(i + 1).map(|&n| (n - pk) as f64 / fs_hz);
        let (a, b) = match (rr_prev, rr_next) {
            (Some(a), Some(b)) => (a, b),
            (Some(a), None) => (a, a),
            (None, Some(b)) => (b, b),
            (None, None) => (0.0, 0.0), // unreachable: at least two peaks were checked
        };
        data.push(a);
        data.push(b);
        kept.push(i);
    }
    if kept.is_empty() {
        return Err(Error::Analysis(format!(
            "no beat has a complete window ({} s before to {} s after the peak) inside the record",
            p.pre_s, p.post_s
        )));
    }
    ptp.sort_by(f64::total_cmp);
    let amp = ptp[ptp.len() / 2];
    let amp = if amp > 0.0 { amp } else { 1.0 };
    let scale = p.rr_weight * amp;
    for row in data.chunks_exact_mut(dim) {
        row[cols] *= scale;
        row[cols + 1] *= scale;
    }
    let points = Points::new(kept.len(), dim, data)?;
    Ok((
        Features {
            points,
            names,
            beat_index: kept,
        },
        scale,
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A record of 1 kHz samples with triangular "beats" of height 2 at given peaks.
    fn record(n: usize, peaks: &[usize]) -> Vec<f64> {
        let mut x = vec![0.0; n];
        for &p in peaks {
            for k in 0..20usize {
                let v = 2.0 * (1.0 - k as f64 / 20.0);
                if p + k < n {
                    x[p + k] = v;
                }
                if p >= k {
                    x[p - k] = v;
                }
            }
        }
        x
    }

    #[test]
    fn shape_names_and_skipping() {
        let fs = 1000.0;
        let peaks = [100, 900, 1700, 2500, 3300, 3900];
        let x = record(4000, &peaks);
        let p = Checked::default();
        let (f, scale) = beat_features_scaled(&x, fs, &peaks, &p).unwrap();
        // window 0.25 + 0.45 s at 100 Hz -> 70 columns, plus 2 RR columns.
        assert_eq!(f.points.dim, 72);
        assert_eq!(f.names.len(), 72);
        assert_eq!(f.names[0], "w-0.245s"); // first 10-sample block centre: -250 + 4.5 samples
        assert_eq!(f.names[70], "rr_prev_s");
        assert_eq!(f.names[71], "rr_next_s");
        // peak 100 has no 250 ms before it; peak 3900 has no 450 ms after it (4000 samples).
        assert_eq!(f.beat_index, vec![1, 2, 3, 4]);
        // Peak-to-peak amplitude of the decimated window: block containing the peak averages
        // samples of a 2-high triangle: the amplitude is the same for every beat.
        assert!(scale > 1.0 && scale <= 2.0, "scale {scale}");
        // Row of beat 4 (peak 3300): previous RR 0.8 s, next RR 0.6 s.
        let r = f.points.row(3);
        assert!((r[70] / scale - 0.8).abs() < 1e-12);
        assert!((r[71] / scale - 0.6).abs() < 1e-12);
        // Block means: 701 samples in 70 blocks of about 10; block 25 starts at the peak
        // (offset 250) and has the largest mean; its centre lies 4.5 ms after the peak.
        let (imax, _) = r[..70]
            .iter()
            .enumerate()
            .fold((0, f64::MIN), |a, (i, &v)| if v > a.1 { (i, v) } else { a });
        assert_eq!(imax, 25);
        let t: f64 = f.names[imax][1..f.names[imax].len() - 1].parse().unwrap();
        assert!((t - 0.0045).abs() < 0.0006, "{}", f.names[imax]);
    }

    #[test]
    fn first_and_last_beats_use_available_rr() {
        let fs = 100.0;
        let peaks = [30, 130, 250];
        let x = record(400, &peaks);
        let p = Checked::new(FeatureParams {
            pre_s: 0.2,
            post_s: 0.2,
            decimate_to_hz: 200.0, // above fs: every sample kept
            rr_weight: 1.0,
        })
        .unwrap();
        let (f, scale) = beat_features_scaled(&x, fs, &peaks, &p).unwrap();
        assert_eq!(f.points.dim, 41 + 2);
        assert_eq!(f.beat_index, vec![0, 1, 2]);
        let first = f.points.row(0);
        assert!((first[41] / scale - 1.0).abs() < 1e-12 && (first[42] / scale - 1.0).abs() < 1e-12);
        let last = f.points.row(2);
        assert!((last[41] / scale - 1.2).abs() < 1e-12 && (last[42] / scale - 1.2).abs() < 1e-12);
        // Undecimated window holds the raw samples.
        assert_eq!(first[20], 2.0);
    }

    #[test]
    fn errors() {
        let x = vec![0.0; 1000];
        let p: Checked<FeatureParams> = Checked::default();
        assert!(matches!(
            beat_features(&x, 0.0, &[300, 600], &p),
            Err(Error::Param { .. })
        ));
        assert!(beat_features(&x, 250.0, &[300], &p).is_err());
        assert!(beat_features(&x, 250.0, &[600, 300], &p).is_err());
        assert!(beat_features(&x, 250.0, &[300, 1000], &p).is_err());
        // Windows never fit: 0.7 s at 250 Hz is 175 samples, record 100 samples.
        assert!(beat_features(&x[..100], 250.0, &[40, 60], &p).is_err());
        for bad in [
            FeatureParams {
                pre_s: -0.1,
                ..(*p).clone()
            },
            FeatureParams {
                pre_s: 0.0,
                post_s: 0.0,
                ..(*p).clone()
            },
            FeatureParams {
                decimate_to_hz: 0.0,
                ..(*p).clone()
            },
            FeatureParams {
                rr_weight: f64::NAN,
                ..(*p).clone()
            },
        ] {
            assert!(matches!(bad.check(), Err(Error::Param { .. })));
        }
        let mut y = x.clone();
        y[300] = f64::NAN;
        assert!(beat_features(&y, 250.0, &[300, 600], &p).is_err());
    }
}
