//! Two detectors on one or two leads: which beat list the pipeline uses, and how a second lead
//! helps.
//!
//! In: the raw samples of one or more leads at `fs_hz`, the parameters of both detectors and a
//! [`DetectorChoice`]. Out: [`LeadDetection`] — the primary detector's beats, the other
//! detector's beats and, per window, the beat agreement bSQI of the two (Li, Mark & Clifford
//! 2008) and the lead the beats came from.
//!
//! Primary detector: by default the method of Elgendi, Jonkman & De Boer (2013), which scored
//! higher than our Pan & Tompkins (1985) on the open annotated records of `docs/validation.md`;
//! Pan–Tompkins is then the independent second opinion, and either can be made primary.
//!
//! Two leads ("choose per window", our rule): both detectors run on every lead; in each agreement
//! window (default 10 s) the beats are taken from the lead whose two detectors agree best, and a
//! lead other than the preferred one must beat the preferred lead's bSQI by `fuse_margin`
//! (default 0.2) so that a noise-free window never switches. Beats closer than the refractory
//! period across a window edge are merged (the earlier kept).
//!
//! Records sampled at 500 Hz or more are detected after zero-phase decimation to 250–500 Hz
//! (`signal::resample`), and each beat is then placed on the full-rate signal.
//!
//! The detectors and leads run concurrently (rayon); results do not depend on the thread count.

use serde::{Deserialize, Serialize};

use super::{agreement_windows, elgendi, pan_tompkins, DetectParams, ElgendiParams};
use crate::error::{Error, Result};
use crate::signal::fill_non_finite;
use crate::signal::resample::{decimate, detection_factor};

/// Which detector's beats the pipeline uses; the other one gives the agreement index.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum DetectorChoice {
    /// Elgendi, Jonkman & De Boer (2013) primary, Pan & Tompkins (1985) second (default).
    #[default]
    Elgendi,
    /// Pan & Tompkins (1985) primary, Elgendi et al. (2013) second.
    PanTompkins,
}

impl DetectorChoice {
    /// Display name of the primary detector.
    pub fn primary_name(self) -> &'static str {
        match self {
            DetectorChoice::Elgendi => "Elgendi et al. (2013)",
            DetectorChoice::PanTompkins => "Pan & Tompkins (1985)",
        }
    }

    /// Display name of the second detector.
    pub fn second_name(self) -> &'static str {
        match self {
            DetectorChoice::Elgendi => "Pan & Tompkins (1985)",
            DetectorChoice::PanTompkins => "Elgendi et al. (2013)",
        }
    }
}

/// Parameters of [`detect_leads`].
#[derive(Debug, Clone, PartialEq)]
pub struct FusionParams<'a> {
    /// Pan & Tompkins parameters.
    pub pan_tompkins: &'a DetectParams,
    /// Elgendi parameters.
    pub elgendi: &'a ElgendiParams,
    /// Primary detector.
    pub primary: DetectorChoice,
    /// Beat matching window for the agreement, seconds (EC57: 0.150).
    pub match_window_s: f64,
    /// Agreement window length, seconds.
    pub window_s: f64,
    /// bSQI margin by which another lead must beat the preferred one to be used, 0..1.
    pub fuse_margin: f64,
}

/// Beats of one record from one lead or from several leads chosen window by window.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct LeadDetection {
    /// Primary detector's R-peak samples, increasing.
    pub primary: Vec<usize>,
    /// Second detector's R-peak samples, increasing.
    pub second: Vec<usize>,
    /// Per agreement window: (start in seconds, bSQI of the chosen lead, chosen lead index into
    /// the `leads` argument).
    pub windows: Vec<(f64, f64, usize)>,
}

/// Primary and second detector's beats of one lead.
type BeatPair = (Vec<usize>, Vec<usize>);

fn run_both(x: &[f64], fs_hz: f64, p: &FusionParams) -> Result<BeatPair> {
    // Records sampled far above the detectors' design rate are detected after decimation, and
    // the beats are placed back on the full-rate signal.
    let q = detection_factor(fs_hz);
    let (pt, el) = if q > 1 {
        let filled;
        let input: &[f64] = if x.iter().all(|v| v.is_finite()) {
            x
        } else {
            filled = fill_non_finite(x)?;
            &filled
        };
        let low = decimate(input, fs_hz, q)?;
        let rate = fs_hz / q as f64;
        let (pt, el) = rayon::join(
            || pan_tompkins(&low, rate, p.pan_tompkins),
            || elgendi(&low, rate, p.elgendi),
        );
        (
            refine_full_rate(input, &pt?.samples, q, fs_hz),
            refine_full_rate(input, &el?, q, fs_hz),
        )
    } else {
        let (pt, el) = rayon::join(
            || pan_tompkins(x, fs_hz, p.pan_tompkins),
            || elgendi(x, fs_hz, p.elgendi),
        );
        (pt?.samples, el?)
    };
    Ok(match p.primary {
        DetectorChoice::Elgendi => (el, pt),
        DetectorChoice::PanTompkins => (pt, el),
    })
}

/// Place beats found at the decimated rate (sample `k` ↔ full-rate `k·q`) on the full-rate
/// signal: within ±2q samples, the sample farthest from the median of the surrounding ±60 ms
/// (the local baseline, so a polarity-free extreme as in the detectors' own refinement).
fn refine_full_rate(x: &[f64], low: &[usize], q: usize, fs_hz: f64) -> Vec<usize> {
    let wide = ((0.06 * fs_hz) as usize).max(2 * q);
    let mut buf: Vec<f64> = Vec::new();
    let mut out: Vec<usize> = Vec::with_capacity(low.len());
    for &k in low {
        let c = k * q;
        let (wlo, whi) = (c.saturating_sub(wide), (c + wide + 1).min(x.len()));
        let Some(seg) = x.get(wlo..whi) else { continue };
        buf.clear();
        buf.extend_from_slice(seg);
        let med = crate::stats::median_of_finite(&mut buf);
        let (lo, hi) = (c.saturating_sub(2 * q), (c + 2 * q + 1).min(x.len()));
        let best = (lo..hi).max_by(|&a, &b| (x[a] - med).abs().total_cmp(&(x[b] - med).abs()));
        if let Some(r) = best {
            if out.last().is_none_or(|&prev| r > prev) {
                out.push(r);
            }
        }
    }
    out
}

/// Detect beats on `leads` (all the same length, at `fs_hz`). With one lead, both detectors run
/// on it. With several, the first lead is the preferred one and each window's beats come from
/// the best-agreeing lead (see the module notes).
pub fn detect_leads(leads: &[&[f64]], fs_hz: f64, p: &FusionParams) -> Result<LeadDetection> {
    let Some(first) = leads.first() else {
        return Err(Error::Analysis("no lead to detect beats on".into()));
    };
    if !(0.0..=1.0).contains(&p.fuse_margin) {
        return Err(Error::param(
            "fuse_margin",
            format!("{} is outside [0, 1] (a bSQI difference)", p.fuse_margin),
        ));
    }
    let n = first.len();
    if leads.iter().any(|l| l.len() != n) {
        return Err(Error::Analysis(
            "leads of different lengths cannot be combined".into(),
        ));
    }
    let per_lead: Vec<BeatPair> = {
        use rayon::prelude::*;
        leads
            .par_iter()
            .map(|x| run_both(x, fs_hz, p))
            .collect::<Result<_>>()?
    };
    let win: Vec<Vec<(f64, f64)>> = per_lead
        .iter()
        .map(|(a, b)| agreement_windows(a, b, fs_hz, p.match_window_s, p.window_s, n))
        .collect();
    let n_win = win.first().map_or(0, Vec::len);
    let mut windows = Vec::with_capacity(n_win);
    for k in 0..n_win {
        let start = win[0][k].0;
        let mut best = (win[0][k].1, 0usize);
        for (li, w) in win.iter().enumerate().skip(1) {
            let q = w.get(k).map_or(f64::NAN, |x| x.1);
            if q > best.0 + p.fuse_margin && q > 0.0 {
                best = (q, li);
            }
        }
        windows.push((start, best.0, best.1));
    }
    if per_lead.len() == 1 {
        let (primary, second) = per_lead.into_iter().next().unwrap_or_default();
        return Ok(LeadDetection {
            primary,
            second,
            windows,
        });
    }
    let len = ((p.window_s * fs_hz).round() as usize).max(1);
    let refractory = (p.elgendi.refractory_s.max(p.pan_tompkins.refractory_s) * fs_hz) as usize;
    let stitch = |pick: fn(&BeatPair) -> &Vec<usize>| -> Vec<usize> {
        let mut out: Vec<usize> = Vec::new();
        for (k, &(_, _, li)) in windows.iter().enumerate() {
            let src = per_lead.get(li).map(pick);
            let (lo, hi) = (k * len, (k + 1) * len);
            for &s in src.into_iter().flatten() {
                if s < lo || s >= hi {
                    continue;
                }
                if out.last().is_none_or(|&prev| s >= prev + refractory.max(1)) {
                    out.push(s);
                }
            }
        }
        out
    };
    Ok(LeadDetection {
        primary: stitch(|x| &x.0),
        second: stitch(|x| &x.1),
        windows,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::beats::testsig::synth;

    fn params<'a>(pt: &'a DetectParams, el: &'a ElgendiParams) -> FusionParams<'a> {
        FusionParams {
            pan_tompkins: pt,
            elgendi: el,
            primary: DetectorChoice::Elgendi,
            match_window_s: 0.15,
            window_s: 10.0,
            fuse_margin: 0.2,
        }
    }

    #[test]
    fn a_noisy_second_half_is_taken_from_the_clean_lead() {
        let fs = 250.0;
        let (clean, truth) = synth(72.0, 90, fs, 0.02, 5);
        // Lead 0: the same beats, but its second half is drowned in white noise (seeded) that
        // the two detectors trip over in different ways.
        use rand::SeedableRng;
        use rand_distr::{Distribution, Normal};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(9);
        let normal = Normal::new(0.0, 0.6).unwrap();
        let mut noisy = clean.clone();
        // From 40 s on, a whole number of 10 s agreement windows.
        let half = (40.0 * fs) as usize;
        for v in noisy.iter_mut().skip(half) {
            *v += normal.sample(&mut rng);
        }
        let (pt, el) = (DetectParams::default(), ElgendiParams::default());
        let p = params(&pt, &el);
        let single = detect_leads(&[&noisy], fs, &p).unwrap();
        let fused = detect_leads(&[&noisy, &clean], fs, &p).unwrap();
        let s1 = crate::beats::score(&truth, &single.primary, fs, 0.15);
        let s2 = crate::beats::score(&truth, &fused.primary, fs, 0.15);
        // The fused list is at least as good, and perfect on this construction (EC57 window).
        assert!(s1.fp + s1.fn_ > 0, "the noise must hurt the single lead");
        assert_eq!((s2.fp, s2.fn_), (0, 0), "fused {s2:?}");
        // Windows of the noisy part chose lead 1; the clean first 40 s stayed on lead 0.
        assert_eq!(fused.windows.first().map(|w| w.2), Some(0));
        assert_eq!(fused.windows.last().map(|w| w.2), Some(1));
        let lead_of: Vec<usize> = fused.windows.iter().map(|w| w.2).collect();
        assert_eq!(&lead_of[..4], &[0, 0, 0, 0]);
    }

    #[test]
    fn high_rate_records_are_detected_after_decimation_at_full_precision() {
        // The same pulse train at 1000 Hz (decimated by 4 for detection) and at 250 Hz (native):
        // every beat found at both rates, and the 1000 Hz beats are placed at least as close to
        // the true R peaks (in seconds) as the native 250 Hz ones, give or take one 250 Hz sample.
        let (pt, el) = (DetectParams::default(), ElgendiParams::default());
        let p = params(&pt, &el);
        let worst_s = |fs: f64| {
            let (x, truth) = synth(75.0, 80, fs, 0.0, 12);
            let d = detect_leads(&[&x], fs, &p).unwrap();
            let s = crate::beats::score(&truth, &d.primary, fs, 0.15);
            assert_eq!((s.fp, s.fn_), (0, 0), "{fs} Hz: {s:?}");
            truth
                .iter()
                .filter_map(|&t| d.primary.iter().map(|&b| b.abs_diff(t)).min())
                .max()
                .unwrap() as f64
                / fs
        };
        let (hi, lo) = (worst_s(1000.0), worst_s(250.0));
        assert!(
            hi <= lo + 0.004,
            "worst offset {hi} s at 1000 Hz, {lo} s at 250 Hz"
        );
    }

    #[test]
    fn refuses_bad_margin_and_unequal_leads() {
        let (pt, el) = (DetectParams::default(), ElgendiParams::default());
        let mut p = params(&pt, &el);
        let a = vec![0.0; 100];
        let b = vec![0.0; 99];
        assert!(detect_leads(&[&a, &b], 250.0, &p).is_err());
        p.fuse_margin = 1.5;
        assert!(detect_leads(&[&a], 250.0, &p).is_err());
        assert!(detect_leads(&[], 250.0, &params(&pt, &el)).is_err());
    }
}
