//! Beat-by-beat scoring of detections against reference beats, the RR series, and the
//! beat-agreement index of two detectors.
//!
//! In: sorted sample indices of reference and detected beats, `fs_hz`, a matching window in
//! seconds. Out: a [`Score`] (TP/FP/FN, Se, +P) by the ANSI/AAMI EC57 rule, RR intervals in
//! seconds, or an agreement fraction.
//!
//! Matching rule (ANSI/AAMI EC57: a detection matches a reference beat within 150 ms): references
//! are taken in time order and each is paired with the nearest still-unpaired detection at most
//! `window_s` away; a detection exactly `window_s` away counts (common practice for the edge). A
//! detection pairs with at most one reference and vice versa.

use crate::beats::Score;

/// Pairs (reference index, detection index) by the EC57 rule; both inputs sorted increasing.
pub fn match_pairs(
    reference: &[usize],
    detected: &[usize],
    fs_hz: f64,
    window_s: f64,
) -> Vec<(usize, usize)> {
    let mut pairs = Vec::with_capacity(reference.len().min(detected.len()));
    if !(fs_hz.is_finite() && fs_hz > 0.0 && window_s.is_finite() && window_s >= 0.0) {
        return pairs;
    }
    // Window in samples, with a hair of slack so that exactly-on-the-edge pairs count despite
    // rounding of window_s·fs_hz.
    let w = window_s * fs_hz * (1.0 + 1e-12) + 1e-9;
    let mut used = vec![false; detected.len()];
    let mut lo = 0usize;
    for (ri, &r) in reference.iter().enumerate() {
        let rf = r as f64;
        while lo < detected.len() && (detected[lo] as f64) < rf - w {
            lo += 1;
        }
        let mut best: Option<(usize, f64)> = None;
        let mut j = lo;
        while j < detected.len() {
            let d = detected[j] as f64;
            if d > rf + w {
                break;
            }
            if !used[j] {
                let dist = (d - rf).abs();
                if best.is_none_or(|(_, bd)| dist < bd) {
                    best = Some((j, dist));
                }
            }
            j += 1;
        }
        if let Some((j, _)) = best {
            used[j] = true;
            pairs.push((ri, j));
        }
    }
    pairs
}

/// Which reference beats and which detections are paired by the EC57 rule of [`score`]:
/// `(reference_paired, detected_paired)`, one flag per beat of each list (both sorted increasing).
pub fn paired_flags(
    reference: &[usize],
    detected: &[usize],
    fs_hz: f64,
    window_s: f64,
) -> (Vec<bool>, Vec<bool>) {
    let mut r = vec![false; reference.len()];
    let mut d = vec![false; detected.len()];
    for (ri, di) in match_pairs(reference, detected, fs_hz, window_s) {
        r[ri] = true;
        d[di] = true;
    }
    (r, d)
}

fn ratio(num: usize, den: usize) -> f64 {
    if den == 0 {
        1.0
    } else {
        num as f64 / den as f64
    }
}

fn make_score(reference: usize, detected: usize, tp: usize, window_s: f64) -> Score {
    let fp = detected - tp;
    let fn_ = reference - tp;
    Score {
        reference,
        detected,
        tp,
        fp,
        fn_,
        se: ratio(tp, tp + fn_),
        ppv: ratio(tp, tp + fp),
        match_window_ms: window_s * 1000.0,
    }
}

/// Score `detected` against `reference` (sample indices at `fs_hz`, sorted increasing) with a
/// matching window of `window_s` seconds (0.150 in EC57). Se = TP/(TP+FN), +P = TP/(TP+FP), each 1
/// when its denominator is 0. Invalid `fs_hz`/`window_s` match nothing.
pub fn score(reference: &[usize], detected: &[usize], fs_hz: f64, window_s: f64) -> Score {
    let tp = match_pairs(reference, detected, fs_hz, window_s).len();
    make_score(reference.len(), detected.len(), tp, window_s)
}

/// Like [`score`], but only beats in `[start_sample, end_sample)` count (e.g. to leave out an
/// EC57 learning period). Matching runs on the full lists first; then a pair counts as TP when its
/// reference beat is in range, an unpaired reference in range is FN, an unpaired detection in range
/// is FP; a detection in range paired with a reference outside it counts as nothing. `detected` in
/// the result is TP + FP.
pub fn score_between(
    reference: &[usize],
    detected: &[usize],
    fs_hz: f64,
    window_s: f64,
    start_sample: usize,
    end_sample: usize,
) -> Score {
    let inside = |s: usize| s >= start_sample && s < end_sample;
    let pairs = match_pairs(reference, detected, fs_hz, window_s);
    let mut det_paired = vec![false; detected.len()];
    let mut tp = 0;
    for &(ri, di) in &pairs {
        if let Some(flag) = det_paired.get_mut(di) {
            *flag = true;
        }
        if reference.get(ri).is_some_and(|&r| inside(r)) {
            tp += 1;
        }
    }
    let n_ref = reference.iter().filter(|&&r| inside(r)).count();
    let fp = detected
        .iter()
        .zip(&det_paired)
        .filter(|(&d, &p)| inside(d) && !p)
        .count();
    make_score(n_ref, tp + fp, tp, window_s)
}

/// RR intervals in seconds between consecutive beats (`samples.len() − 1` values; none for
/// fewer than two beats). Invalid `fs_hz` gives an empty list.
pub fn rr_intervals_s(samples: &[usize], fs_hz: f64) -> Vec<f64> {
    if !(fs_hz.is_finite() && fs_hz > 0.0) {
        return Vec::new();
    }
    samples
        .windows(2)
        .map(|w| (w[1] as f64 - w[0] as f64) / fs_hz)
        .collect()
}

/// Beat agreement of two detectors (Li, Mark & Clifford 2008, bSQI): matched / (|a| + |b| −
/// matched), with pairs matched by the rule of [`score`] within `window_s`. 1 when both are empty.
pub fn agreement(a: &[usize], b: &[usize], fs_hz: f64, window_s: f64) -> f64 {
    let m = match_pairs(a, b, fs_hz, window_s).len();
    let den = a.len() + b.len() - m;
    ratio(m, den)
}

/// Agreement of [`agreement`] in consecutive windows of `window_len_s` seconds (beats assigned to
/// windows by their sample; the last window may be shorter), over `[0, n_samples)`. Returns one
/// `(start_s, agreement)` per window; empty for invalid arguments.
pub fn agreement_windows(
    a: &[usize],
    b: &[usize],
    fs_hz: f64,
    match_window_s: f64,
    window_len_s: f64,
    n_samples: usize,
) -> Vec<(f64, f64)> {
    if !(fs_hz.is_finite() && fs_hz > 0.0 && window_len_s.is_finite() && window_len_s > 0.0) {
        return Vec::new();
    }
    let len = ((window_len_s * fs_hz).round() as usize).max(1);
    let pairs = match_pairs(a, b, fs_hz, match_window_s);
    let n_win = n_samples.div_ceil(len);
    let mut count_a = vec![0usize; n_win];
    let mut count_b = vec![0usize; n_win];
    let mut matched = vec![0usize; n_win];
    for &s in a {
        if let Some(c) = count_a.get_mut(s / len) {
            *c += 1;
        }
    }
    for &s in b {
        if let Some(c) = count_b.get_mut(s / len) {
            *c += 1;
        }
    }
    for &(ia, _) in &pairs {
        if let Some(c) = a.get(ia).and_then(|&s| matched.get_mut(s / len)) {
            *c += 1;
        }
    }
    (0..n_win)
        .map(|k| {
            let m = matched[k];
            let den = (count_a[k] + count_b[k]).saturating_sub(m);
            ((k * len) as f64 / fs_hz, ratio(m.min(den), den))
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hand_made_counts() {
        let fs = 1000.0;
        let r = [1000, 2000, 3000, 4000];
        let d = [1010, 2150, 3151, 3500, 4000];
        let s = score(&r, &d, fs, 0.150);
        // Source: ANSI/AAMI EC57 150 ms window; the exact edge counts (common practice).
        // 1010 (10 ms) TP, 2150 (exactly 150 ms) TP, 3151 (151 ms) no, 3500 no, 4000 TP.
        assert_eq!((s.tp, s.fp, s.fn_), (3, 2, 1));
        assert_eq!((s.reference, s.detected), (4, 5));
        assert!((s.se - 0.75).abs() < 1e-15);
        assert!((s.ppv - 0.6).abs() < 1e-15);
        assert!((s.match_window_ms - 150.0).abs() < 1e-12);
        // Before the reference, too: -150 ms counts, -151 ms does not.
        assert_eq!(score(&[1000], &[850], fs, 0.15).tp, 1);
        assert_eq!(score(&[1000], &[849], fs, 0.15).tp, 0);
    }

    #[test]
    fn empty_lists() {
        let s = score(&[], &[], 250.0, 0.15);
        // Se and +P are 1 when their denominators are 0 (as documented on Score).
        assert_eq!((s.tp, s.fp, s.fn_, s.se, s.ppv), (0, 0, 0, 1.0, 1.0));
        let s = score(&[100, 200], &[], 250.0, 0.15);
        assert_eq!((s.tp, s.fn_, s.se, s.ppv), (0, 2, 0.0, 1.0));
        let s = score(&[], &[100], 250.0, 0.15);
        assert_eq!((s.fp, s.se, s.ppv), (1, 1.0, 0.0));
    }

    #[test]
    fn one_detection_cannot_match_two_references() {
        let fs = 1000.0;
        // Both references are within 150 ms of the single detection.
        let s = score(&[1000, 1200], &[1100], fs, 0.15);
        assert_eq!((s.tp, s.fp, s.fn_), (1, 0, 1));
        // Two detections near one reference: one TP, one FP.
        let s = score(&[1000], &[990, 1005], fs, 0.15);
        assert_eq!((s.tp, s.fp, s.fn_), (1, 1, 0));
        // The nearest detection is taken; the other remains for the next reference.
        let s = score(&[1000, 1200], &[1005, 1100], fs, 0.15);
        assert_eq!((s.tp, s.fp, s.fn_), (2, 0, 0));
    }

    #[test]
    fn scoring_a_sub_range() {
        let fs = 1000.0;
        let r = [100, 1000, 2000, 3000];
        let d = [110, 1020, 2500, 3000];
        let s = score_between(&r, &d, fs, 0.15, 500, 3000);
        // In range: references 1000, 2000; detections 1020 (TP), 2500 (FP). 3000 is outside.
        assert_eq!((s.reference, s.tp, s.fp, s.fn_), (2, 1, 1, 1));
        assert_eq!(s.detected, 2);
    }

    #[test]
    fn rr_and_agreement() {
        let rr = rr_intervals_s(&[0, 250, 450], 250.0);
        assert_eq!(rr, vec![1.0, 0.8]);
        assert!(rr_intervals_s(&[10], 250.0).is_empty());
        // Source: Li, Mark & Clifford (2008) bSQI = matched / (|a| + |b| - matched):
        // 2 matched of 3 and 3 beats -> 2 / 4.
        let a = [100, 1000, 2000];
        let b = [105, 1010, 2500];
        assert!((agreement(&a, &b, 1000.0, 0.15) - 0.5).abs() < 1e-15);
        assert_eq!(agreement(&[], &[], 1000.0, 0.15), 1.0);
        let w = agreement_windows(&a, &b, 1000.0, 0.15, 1.5, 3000);
        assert_eq!(w.len(), 2);
        assert_eq!(w[0], (0.0, 1.0));
        assert_eq!(w[1], (1.5, 0.0));
    }
}
