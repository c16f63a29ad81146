//! Per-segment signal-quality flags of one lead: flat line, clipping, high-frequency noise and
//! non-finite samples.
//!
//! In: raw samples, `fs_hz` and a segment length in seconds. Out: one [`QualitySegment`] per
//! segment (a trailing piece shorter than half a segment is joined to the last segment). Rules (common practice; thresholds are this module's
//! constants):
//! - `non_finite`: the segment has a NaN or infinite sample.
//! - `flat`: the segment's robust range (2nd to 98th percentile) is at most [`FLAT_FRACTION`] of
//!   the median robust range over all segments, or is zero. (If most of a lead is flat, only
//!   exactly constant segments are caught.)
//! - `clipped`: at least [`CLIP_FRACTION`] of the segment's samples (and at least 3) sit exactly at
//!   the lead's global maximum or minimum, as saturated converters produce.
//! - `noisy`: power above `min(40 Hz, 0.4·fs)` (4th-order Butterworth high-pass) exceeds
//!   [`NOISE_RATIO`] times the power in the QRS band 5–15 Hz (2nd-order Butterworth band-pass).
//!   Filters run causally across segment boundaries, so memory stays O(segment).
//! - `lead_off`: the segment is `flat` and its median level lies more than [`LEAD_OFF_STEP`]
//!   typical robust ranges away from the median level of the segments that are not flat: an
//!   electrode that came off leaves the amplifier stuck at an offset or a rail, not at the
//!   baseline. (When every segment is flat there is no usual level and nothing is flagged.)
//! - `gain_change`: neither this segment nor the previous usable one (not flat, no non-finite
//!   sample) is flat, and their robust ranges differ by at least a factor [`GAIN_STEP`]; the
//!   later segment is flagged. A strong noise burst can also trip it, which is why it is a flag
//!   for review and not a correction.

use super::filter::Sos;
use crate::signal::QualitySegment;

/// A segment is flat when its robust range is at most this fraction of the typical one.
pub const FLAT_FRACTION: f64 = 0.02;
/// Fraction of a segment's samples at the global extreme that marks clipping.
pub const CLIP_FRACTION: f64 = 0.01;
/// High-frequency to QRS-band power ratio above which a segment is noisy.
pub const NOISE_RATIO: f64 = 0.5;
/// Distance of a flat segment's level from the usual level, in typical robust ranges, above
/// which it is taken for a lead-off.
pub const LEAD_OFF_STEP: f64 = 1.0;
/// Ratio of robust ranges of consecutive usable segments that marks a gain change.
pub const GAIN_STEP: f64 = 4.0;

struct SegStats {
    start: usize,
    end: usize,
    range: f64,
    level: f64,
    min: f64,
    max: f64,
    n_min: usize,
    n_max: usize,
    non_finite: bool,
    noisy: bool,
}

/// Quality flags for consecutive segments of `segment_s` seconds.
///
/// Returns an empty list when `x` is empty or `fs_hz` is not a positive finite number; a
/// non-positive or non-finite `segment_s` gives one segment covering the whole lead.
pub fn quality(x: &[f64], fs_hz: f64, segment_s: f64) -> Vec<QualitySegment> {
    if x.is_empty() || !(fs_hz.is_finite() && fs_hz > 0.0) {
        return Vec::new();
    }
    let seg_len = if segment_s.is_finite() && segment_s > 0.0 {
        ((segment_s * fs_hz).round() as usize).clamp(1, x.len())
    } else {
        x.len()
    };
    let hf = Sos::butter_highpass(4, (40.0f64).min(0.4 * fs_hz), fs_hz).ok();
    let qrs = if fs_hz > 2.0 * 15.0 / 0.9 {
        Sos::butter_bandpass(2, 5.0, 15.0, fs_hz).ok()
    } else {
        None
    };
    let mut hf_state = hf.as_ref().map(|s| s.zero_state());
    let mut qrs_state = qrs.as_ref().map(|s| s.zero_state());

    let mut buf: Vec<f64> = Vec::with_capacity(seg_len);
    let mut work: Vec<f64> = Vec::with_capacity(seg_len);
    let mut stats = Vec::with_capacity(x.len() / seg_len + 1);
    let mut hold = x.iter().copied().find(|v| v.is_finite()).unwrap_or(0.0);
    // Segment starts; a trailing piece shorter than half a segment joins the previous segment.
    let mut starts: Vec<usize> = (0..x.len()).step_by(seg_len).collect();
    if starts.len() > 1 && x.len() - starts[starts.len() - 1] < seg_len / 2 {
        starts.pop();
    }
    for (k, &start) in starts.iter().enumerate() {
        let end = starts.get(k + 1).copied().unwrap_or(x.len());
        let seg = &x[start..end];
        buf.clear();
        let mut non_finite = false;
        for &v in seg {
            if v.is_finite() {
                hold = v;
            } else {
                non_finite = true;
            }
            buf.push(hold);
        }
        let (mut min, mut max) = (f64::INFINITY, f64::NEG_INFINITY);
        for &v in &buf {
            min = min.min(v);
            max = max.max(v);
        }
        let n_min = buf.iter().filter(|&&v| v == min).count();
        let n_max = buf.iter().filter(|&&v| v == max).count();
        // Power ratio with filter states carried over from the previous segment.
        let noisy = match (&hf, &qrs, hf_state.as_mut(), qrs_state.as_mut()) {
            (Some(h), Some(q), Some(hs), Some(qs)) => {
                work.clear();
                work.extend_from_slice(&buf);
                h.filter_with_state(&mut work, hs);
                let p_hf = work.iter().map(|v| v * v).sum::<f64>();
                work.clear();
                work.extend_from_slice(&buf);
                q.filter_with_state(&mut work, qs);
                let p_qrs = work.iter().map(|v| v * v).sum::<f64>();
                p_hf > NOISE_RATIO * p_qrs && p_hf > 0.0
            }
            _ => false,
        };
        work.clear();
        work.extend_from_slice(&buf);
        let range = robust_range(&mut work);
        let level = median_of(&mut work);
        stats.push(SegStats {
            start,
            end,
            range,
            level,
            min,
            max,
            n_min,
            n_max,
            non_finite,
            noisy,
        });
    }
    let mut ranges: Vec<f64> = stats.iter().map(|s| s.range).collect();
    let typical = median_of(&mut ranges);
    let gmin = stats.iter().fold(f64::INFINITY, |m, s| m.min(s.min));
    let gmax = stats.iter().fold(f64::NEG_INFINITY, |m, s| m.max(s.max));
    let is_flat = |s: &SegStats| s.range <= FLAT_FRACTION * typical || s.range == 0.0;
    let mut levels: Vec<f64> = stats
        .iter()
        .filter(|s| !is_flat(s))
        .map(|s| s.level)
        .collect();
    let usual_level = (!levels.is_empty()).then(|| median_of(&mut levels));
    let mut prev_range: Option<f64> = None;
    stats
        .iter()
        .map(|s| {
            let flat = is_flat(s);
            let lead_off = flat
                && usual_level.is_some_and(|u| {
                    (s.level - u).abs() > LEAD_OFF_STEP * typical && typical > 0.0
                });
            let usable = !flat && !s.non_finite;
            let gain_change = usable
                && prev_range.is_some_and(|p| {
                    let ratio = s.range / p;
                    !(ratio < GAIN_STEP && ratio > 1.0 / GAIN_STEP)
                });
            if usable {
                prev_range = Some(s.range);
            }
            let len = (s.end - s.start) as f64;
            let need = (CLIP_FRACTION * len).max(3.0);
            let clipped = gmax > gmin
                && ((s.max == gmax && s.n_max as f64 >= need)
                    || (s.min == gmin && s.n_min as f64 >= need));
            QualitySegment {
                start_s: s.start as f64 / fs_hz,
                end_s: s.end as f64 / fs_hz,
                flat,
                clipped,
                noisy: s.noisy,
                non_finite: s.non_finite,
                lead_off,
                gain_change,
            }
        })
        .collect()
}

/// Plain-language notes on the flagged segments of a lead, for the report: one line per flag
/// that is set anywhere, with the count and the first time, and what beatfold did about it.
/// Empty when every segment is clean.
pub fn quality_notes(q: &[QualitySegment]) -> Vec<String> {
    type Flag = fn(&QualitySegment) -> bool;
    let rules: [(&str, Flag, &str); 6] = [
        (
            "non-finite samples (NaN/Inf, or gaps)",
            |s| s.non_finite,
            "filled by linear interpolation for conditioning and detection; beats inside are unreliable",
        ),
        (
            "flat line",
            |s| s.flat,
            "no beats can be detected there",
        ),
        (
            "lead off (flat, far from the usual level)",
            |s| s.lead_off,
            "no beats can be detected there; check the electrode",
        ),
        (
            "clipping at the converter's limits",
            |s| s.clipped,
            "beat amplitudes there are cut off",
        ),
        (
            "strong high-frequency noise",
            |s| s.noisy,
            "detections there may be false",
        ),
        (
            "sudden amplitude (gain) change",
            |s| s.gain_change,
            "amplitude features before and after are not comparable",
        ),
    ];
    let mut out = Vec::new();
    for (what, flag, consequence) in rules {
        let hits: Vec<&QualitySegment> = q.iter().filter(|s| flag(s)).collect();
        if let Some(first) = hits.first() {
            out.push(format!(
                "signal quality: {what} in {} of {} segments, first at {:.1}–{:.1} s; {consequence}",
                hits.len(),
                q.len(),
                first.start_s,
                first.end_s
            ));
        }
    }
    out
}

/// 98th minus 2nd percentile (nearest rank); reorders `v`.
fn robust_range(v: &mut [f64]) -> f64 {
    let n = v.len();
    if n == 0 {
        return 0.0;
    }
    let lo_i = ((0.02 * (n - 1) as f64).round() as usize).min(n - 1);
    let hi_i = ((0.98 * (n - 1) as f64).round() as usize).min(n - 1);
    let (_, hi, _) = v.select_nth_unstable_by(hi_i, f64::total_cmp);
    let hi = *hi;
    let (_, lo, _) = v.select_nth_unstable_by(lo_i, f64::total_cmp);
    hi - *lo
}

fn median_of(v: &mut [f64]) -> f64 {
    let n = v.len();
    if n == 0 {
        return 0.0;
    }
    let (_, m, _) = v.select_nth_unstable_by(n / 2, f64::total_cmp);
    *m
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};

    /// 60 s at 250 Hz of Gaussian pulses (sigma 12 ms) once a second, with faint noise.
    fn base(fs: f64, n: usize) -> Vec<f64> {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
        let noise = Normal::new(0.0, 0.01).unwrap();
        (0..n)
            .map(|i| {
                let t = i as f64 / fs;
                let ph = t - t.floor() - 0.5;
                (-(ph * ph) / (2.0 * 0.012 * 0.012)).exp() + noise.sample(&mut rng)
            })
            .collect()
    }

    #[test]
    fn flags_each_defect_in_its_own_segment() {
        let fs = 250.0;
        let seg = 2500; // 10 s segments
        let mut x = base(fs, 6 * seg);
        // Segment 1: flat line (lead off).
        for v in &mut x[seg..2 * seg] {
            *v = 0.001;
        }
        // Segment 2: four times taller pulses saturating at 3.0, the global maximum (the
        // other segments peak near 1.05, the noisy one below 2.5).
        for v in &mut x[2 * seg..3 * seg] {
            *v = (4.0 * *v).min(3.0);
        }
        // Segment 3: strong broadband noise.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
        let noise = Normal::new(0.0, 0.3).unwrap();
        for v in &mut x[3 * seg..4 * seg] {
            *v += noise.sample(&mut rng);
        }
        // Segment 4: a few NaN samples.
        x[4 * seg + 100] = f64::NAN;
        x[4 * seg + 101] = f64::INFINITY;
        let q = quality(&x, fs, 10.0);
        assert_eq!(q.len(), 6);
        assert!((q[1].start_s - 10.0).abs() < 1e-12 && (q[5].end_s - 60.0).abs() < 1e-12);
        assert!(q[1].flat && !q[1].noisy && !q[1].non_finite);
        assert!(q[2].clipped && !q[2].flat && !q[2].noisy, "{:?}", q[2]);
        assert!(q[3].noisy && !q[3].flat, "{:?}", q[3]);
        assert!(q[4].non_finite);
        for k in [0, 2, 4, 5] {
            assert!(!q[k].noisy && !q[k].flat, "segment {k}: {:?}", q[k]);
        }
        for k in [0, 1, 3, 4, 5] {
            assert!(!q[k].clipped, "segment {k}: {:?}", q[k]);
        }
        assert!(!q[5].non_finite && !q[0].non_finite);
    }

    #[test]
    fn clean_signal_is_clean_and_edge_cases() {
        let fs = 250.0;
        let x = base(fs, 5 * 2500 + 100);
        let q = quality(&x, fs, 10.0);
        // The 0.4 s tail joins the last segment.
        assert_eq!(q.len(), 5);
        assert!((q[4].end_s - 50.4).abs() < 1e-12);
        assert!(q.iter().all(|s| s.is_clean()), "{q:?}");
        assert!(quality(&[], fs, 10.0).is_empty());
        assert!(quality(&x, f64::NAN, 10.0).is_empty());
        assert_eq!(quality(&x, fs, -1.0).len(), 1);
    }
}
