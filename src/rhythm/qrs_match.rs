//! **QRS match**: how alike a record's QRS complexes are, one number per record, used by the
//! irregular-rhythm score ([`super::verdict::IrregularScore`]).
//!
//! In: the conditioned samples of one lead, the detected beats (R-peak sample indices) and the
//! sampling rate. Out: the median, over the beats, of the Pearson correlation of each beat's
//! QRS segment with the record's median QRS (NaN when it cannot be computed).
//!
//! Method. The correlation of each beat with the record's average beat is a signal-quality index
//! of the ECG (template matching: Orphanidou, Bonnici, Charlton, Clifton, Vallance & Tarassenko
//! 2015, IEEE J Biomed Health Inform 19:832, average correlation of the beats with their
//! template, `from memory`). Here the segment is the QRS alone, ±[`HALF_S`] around the R peak,
//! and the template is the sample-wise median of the segments, so that a few odd beats do not
//! shape it. Atrial fibrillation conducts through the normal pathway and keeps one QRS shape
//! while RR is irregular (`common practice`): a high match. Noise that mimics irregular RR, or
//! detections on T waves and artefacts, give segments unlike the median: a low match; so do
//! frequent ventricular ectopic beats, whose QRS is wide and differently shaped (`common
//! practice`). The number is evidence for the record verdict, not a detector on its own.

/// Half width of the QRS segment around each R peak, seconds (a QRS lasts about 0.1 s,
/// `common practice`; the same half width as the blanked QRS of [`super::fwave::QRS_HALF_S`]).
pub const HALF_S: f64 = 0.06;
/// Fewest beats with a full segment for the measure.
pub const MIN_BEATS: usize = 3;
/// Most beats forming the template (spread evenly over the record), which bounds the cost on
/// long recordings.
const MAX_TEMPLATE_BEATS: usize = 2000;

/// The QRS match of the beats `samples` of `conditioned` at `fs_hz` (see the module
/// documentation). NaN when the rate is not positive, fewer than [`MIN_BEATS`] beats have a
/// full, finite segment, or the template is flat. Never panics.
pub fn qrs_match(conditioned: &[f64], samples: &[usize], fs_hz: f64) -> f64 {
    if !(fs_hz.is_finite() && fs_hz > 0.0) {
        return f64::NAN;
    }
    let h = (HALF_S * fs_hz).round() as usize;
    if h < 2 {
        return f64::NAN;
    }
    let segs: Vec<&[f64]> = samples
        .iter()
        .filter(|&&s| s >= h && s + h < conditioned.len())
        .map(|&s| &conditioned[s - h..=s + h])
        .filter(|seg| seg.iter().all(|v| v.is_finite()))
        .collect();
    if segs.len() < MIN_BEATS {
        return f64::NAN;
    }
    let step = segs.len().div_ceil(MAX_TEMPLATE_BEATS);
    let mut column = Vec::with_capacity(segs.len().min(MAX_TEMPLATE_BEATS));
    let template: Vec<f64> = (0..=2 * h)
        .map(|j| {
            column.clear();
            column.extend(segs.iter().step_by(step).map(|s| s[j]));
            crate::stats::median_of_finite(&mut column)
        })
        .collect();
    crate::stats::median(segs.iter().map(|s| pearson(s, &template)))
}

/// Pearson correlation of two equally long slices; NaN when either is flat.
fn pearson(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len() as f64;
    let ma = a.iter().sum::<f64>() / n;
    let mb = b.iter().sum::<f64>() / n;
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for (x, y) in a.iter().zip(b) {
        sab += (x - ma) * (y - mb);
        saa += (x - ma) * (x - ma);
        sbb += (y - mb) * (y - mb);
    }
    if saa > 0.0 && sbb > 0.0 {
        sab / (saa * sbb).sqrt()
    } else {
        f64::NAN
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A train of identical triangular QRS complexes (peak 1, 40 ms to either side) at 250 Hz.
    fn train(n: usize, rr: usize) -> (Vec<f64>, Vec<usize>) {
        let mut x = vec![0.0; rr * (n + 1)];
        let mut s = Vec::new();
        for k in 1..=n {
            let c = k * rr;
            for j in 0..10usize {
                let v = 1.0 - j as f64 / 10.0;
                x[c + j] = v;
                x[c - j] = v;
            }
            s.push(c);
        }
        (x, s)
    }

    #[test]
    fn identical_complexes_match_exactly_and_odd_ones_lower_it() {
        let (x, s) = train(20, 200);
        assert!((qrs_match(&x, &s, 250.0) - 1.0).abs() < 1e-12);
        // Detections moved 20 ms (5 samples) off the peak on every other beat: each moved
        // segment is a shifted triangle, so its correlation with the median (the unshifted
        // triangle) is below 1, and the median over 10 moved and 10 unmoved beats is the
        // mean of the two middle values: below 1.
        let moved: Vec<usize> = s
            .iter()
            .enumerate()
            .map(|(k, &c)| if k % 2 == 0 { c + 5 } else { c })
            .collect();
        let m = qrs_match(&x, &moved, 250.0);
        assert!(m < 0.99 && m > 0.0, "{m}");
        // Detections in the flat stretch between complexes (no QRS) give no correlation
        // there (NaN, left out of the median) or ruin the template.
        let mut noisy = x.clone();
        for (i, v) in noisy.iter_mut().enumerate() {
            *v += 0.3 * ((i * 7919 % 101) as f64 / 101.0 - 0.5);
        }
        let n = qrs_match(&noisy, &s, 250.0);
        assert!(
            n < 1.0 && n > m,
            "noise lowers the match less than misplaced beats: {n} {m}"
        );
    }

    #[test]
    fn bad_input_gives_nan() {
        let (x, s) = train(20, 200);
        assert!(qrs_match(&x, &s[..2], 250.0).is_nan());
        assert!(qrs_match(&x, &s, 0.0).is_nan());
        assert!(qrs_match(&x, &s, f64::NAN).is_nan());
        assert!(qrs_match(&[0.0; 4000], &s, 250.0).is_nan());
        assert!(qrs_match(&[], &s, 250.0).is_nan());
        let mut y = x.clone();
        y[s[3]] = f64::NAN;
        // The segment with a NaN is left out; the others still match.
        assert!((qrs_match(&y, &s, 250.0) - 1.0).abs() < 1e-12);
    }
}
