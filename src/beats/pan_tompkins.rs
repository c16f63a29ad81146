//! QRS detection after Pan & Tompkins (1985), IEEE Trans Biomed Eng 32(3):230–236.
//!
//! In: one lead's samples (raw or conditioned), `fs_hz`, [`DetectParams`]. Out: a [`Detection`]
//! with R-peak sample indices on the input, increasing, and counters of search-back recoveries
//! and T-wave rejections.
//!
//! Stages, with this implementation's choices:
//! 1. Band-pass: a zero-phase Butterworth 5–15 Hz (order 2 prototype, applied forward and
//!    backward) replaces the original integer filters, which were designed for 200 Hz only; the
//!    pass band is the original's and any rate works.
//! 2. Five-point derivative `(2x[n+2] + x[n+1] − x[n−1] − 2x[n−2])/8` (centred, no delay),
//!    squaring, and a centred moving-window integrator of 150 ms. Because every stage is centred,
//!    the integrator peak lines up with the QRS and needs no delay compensation.
//! 3. Peaks of the integrated signal (local maxima; maxima closer than half the refractory period
//!    are merged, keeping the larger) are classified in time order with the dual adaptive
//!    thresholds on both the integrated (`SPKI`, `NPKI`) and the band-passed (`SPKF`, `NPKF`)
//!    signals: `THR1 = NPK + 0.25·(SPK − NPK)`, `THR2 = 0.5·THR1`, running estimates updated
//!    0.125/0.875 (0.25/0.75 after a search-back hit). The band-passed peak is the largest |value|
//!    within ±75 ms.
//! 4. Learning phase: over the first `learning_s`, `SPK` starts at half the maximum and `NPK` at
//!    half the mean of each signal (our initialisation; the paper gives only the idea).
//! 5. RR_AVERAGE1 (last 8 RR) and RR_AVERAGE2 (last 8 RR within 92–116 % of RR_AVERAGE2). When no
//!    QRS is found within `searchback_factor` (166 %) of RR_AVERAGE2 — RR_AVERAGE1 while the rhythm
//!    is irregular, 1 s before the first RR is known — the largest earlier peak above THR2 is
//!    taken. If there is none, `SPK` is pulled half-way to `NPK` (our addition, so that a large
//!    artefact cannot freeze the thresholds).
//! 6. Refractory period of 200 ms; a candidate within 360 ms of the previous QRS whose largest
//!    slope (of the band-passed signal) is below half that QRS's is a T wave.
//! 7. Irregular rhythm (last RR outside 92–116 % of RR_AVERAGE2): both thresholds are halved.
//! 8. R-peak refinement: within ±`peak_search_s` of the integrator peak, the sample of the input
//!    farthest from the window's median.
//!
//! Cost: O(n) time, three signal-length buffers, no per-sample allocation.

use std::borrow::Cow;

use serde::{Deserialize, Serialize};

use crate::error::{Error, Result};
use crate::params::Checked;
use crate::signal::{fill_non_finite, Sos};

/// Parameters of [`pan_tompkins`]; the defaults are those of Pan & Tompkins (1985).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct DetectParams {
    /// Pass band in Hz of the Butterworth band-pass. Default `(5.0, 15.0)`.
    pub band_hz: (f64, f64),
    /// Butterworth prototype order (band-pass has twice as many poles). Default 2.
    pub filter_order: usize,
    /// Moving-window integrator width, seconds. Default 0.150.
    pub integration_window_s: f64,
    /// Refractory period after a QRS, seconds. Default 0.200.
    pub refractory_s: f64,
    /// Candidates closer than this to the previous QRS get the T-wave slope test, seconds.
    /// Default 0.360.
    pub t_wave_window_s: f64,
    /// Search back when no QRS within this multiple of the RR average. Default 1.66.
    pub searchback_factor: f64,
    /// Learning period for the initial thresholds, seconds. Default 2.0.
    pub learning_s: f64,
    /// Half-width of the window where the R peak (and the band-passed peak) is sought around the
    /// integrator peak, seconds. Default 0.075.
    pub peak_search_s: f64,
}

impl Default for DetectParams {
    fn default() -> Self {
        DetectParams {
            band_hz: (5.0, 15.0),
            filter_order: 2,
            integration_window_s: 0.150,
            refractory_s: 0.200,
            t_wave_window_s: 0.360,
            searchback_factor: 1.66,
            learning_s: 2.0,
            peak_search_s: 0.075,
        }
    }
}

fn in_range(name: &str, v: f64, lo: f64, hi: f64, unit: &str) -> Result<()> {
    if !(v.is_finite() && (lo..=hi).contains(&v)) {
        return Err(Error::param(
            name,
            format!("{v} {unit} is outside the allowed range [{lo}, {hi}] {unit}"),
        ));
    }
    Ok(())
}

impl DetectParams {
    /// Validate the parameters that do not depend on the sampling rate.
    pub fn check(&self) -> Result<()> {
        crate::signal::filter::check_band(self.band_hz, self.filter_order, "filter_order")?;
        in_range(
            "integration_window_s",
            self.integration_window_s,
            0.02,
            1.0,
            "s",
        )?;
        in_range("refractory_s", self.refractory_s, 0.05, 1.0, "s")?;
        in_range("t_wave_window_s", self.t_wave_window_s, 0.0, 1.0, "s")?;
        in_range(
            "searchback_factor",
            self.searchback_factor,
            1.0,
            5.0,
            "(ratio)",
        )?;
        in_range("learning_s", self.learning_s, 0.5, 60.0, "s")?;
        in_range("peak_search_s", self.peak_search_s, 0.01, 0.5, "s")?;
        Ok(())
    }
}

/// Result of a detection run.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Detection {
    /// R-peak sample indices on the input signal, strictly increasing.
    pub samples: Vec<usize>,
    /// Beats recovered by search-back with the lower threshold.
    pub searchback_count: usize,
    /// Candidates rejected as T waves.
    pub t_wave_rejected: usize,
}

/// A Pan–Tompkins detector designed for one sampling rate; reuse it for many leads.
#[derive(Debug, Clone)]
pub struct PanTompkins {
    fs_hz: f64,
    p: DetectParams,
    band: Sos,
    half_int: usize,
    refractory: usize,
    merge: usize,
    t_wave: usize,
    search: usize,
    learning: usize,
}

/// A classified-later peak of the integrated signal.
#[derive(Debug, Clone, Copy)]
struct Candidate {
    at: usize,
    peak_i: f64,
    peak_f: f64,
    slope: f64,
}

/// Running RR statistics (RR_AVERAGE1 / RR_AVERAGE2), in samples.
struct RrStats {
    all: [f64; 8],
    n_all: usize,
    reg: [f64; 8],
    n_reg: usize,
    irregular: bool,
}

impl RrStats {
    fn new() -> Self {
        RrStats {
            all: [0.0; 8],
            n_all: 0,
            reg: [0.0; 8],
            n_reg: 0,
            irregular: false,
        }
    }

    fn mean(buf: &[f64; 8], n: usize) -> Option<f64> {
        let k = n.min(8);
        (k > 0).then(|| buf.iter().take(k).sum::<f64>() / k as f64)
    }

    fn avg1(&self) -> Option<f64> {
        Self::mean(&self.all, self.n_all)
    }

    fn avg2(&self) -> Option<f64> {
        Self::mean(&self.reg, self.n_reg)
    }

    fn push(&mut self, rr: f64) {
        self.all[self.n_all % 8] = rr;
        self.n_all += 1;
        match self.avg2() {
            None => {
                self.reg[0] = rr;
                self.n_reg = 1;
                self.irregular = false;
            }
            Some(a2) => {
                let regular = rr >= 0.92 * a2 && rr <= 1.16 * a2;
                if regular {
                    self.reg[self.n_reg % 8] = rr;
                    self.n_reg += 1;
                }
                self.irregular = !regular;
            }
        }
    }

    /// RR average that sets the search-back limit.
    fn reference(&self) -> Option<f64> {
        if self.irregular {
            self.avg1()
        } else {
            self.avg2()
        }
    }
}

/// Running signal/noise peak levels of one signal.
#[derive(Debug, Clone, Copy)]
struct Levels {
    spk: f64,
    npk: f64,
}

impl Levels {
    fn thr1(&self, irregular: bool) -> f64 {
        let t = self.npk + 0.25 * (self.spk - self.npk);
        if irregular {
            0.5 * t
        } else {
            t
        }
    }
}

fn deriv(bp: &[f64], i: usize) -> f64 {
    if i < 2 || i + 2 >= bp.len() {
        return 0.0;
    }
    (2.0 * bp[i + 2] + bp[i + 1] - bp[i - 1] - 2.0 * bp[i - 2]) / 8.0
}

impl PanTompkins {
    /// Design the band-pass of checked parameters `p` for `fs_hz` (the rate is checked here).
    pub fn new(fs_hz: f64, p: &Checked<DetectParams>) -> Result<PanTompkins> {
        let band = Sos::checked_bandpass(p.filter_order, p.band_hz, fs_hz)?;
        let samples = |s: f64| (s * fs_hz).round().max(0.0) as usize;
        Ok(PanTompkins {
            fs_hz,
            p: (**p).clone(),
            band,
            half_int: samples(0.5 * p.integration_window_s),
            refractory: samples(p.refractory_s).max(1),
            merge: samples(0.5 * p.refractory_s),
            t_wave: samples(p.t_wave_window_s),
            search: samples(p.peak_search_s).max(1),
            learning: samples(p.learning_s).max(1),
        })
    }

    /// Sampling rate the detector was designed for, Hz.
    pub fn fs_hz(&self) -> f64 {
        self.fs_hz
    }

    /// The parameters in use.
    pub fn params(&self) -> &DetectParams {
        &self.p
    }

    /// Detect R peaks in `x`. Non-finite samples are first replaced by linear interpolation; a
    /// lead without any finite sample is an error, an empty lead gives no beats.
    pub fn detect(&self, x: &[f64]) -> Result<Detection> {
        let n = x.len();
        if n == 0 {
            return Ok(Detection::default());
        }
        let input: Cow<[f64]> = if x.iter().all(|v| v.is_finite()) {
            Cow::Borrowed(x)
        } else {
            Cow::Owned(fill_non_finite(x)?)
        };
        let bp = self.band.filtfilt(&input);
        let mwi = self.integrate(&bp);

        // Learning phase.
        let l = self.learning.min(n);
        let max_i = mwi.iter().take(l).fold(0.0f64, |m, v| m.max(*v));
        let mean_i = mwi.iter().take(l).sum::<f64>() / l as f64;
        let max_f = bp.iter().take(l).fold(0.0f64, |m, v| m.max(v.abs()));
        let mean_f = bp.iter().take(l).map(|v| v.abs()).sum::<f64>() / l as f64;
        let mut st = State {
            li: Levels {
                spk: 0.5 * max_i,
                npk: 0.5 * mean_i,
            },
            lf: Levels {
                spk: 0.5 * max_f,
                npk: 0.5 * mean_f,
            },
            rr: RrStats::new(),
            qrs: Vec::with_capacity(n / (self.refractory.max(1)) / 2 + 8),
            last: None,
            gap_from: 0,
            pending: Vec::with_capacity(64),
            searchback: 0,
            t_rejected: 0,
        };

        // Candidate peaks of the integrated signal, merged within `merge` samples.
        let mut pending: Option<(usize, f64)> = None;
        for i in 1..n.saturating_sub(1) {
            let v = mwi[i];
            if !(v > mwi[i - 1] && v >= mwi[i + 1] && v > 0.0) {
                continue;
            }
            match pending {
                Some((j, pv)) if i - j <= self.merge => {
                    if v > pv {
                        pending = Some((i, v));
                    }
                }
                Some((j, pv)) => {
                    self.classify(&mut st, self.candidate(&bp, j, pv));
                    pending = Some((i, v));
                }
                None => pending = Some((i, v)),
            }
        }
        if let Some((j, pv)) = pending {
            self.classify(&mut st, self.candidate(&bp, j, pv));
        }
        self.search_back(&mut st, n);

        let samples = self.refine(&input, &st.qrs);
        Ok(Detection {
            samples,
            searchback_count: st.searchback,
            t_wave_rejected: st.t_rejected,
        })
    }

    /// Centred moving-window integral (mean) of the squared five-point derivative.
    fn integrate(&self, bp: &[f64]) -> Vec<f64> {
        let n = bp.len();
        let h = self.half_int;
        let w = (2 * h + 1) as f64;
        let mut out = Vec::with_capacity(n);
        let mut sum = 0.0;
        for j in 0..h.min(n) {
            let d = deriv(bp, j);
            sum += d * d;
        }
        for i in 0..n {
            if i + h < n {
                let d = deriv(bp, i + h);
                sum += d * d;
            }
            if i > h {
                let d = deriv(bp, i - h - 1);
                sum -= d * d;
            }
            out.push(sum.max(0.0) / w);
        }
        out
    }

    fn candidate(&self, bp: &[f64], at: usize, peak_i: f64) -> Candidate {
        let lo = at.saturating_sub(self.search);
        let hi = (at + self.search + 1).min(bp.len());
        let mut peak_f = 0.0f64;
        let mut slope = 0.0f64;
        for k in lo..hi {
            peak_f = peak_f.max(bp[k].abs());
            slope = slope.max(deriv(bp, k).abs());
        }
        Candidate {
            at,
            peak_i,
            peak_f,
            slope,
        }
    }

    fn accept(&self, st: &mut State, c: Candidate, searchback: bool) {
        let w = if searchback { 0.25 } else { 0.125 };
        st.li.spk = w * c.peak_i + (1.0 - w) * st.li.spk;
        st.lf.spk = w * c.peak_f + (1.0 - w) * st.lf.spk;
        if let Some(prev) = st.last {
            st.rr.push(c.at.saturating_sub(prev.at) as f64);
        }
        st.qrs.push(c.at);
        st.last = Some(c);
        st.gap_from = c.at;
        let refractory = self.refractory;
        st.pending.retain(|p| p.at >= c.at + refractory);
        if searchback {
            st.searchback += 1;
        }
    }

    fn noise(st: &mut State, c: Candidate) {
        st.li.npk = 0.125 * c.peak_i + 0.875 * st.li.npk;
        st.lf.npk = 0.125 * c.peak_f + 0.875 * st.lf.npk;
    }

    /// Search back while the gap since the last QRS (up to `now`) exceeds the limit.
    fn search_back(&self, st: &mut State, now: usize) {
        loop {
            let since = st.gap_from;
            let rr = st.rr.reference().unwrap_or(self.fs_hz);
            let limit = self.p.searchback_factor * rr;
            if ((now - since.min(now)) as f64) <= limit {
                return;
            }
            let irregular = st.rr.irregular;
            let thr_i2 = 0.5 * st.li.thr1(irregular);
            let thr_f2 = 0.5 * st.lf.thr1(irregular);
            let last = st.last;
            let t_wave = self.t_wave;
            let best = st
                .pending
                .iter()
                .filter(|c| c.peak_i > thr_i2 && c.peak_f > thr_f2 && c.at < now)
                .filter(|c| {
                    last.is_none_or(|l| c.at - l.at.min(c.at) >= t_wave || c.slope >= 0.5 * l.slope)
                })
                .max_by(|a, b| a.peak_i.total_cmp(&b.peak_i))
                .copied();
            match best {
                Some(c) => self.accept(st, c, true),
                None => {
                    st.pending.clear();
                    // Nothing to recover: relax the signal levels half-way to the noise levels.
                    st.li.spk = st.li.npk + 0.5 * (st.li.spk - st.li.npk);
                    st.lf.spk = st.lf.npk + 0.5 * (st.lf.spk - st.lf.npk);
                    // Restart the gap clock so that the relaxation happens once per limit.
                    st.gap_from = now;
                    return;
                }
            }
        }
    }

    fn classify(&self, st: &mut State, c: Candidate) {
        if let Some(last) = st.last {
            if c.at - last.at.min(c.at) < self.refractory {
                return;
            }
        }
        self.search_back(st, c.at);
        if let Some(last) = st.last {
            if c.at - last.at.min(c.at) < self.refractory {
                return;
            }
        }
        let irregular = st.rr.irregular;
        if c.peak_i > st.li.thr1(irregular) && c.peak_f > st.lf.thr1(irregular) {
            if let Some(last) = st.last {
                if c.at.saturating_sub(last.at) < self.t_wave && c.slope < 0.5 * last.slope {
                    st.t_rejected += 1;
                    Self::noise(st, c);
                    return;
                }
            }
            self.accept(st, c, false);
        } else {
            Self::noise(st, c);
            st.pending.push(c);
        }
    }

    /// Move each integrator peak to the input sample farthest from the local median.
    fn refine(&self, x: &[f64], at: &[usize]) -> Vec<usize> {
        let mut buf = Vec::with_capacity(2 * self.search + 1);
        let mut out: Vec<usize> = Vec::with_capacity(at.len());
        for &i in at {
            let lo = i.saturating_sub(self.search);
            let hi = (i + self.search + 1).min(x.len());
            if lo >= hi {
                continue;
            }
            let Some(best) = farthest_from_median(x, lo, hi, &mut buf) else {
                continue;
            };
            if out.last().is_none_or(|&prev| best > prev) {
                out.push(best);
            }
        }
        out
    }
}

/// Index in `[lo, hi)` of the sample of `x` farthest from the median of `x[lo..hi]` (the R peak
/// of a QRS whatever its polarity, insensitive to baseline offset). `buf` is scratch space.
pub(crate) fn farthest_from_median(
    x: &[f64],
    lo: usize,
    hi: usize,
    buf: &mut Vec<f64>,
) -> Option<usize> {
    let seg = x.get(lo..hi)?;
    if seg.is_empty() {
        return None;
    }
    buf.clear();
    buf.extend_from_slice(seg);
    let mid = buf.len() / 2;
    let (_, med, _) = buf.select_nth_unstable_by(mid, f64::total_cmp);
    let med = *med;
    let mut best = lo;
    let mut best_v = -1.0;
    for (k, v) in seg.iter().enumerate() {
        let d = (v - med).abs();
        if d > best_v {
            best_v = d;
            best = lo + k;
        }
    }
    Some(best)
}

/// Mutable detector state of one run.
struct State {
    li: Levels,
    lf: Levels,
    rr: RrStats,
    qrs: Vec<usize>,
    last: Option<Candidate>,
    /// Sample from which the search-back gap is measured (last QRS or last relaxation).
    gap_from: usize,
    pending: Vec<Candidate>,
    searchback: usize,
    t_rejected: usize,
}

/// Detect R peaks with a [`PanTompkins`] detector designed for `fs_hz` (to process many leads at
/// one rate, build the detector once with [`PanTompkins::new`]).
pub fn pan_tompkins(x: &[f64], fs_hz: f64, p: &Checked<DetectParams>) -> Result<Detection> {
    PanTompkins::new(fs_hz, p)?.detect(x)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::beats::score;
    use crate::beats::testsig::{gauss, synth};

    #[test]
    fn detects_synthetic_beats_at_many_rates() {
        for (k, bpm) in [40.0, 60.0, 120.0, 180.0].into_iter().enumerate() {
            for fs in [250.0, 360.0] {
                let (x, r) = synth(bpm, 150, fs, 0.05, 100 + k as u64);
                let d = pan_tompkins(&x, fs, &crate::params::Checked::default()).unwrap();
                let s = score(&r, &d.samples, fs, 0.150);
                eprintln!(
                    "{bpm} bpm, {fs} Hz: TP {} FP {} FN {} Se {:.4} +P {:.4}",
                    s.tp, s.fp, s.fn_, s.se, s.ppv
                );
                // Source: ANSI/AAMI EC57 matching (150 ms); the task's bar for clean synthetic
                // pulses is Se and +P >= 99 %.
                assert!(s.se >= 0.99 && s.ppv >= 0.99, "{bpm} bpm at {fs} Hz: {s:?}");
                // R-peak refinement lands within 20 ms of the true peak for every matched beat
                // (our design target, not a published value).
                for &rs in &r {
                    let near = d.samples.iter().map(|&ds| ds.abs_diff(rs)).min().unwrap();
                    assert!(
                        (near as f64) <= 0.02 * fs,
                        "{bpm} bpm: R at {rs} off by {near}"
                    );
                }
                assert!(d.samples.windows(2).all(|w| w[0] < w[1]));
            }
        }
    }

    #[test]
    fn refractory_period_merges_close_peaks() {
        let fs = 250.0;
        for gap_s in [0.100, 0.160] {
            // A QRS every second followed by a second, equal QRS `gap_s` later.
            let n = 30 * 250;
            let x: Vec<f64> = (0..n)
                .map(|i| {
                    let t = i as f64 / fs;
                    (1..30)
                        .map(|b| gauss(t, b as f64, 0.01) + gauss(t, b as f64 + gap_s, 0.01))
                        .sum()
                })
                .collect();
            let r: Vec<usize> = (1..30).map(|b| b * 250).collect();
            let d = pan_tompkins(&x, fs, &crate::params::Checked::default()).unwrap();
            // Source: Pan & Tompkins (1985): 200 ms refractory period, one detection per pair.
            assert_eq!(d.samples.len(), 29, "gap {gap_s}: {:?}", d.samples);
            let s = score(&r, &d.samples, fs, 0.150);
            assert_eq!(s.tp, 29);
        }
    }

    #[test]
    fn tall_t_wave_is_not_a_beat() {
        let fs = 250.0;
        let n = 40 * 250;
        // QRS every second; a tall, broad T wave 300 ms after each.
        let x: Vec<f64> = (0..n)
            .map(|i| {
                let t = i as f64 / fs;
                (1..40)
                    .map(|b| gauss(t, b as f64, 0.01) + 1.2 * gauss(t, b as f64 + 0.3, 0.04))
                    .sum()
            })
            .collect();
        let r: Vec<usize> = (1..40).map(|b| b * 250).collect();
        let d = pan_tompkins(&x, fs, &crate::params::Checked::default()).unwrap();
        let s = score(&r, &d.samples, fs, 0.150);
        // Source: Pan & Tompkins (1985) T-wave test (within 360 ms, slope < half the QRS's).
        assert_eq!((s.tp, s.fp, s.fn_), (39, 0, 0), "{d:?}");
        assert!(d.t_wave_rejected > 0);
        // Without the T-wave test (window 0 s) the same T waves pass the thresholds, so the
        // check above is what rejects them.
        let p = DetectParams {
            t_wave_window_s: 0.0,
            ..DetectParams::default()
        };
        let d0 = pan_tompkins(&x, fs, &crate::params::ck(p.clone())).unwrap();
        assert!(score(&r, &d0.samples, fs, 0.150).fp > 10, "{d0:?}");
    }

    #[test]
    fn search_back_recovers_a_small_beat() {
        let fs = 250.0;
        let n = 40 * 250;
        // Regular beats; beat 20 has 0.45 of the height, so its integrated peak (~0.45² = 0.2 of
        // the others) lies between THR2 (~0.125) and THR1 (~0.25): found only by search-back.
        let x: Vec<f64> = (0..n)
            .map(|i| {
                let t = i as f64 / fs;
                (1..40)
                    .map(|b| if b == 20 { 0.45 } else { 1.0 } * gauss(t, b as f64, 0.01))
                    .sum()
            })
            .collect();
        let r: Vec<usize> = (1..40).map(|b| b * 250).collect();
        let d = pan_tompkins(&x, fs, &crate::params::Checked::default()).unwrap();
        let s = score(&r, &d.samples, fs, 0.150);
        assert_eq!((s.tp, s.fp, s.fn_), (39, 0, 0), "{d:?}");
        assert!(d.searchback_count >= 1);
    }

    #[test]
    fn edge_cases_and_params() {
        assert!(pan_tompkins(&[], 250.0, &crate::params::Checked::default())
            .unwrap()
            .samples
            .is_empty());
        assert!(pan_tompkins(&[f64::NAN; 10], 250.0, &crate::params::Checked::default()).is_err());
        let flat = pan_tompkins(&[0.0; 5000], 250.0, &crate::params::Checked::default()).unwrap();
        assert!(flat.samples.is_empty());
        assert!(pan_tompkins(&[0.0; 100], 20.0, &crate::params::Checked::default()).is_err());
        let bad = DetectParams {
            refractory_s: -1.0,
            ..DetectParams::default()
        };
        assert!(bad.check().is_err());
        let json = serde_json::to_string(&DetectParams::default()).unwrap();
        assert_eq!(
            serde_json::from_str::<DetectParams>(&json).unwrap(),
            DetectParams::default()
        );
        // NaN samples are bridged.
        let (mut x, r) = synth(60.0, 30, 250.0, 0.02, 5);
        x[3000] = f64::NAN;
        let d = pan_tompkins(&x, 250.0, &crate::params::Checked::default()).unwrap();
        assert!(score(&r, &d.samples, 250.0, 0.15).se >= 0.96);
    }

    /// 24 h at 250 Hz; run with `cargo test --release -- --ignored detect_speed --nocapture`.
    #[test]
    #[ignore]
    fn detect_speed() {
        let fs = 250.0;
        let (x, r) = synth(70.0, 24 * 60 * 70, fs, 0.05, 9);
        let det = PanTompkins::new(fs, &crate::params::Checked::default()).unwrap();
        let t0 = std::time::Instant::now();
        let d = det.detect(&x).unwrap();
        let el = t0.elapsed().as_secs_f64();
        let s = score(&r, &d.samples, fs, 0.15);
        eprintln!(
            "{} samples: {el:.3} s, Se {:.5} +P {:.5}",
            x.len(),
            s.se,
            s.ppv
        );
    }
}
