//! Beat labels by prematurity and shape: a **research heuristic**, not an arrhythmia classifier.
//!
//! For each detected beat, two numbers are compared with their running reference:
//! - prematurity: the preceding RR interval divided by the median of the previous eight RR
//!   intervals (common practice in RR-based ectopy screens; the 8-beat memory follows the RR
//!   averages of Pan & Tompkins 1985);
//! - shape: the Pearson correlation of the beat's window (±100 ms around the R peak, conditioned
//!   signal) with the running template, the sample-wise median of the last nine beats labelled
//!   normal.
//!
//! Labels: `N` normal; `V` premature (ratio < 0.85) and of different shape (correlation < 0.8);
//! `A` premature with normal shape; `Q` different shape but not premature (other). The first
//! beats, before a template exists, are labelled `N` unless they differ from the median of the
//! first nine beats.

const PREMATURE_RATIO: f64 = 0.85;
const SHAPE_CORR: f64 = 0.8;
const TEMPLATE_BEATS: usize = 9;
const RR_MEMORY: usize = 8;
const HALF_WINDOW_S: f64 = 0.10;

fn correlation(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len().min(b.len());
    if n < 3 {
        return f64::NAN;
    }
    let ma = a[..n].iter().sum::<f64>() / n as f64;
    let mb = b[..n].iter().sum::<f64>() / n as f64;
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for i in 0..n {
        let (x, y) = (a[i] - ma, b[i] - mb);
        sab += x * y;
        saa += x * x;
        sbb += y * y;
    }
    if saa <= 0.0 || sbb <= 0.0 {
        return f64::NAN;
    }
    sab / (saa * sbb).sqrt()
}

/// Sample-by-sample median of up to [`TEMPLATE_BEATS`] windows of equal length (non-finite
/// samples ignored), written into `out`.
fn template_into(windows: &[&[f64]], out: &mut Vec<f64>) {
    let len = windows.first().map_or(0, |w| w.len());
    out.clear();
    let mut buf = [0.0f64; TEMPLATE_BEATS];
    for j in 0..len {
        let mut m = 0;
        for w in windows.iter().take(TEMPLATE_BEATS) {
            let v = w.get(j).copied().unwrap_or(f64::NAN);
            if v.is_finite() {
                buf[m] = v;
                m += 1;
            }
        }
        out.push(crate::stats::median_of_finite(&mut buf[..m]));
    }
}

/// Label each beat `N`, `V`, `A` or `Q` (see the module documentation). `x` is the conditioned
/// lead, `peaks` the R-peak samples in increasing order. Always returns one label per peak.
pub fn label_beats(x: &[f64], fs_hz: f64, peaks: &[usize]) -> Vec<char> {
    let n = peaks.len();
    let half = ((HALF_WINDOW_S * fs_hz).round() as usize).max(1);
    let window = |p: usize| -> Option<&[f64]> {
        (p >= half && p + half < x.len()).then(|| &x[p - half..=p + half])
    };
    let mut labels = vec!['N'; n];
    // Initial template: median of the first beats that have a full window.
    let first: Vec<&[f64]> = peaks
        .iter()
        .filter_map(|&p| window(p))
        .take(TEMPLATE_BEATS)
        .collect();
    if first.is_empty() {
        return labels;
    }
    let mut template = Vec::new();
    template_into(&first, &mut template);
    let mut recent_normal: Vec<&[f64]> = Vec::with_capacity(TEMPLATE_BEATS);
    let mut rr_hist: Vec<f64> = Vec::with_capacity(RR_MEMORY);
    for i in 0..n {
        let rr_prev = (i > 0).then(|| (peaks[i] - peaks[i - 1]) as f64);
        let ratio = match rr_prev {
            Some(rr) if rr_hist.len() >= 3 => {
                let mut buf = [0.0f64; RR_MEMORY];
                let k = rr_hist.len().min(RR_MEMORY);
                buf[..k].copy_from_slice(&rr_hist[..k]);
                rr / crate::stats::median_of_finite(&mut buf[..k])
            }
            _ => 1.0,
        };
        let corr = window(peaks[i]).map_or(1.0, |w| correlation(w, &template));
        let different = corr.is_finite() && corr < SHAPE_CORR;
        let premature = ratio < PREMATURE_RATIO;
        labels[i] = match (premature, different) {
            (true, true) => 'V',
            (true, false) => 'A',
            (false, true) => 'Q',
            (false, false) => 'N',
        };
        if labels[i] == 'N' {
            if let Some(w) = window(peaks[i]) {
                if recent_normal.len() == TEMPLATE_BEATS {
                    recent_normal.remove(0);
                }
                recent_normal.push(w);
                if recent_normal.len() >= 3 {
                    template_into(&recent_normal, &mut template);
                }
            }
        }
        // Only intervals ending in a normal beat feed the RR memory, so one premature beat and
        // its compensatory pause do not shift the reference.
        if let Some(rr) = rr_prev {
            if labels[i] == 'N' && (i < 2 || labels[i - 1] == 'N') {
                if rr_hist.len() == RR_MEMORY {
                    rr_hist.remove(0);
                }
                rr_hist.push(rr);
            }
        }
    }
    labels
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A pulse train: narrow QRS-like pulses, and one premature wide pulse at beat 20.
    fn pulses(fs: f64) -> (Vec<f64>, Vec<usize>) {
        let rr = (0.8 * fs) as usize;
        let mut peaks = Vec::new();
        let mut p = rr;
        for i in 0..40 {
            if i == 20 {
                p -= rr / 3; // premature by a third of an interval
            } else if i == 21 {
                p += rr / 3; // compensatory pause
            }
            peaks.push(p);
            p += rr;
        }
        let mut x = vec![0.0; p + rr];
        for (i, &pk) in peaks.iter().enumerate() {
            let width = if i == 20 { 0.040 * fs } else { 0.010 * fs };
            let sign = if i == 20 { -1.0 } else { 1.0 };
            for (j, v) in x.iter_mut().enumerate() {
                let d = (j as f64 - pk as f64) / width;
                if d.abs() < 6.0 {
                    *v += sign * (-0.5 * d * d).exp();
                }
            }
        }
        (x, peaks)
    }

    #[test]
    fn premature_wide_beat_is_v_and_the_rest_normal() {
        let fs = 250.0;
        let (x, peaks) = pulses(fs);
        let l = label_beats(&x, fs, &peaks);
        assert_eq!(l.len(), peaks.len());
        assert_eq!(l[20], 'V');
        let others = l
            .iter()
            .enumerate()
            .filter(|&(i, &c)| i != 20 && c != 'N')
            .count();
        assert_eq!(others, 0, "{l:?}");
    }

    #[test]
    fn degenerate_inputs_do_not_panic() {
        assert!(label_beats(&[], 250.0, &[]).is_empty());
        assert_eq!(label_beats(&[0.0; 10], 250.0, &[5]), vec!['N']);
        assert_eq!(label_beats(&[0.0; 1000], 250.0, &[100, 300, 500]).len(), 3);
    }
}
