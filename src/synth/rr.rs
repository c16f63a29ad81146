//! RR process and beat schedule: when each beat happens and what kind of beat it is.
//!
//! In: the checked [`SynthParams`] and a seeded random stream. Out: a [`Tachogram`] (the RR
//! process as a function of time) and the list of [`ScheduledBeat`]s, exact R times in seconds.
//!
//! The RR process follows McSharry, Clifford, Tarassenko & Smith (2003), IEEE Trans. Biomed. Eng.
//! 50:289–294: its power spectrum is the sum of two Gaussians, one in the low-frequency band
//! (Mayer waves, ≈ 0.1 Hz) and one in the high-frequency band (respiratory sinus arrhythmia,
//! ≈ 0.25 Hz), of width ≈ 0.01 Hz and power ratio LF/HF; a series with that spectrum is made by an
//! inverse FFT of the amplitude spectrum with random phases and then scaled to the requested mean
//! and standard deviation (the details of the paper are recalled from memory). Our choice of
//! sampling: the paper makes the series at 1 Hz and up-samples it; we generate it directly at
//! [`TACHOGRAM_RATE_HZ`] (4 Hz, well above both bands) and read the RR of the beat starting at
//! time t by linear interpolation, `RR = rr(t)`, so the RR tachogram sampled at the beat times
//! carries the designed spectrum.
//!
//! Irregular-rhythm episodes draw RR independently from a gamma distribution (our choice:
//! positive, right-skewed, exact coefficient of variation) around a faster mean, with no LF/HF
//! structure. Premature ectopic beats come after a shortened coupling interval (60–75 % of the
//! current RR, never under 250 ms) and are followed by a full compensatory pause, so coupling + pause = 2 RR exactly.

use super::params::SynthParams;
use super::schedule::SETTLE_S;
pub(crate) use super::schedule::{BeatKind, ScheduledBeat};
use crate::error::{Error, Result};
use rand::Rng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Gamma};
use rustfft::num_complex::Complex;
use std::f64::consts::PI;

/// Sampling rate of the generated RR process, Hz.
pub(crate) const TACHOGRAM_RATE_HZ: f64 = 4.0;
/// Shortest RR the generator will ever produce, seconds.
pub(crate) const RR_MIN_S: f64 = 0.12;
/// Longest RR the generator will ever produce, seconds.
pub(crate) const RR_MAX_S: f64 = 6.0;
/// Range of the coupling interval of a premature ectopic beat, fraction of the current RR.
pub(crate) const COUPLING_RANGE: (f64, f64) = (0.60, 0.75);
/// Shortest coupling interval of a premature ectopic beat, seconds: a ventricular beat cannot
/// follow the previous one before the ventricles have recovered, about a quarter of a second
/// (common practice; the exact value is ours). At fast rates, where 60–75 % of the RR would be
/// shorter, no ectopic beat is placed.
pub(crate) const MIN_COUPLING_S: f64 = 0.25;
/// Seconds of beats scheduled before t = 0 (at constant RR) so the model can settle.
pub(crate) const WARM_UP_S: f64 = SETTLE_S + 2.0;

/// The regular-rhythm RR process `rr(t)`, sampled at [`TACHOGRAM_RATE_HZ`] from t = 0.
#[derive(Debug, Clone)]
pub(crate) struct Tachogram {
    rr_s: Vec<f64>,
}

impl Tachogram {
    /// McSharry et al. (2003) RR process for `p`, long enough to cover `span_s` seconds.
    pub(crate) fn spectral(p: &SynthParams, span_s: f64, rng: &mut ChaCha8Rng) -> Tachogram {
        let mean_rr_s = 60.0 / p.mean_hr_bpm;
        // Source: McSharry et al. (2003) / their generator convention, from memory.
        let rr_std_s = 60.0 * p.hr_std_bpm / (p.mean_hr_bpm * p.mean_hr_bpm);
        let n = ((span_s * TACHOGRAM_RATE_HZ).ceil() as usize).max(1024);
        let unit = unit_series(p, n, rng);
        let lo = (0.4 * mean_rr_s).max(RR_MIN_S);
        let hi = (2.5 * mean_rr_s).min(RR_MAX_S);
        let rr_s = unit
            .into_iter()
            .map(|u| (mean_rr_s + rr_std_s * u).clamp(lo, hi))
            .collect();
        Tachogram { rr_s }
    }

    /// RR in seconds of a beat interval starting at time `t_s` (linear interpolation; constant
    /// beyond both ends).
    pub(crate) fn at(&self, t_s: f64) -> f64 {
        let x = t_s * TACHOGRAM_RATE_HZ;
        let last = self.rr_s.len().saturating_sub(1);
        if x.is_nan() || x <= 0.0 {
            return self.rr_s.first().copied().unwrap_or(1.0);
        }
        let i = x.floor() as usize;
        if i >= last {
            return self.rr_s.get(last).copied().unwrap_or(1.0);
        }
        let f = x - i as f64;
        match (self.rr_s.get(i), self.rr_s.get(i + 1)) {
            (Some(a), Some(b)) => a + f * (b - a),
            _ => 1.0,
        }
    }
}

/// Zero-mean, unit-variance series of length `n` at [`TACHOGRAM_RATE_HZ`] whose spectrum is the
/// two-Gaussian LF/HF shape of McSharry et al. (2003): amplitudes `sqrt(S(f))`, random phases,
/// inverse FFT.
fn unit_series(p: &SynthParams, n: usize, rng: &mut ChaCha8Rng) -> Vec<f64> {
    let lf_share = p.lf_hf_ratio / (1.0 + p.lf_hf_ratio);
    let hf_share = 1.0 / (1.0 + p.lf_hf_ratio);
    let c = p.band_width_hz;
    let gauss =
        |f: f64, f0: f64| (-(f - f0) * (f - f0) / (2.0 * c * c)).exp() / (c * (2.0 * PI).sqrt());
    let spectrum = |f: f64| lf_share * gauss(f, p.lf_hz) + hf_share * gauss(f, p.hf_hz);

    let mut buf = vec![Complex::new(0.0, 0.0); n];
    let half = n / 2;
    for k in 1..=half {
        let f = k as f64 * TACHOGRAM_RATE_HZ / n as f64;
        let amp = spectrum(f).sqrt();
        let phase = rng.gen::<f64>() * 2.0 * PI;
        let v = Complex::from_polar(amp, phase);
        if 2 * k == n {
            // Nyquist bin of an even length must be real.
            buf[k] = Complex::new(v.re, 0.0);
        } else {
            buf[k] = v;
            buf[n - k] = v.conj();
        }
    }
    let mut planner = rustfft::FftPlanner::<f64>::new();
    planner.plan_fft_inverse(n).process(&mut buf);
    let mut x: Vec<f64> = buf.iter().map(|c| c.re).collect();
    let mean = x.iter().sum::<f64>() / n as f64;
    let var = x.iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / n as f64;
    let sd = var.sqrt();
    for v in &mut x {
        *v = if sd > 0.0 { (*v - mean) / sd } else { 0.0 };
    }
    x
}

/// Is `t_s` inside one of the (sorted) episodes `[start, end)`?
pub(crate) fn in_episode(episodes: &[(f64, f64)], t_s: f64) -> bool {
    episodes.iter().any(|&(a, b)| t_s >= a && t_s < b)
}

/// All beats from the warm-up before t = 0 up to and including the first beat at or after
/// `duration_s`, in time order. Uses `tach` in regular stretches, gamma-distributed RR inside
/// irregular episodes, and inserts premature ectopic beats with compensatory pauses.
pub(crate) fn schedule(
    p: &SynthParams,
    tach: &Tachogram,
    duration_s: f64,
    rng: &mut ChaCha8Rng,
) -> Result<Vec<ScheduledBeat>> {
    let episodes = &p.irregular_episodes;
    let kind_at = |t: f64| {
        if in_episode(episodes, t) {
            BeatKind::Conducted
        } else {
            BeatKind::Sinus
        }
    };
    // Irregular rhythm: gamma RR with mean `irr_mean_s` and CV `irregular_rr_cv`.
    let irr_mean_s = (60.0 / (p.mean_hr_bpm * p.irregular_rate_factor)).max(0.2);
    let gamma = if p.irregular_rr_cv > 1e-6 {
        let shape = 1.0 / (p.irregular_rr_cv * p.irregular_rr_cv);
        Some(
            Gamma::new(shape, irr_mean_s / shape)
                .map_err(|e| Error::param("irregular_rr_cv", format!("gamma RR law: {e}")))?,
        )
    } else {
        None
    };
    // Probability that a normal beat is followed by an ectopic one, so that (with no two
    // ectopic beats in a row) the long-run fraction of ectopic beats is `ectopic_rate`.
    let q = p.ectopic_rate / (1.0 - p.ectopic_rate);
    // Normal beats since the last ectopic one, for a fixed pattern (`ectopic_every`).
    let mut since_ectopic = 0usize;

    // First beat in the record at a random phase; warm-up beats before it at constant RR.
    let rr0 = tach.at(0.0);
    let t0 = rng.gen::<f64>() * rr0;
    let n_warm = (WARM_UP_S / rr0).ceil() as usize + 1;
    let mut beats: Vec<ScheduledBeat> = (1..=n_warm)
        .rev()
        .map(|k| ScheduledBeat {
            t_s: t0 - k as f64 * rr0,
            kind: BeatKind::Sinus,
        })
        .collect();
    beats.push(ScheduledBeat {
        t_s: t0,
        kind: kind_at(t0),
    });

    let max_beats = (duration_s / RR_MIN_S).ceil() as usize + n_warm + 16;
    let mut t = t0;
    while t < duration_s {
        if beats.len() > max_beats {
            return Err(Error::Analysis(
                "beat schedule did not reach the end of the record".into(),
            ));
        }
        if in_episode(episodes, t) {
            let rr = match &gamma {
                Some(g) => g.sample(rng),
                None => irr_mean_s,
            };
            let rr = rr.clamp((0.3 * irr_mean_s).max(RR_MIN_S), 3.0 * irr_mean_s);
            t += rr;
            beats.push(ScheduledBeat {
                t_s: t,
                kind: kind_at(t),
            });
            continue;
        }
        let rr = tach.at(t);
        let draw: f64 = rng.gen();
        let coupling = COUPLING_RANGE.0 + (COUPLING_RANGE.1 - COUPLING_RANGE.0) * rng.gen::<f64>();
        let t_v = t + coupling * rr;
        // The beat at `t` is never ectopic itself (an ectopic beat is always followed by a normal
        // one), so ectopic beats never come two in a row.
        let wanted = if p.ectopic_every >= 2 {
            since_ectopic + 2 >= p.ectopic_every
        } else {
            draw < q
        };
        let ectopic = wanted
            && coupling * rr >= MIN_COUPLING_S
            && t_v < duration_s
            && !in_episode(episodes, t_v);
        if ectopic {
            since_ectopic = 0;
            beats.push(ScheduledBeat {
                t_s: t_v,
                kind: BeatKind::Ventricular,
            });
            // Full compensatory pause: the next beat comes where it would have without the
            // ectopic beat two intervals later.
            t += 2.0 * rr;
            beats.push(ScheduledBeat {
                t_s: t,
                kind: kind_at(t),
            });
        } else {
            since_ectopic += 1;
            t += rr;
            beats.push(ScheduledBeat {
                t_s: t,
                kind: kind_at(t),
            });
        }
    }
    Ok(beats)
}
