//! Additive components: fibrillatory baseline inside irregular episodes, and the four kinds of
//! recording noise (baseline wander, mains hum, muscle noise, electrode-motion bursts).
//!
//! In: a lead (mV) to add into, the sampling rate and a seeded random stream. Out: the same lead
//! with the component added. Every component draws from its own stream, so switching one off does
//! not change the others. The shapes are common practice in ECG simulation, with our own choices
//! of constants:
//! - fibrillatory baseline: three sinusoids between 4 and 9 Hz whose frequencies and amplitudes
//!   drift slowly, faded in and out over 0.5 s at the episode edges;
//! - baseline wander: a respiratory sinusoid at 0.2–0.3 Hz (60 % of the amplitude) plus three
//!   slow drift sinusoids at 0.005–0.05 Hz (40 %);
//! - mains hum: a sinusoid at `mains_hz`, left out at or above the Nyquist frequency;
//! - muscle noise: white Gaussian noise band-passed by the difference of two one-pole low-pass
//!   filters (≈ 10 Hz to min(150 Hz, 0.45 fs)), scaled by its exact stationary variance to the
//!   requested RMS;
//! - electrode motion: Poisson-timed bursts, each a Hann-windowed 0.5–3 Hz oscillation plus a
//!   baseline jump that relaxes exponentially.

use rand::Rng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use std::f64::consts::PI;

/// A sinusoid advanced by complex rotation (cheap, no `sin` per sample).
struct Oscillator {
    c: f64,
    s: f64,
    dc: f64,
    ds: f64,
    steps: u32,
}

impl Oscillator {
    fn new(freq_hz: f64, fs_hz: f64, phase: f64) -> Oscillator {
        let d = 2.0 * PI * freq_hz / fs_hz;
        Oscillator {
            c: phase.cos(),
            s: phase.sin(),
            dc: d.cos(),
            ds: d.sin(),
            steps: 0,
        }
    }

    /// Current sine value, then advance one sample.
    #[inline]
    fn next_sin(&mut self) -> f64 {
        let v = self.s;
        let (c, s) = (
            self.c * self.dc - self.s * self.ds,
            self.s * self.dc + self.c * self.ds,
        );
        self.c = c;
        self.s = s;
        self.steps += 1;
        if self.steps % 4096 == 0 {
            let r = (c * c + s * s).sqrt();
            if r > 0.0 {
                self.c /= r;
                self.s /= r;
            }
        }
        v
    }
}

fn uniform(rng: &mut ChaCha8Rng, lo: f64, hi: f64) -> f64 {
    lo + (hi - lo) * rng.gen::<f64>()
}

/// Add the fibrillatory baseline (≈ `amp_mv` peak) inside each episode `[start_s, end_s)`.
pub(crate) fn add_fibrillation(
    lead: &mut [f64],
    fs_hz: f64,
    episodes: &[(f64, f64)],
    amp_mv: f64,
    rng: &mut ChaCha8Rng,
) {
    if amp_mv <= 0.0 {
        return;
    }
    const N_COMP: usize = 3;
    const RAMP_S: f64 = 0.5;
    /// One drifting component: slow oscillators for frequency drift and amplitude modulation.
    struct Comp {
        f0_hz: f64,
        phase: f64,
        rel: f64,
        drift: Oscillator,
        am: Oscillator,
    }
    for &(start_s, end_s) in episodes {
        let mut comps: Vec<Comp> = (0..N_COMP)
            .map(|_| {
                let f0_hz = uniform(rng, 4.5, 8.5);
                let drift_hz = uniform(rng, 0.05, 0.2);
                Comp {
                    f0_hz,
                    phase: uniform(rng, 0.0, 2.0 * PI),
                    rel: uniform(rng, 0.7, 1.3),
                    drift: Oscillator::new(drift_hz, fs_hz, uniform(rng, 0.0, 2.0 * PI)),
                    am: Oscillator::new(0.5 * drift_hz, fs_hz, uniform(rng, 0.0, 2.0 * PI)),
                }
            })
            .collect();
        let n0 = (start_s * fs_hz).ceil().max(0.0) as usize;
        let n1 = ((end_s * fs_hz).ceil().max(0.0) as usize).min(lead.len());
        let per = amp_mv / N_COMP as f64;
        for (n, v) in lead.iter_mut().enumerate().take(n1).skip(n0) {
            let t = n as f64 / fs_hz;
            let edge = ((t - start_s).min(end_s - t) / RAMP_S).clamp(0.0, 1.0);
            let fade = 0.5 - 0.5 * (PI * edge).cos();
            let mut sum = 0.0;
            for c in comps.iter_mut() {
                // Frequency drifts ±0.5 Hz around f0 (stays in 4–9 Hz); amplitude ±30 %.
                let f = c.f0_hz + 0.5 * c.drift.next_sin();
                c.phase += 2.0 * PI * f / fs_hz;
                if c.phase > 2.0 * PI {
                    c.phase -= 2.0 * PI;
                }
                sum += c.rel * (1.0 + 0.3 * c.am.next_sin()) * c.phase.sin();
            }
            *v += fade * per * sum / 1.3;
        }
    }
}

/// Add baseline wander of peak amplitude ≈ `amp_mv`, respiratory frequency `resp_hz`.
pub(crate) fn add_baseline_wander(
    lead: &mut [f64],
    fs_hz: f64,
    amp_mv: f64,
    resp_hz: f64,
    rng: &mut ChaCha8Rng,
) {
    if amp_mv <= 0.0 {
        return;
    }
    let mut resp = Oscillator::new(resp_hz, fs_hz, uniform(rng, 0.0, 2.0 * PI));
    let mut drift: Vec<Oscillator> = (0..3)
        .map(|_| {
            Oscillator::new(
                uniform(rng, 0.005, 0.05),
                fs_hz,
                uniform(rng, 0.0, 2.0 * PI),
            )
        })
        .collect();
    let (a_resp, a_drift) = (0.6 * amp_mv, 0.4 * amp_mv / 3.0);
    for v in lead.iter_mut() {
        let mut w = a_resp * resp.next_sin();
        for d in drift.iter_mut() {
            w += a_drift * d.next_sin();
        }
        *v += w;
    }
}

/// Add mains hum of peak `amp_mv` at `mains_hz` (nothing at or above the Nyquist frequency).
pub(crate) fn add_mains(
    lead: &mut [f64],
    fs_hz: f64,
    mains_hz: f64,
    amp_mv: f64,
    rng: &mut ChaCha8Rng,
) {
    if amp_mv <= 0.0 || mains_hz >= 0.5 * fs_hz {
        return;
    }
    let mut osc = Oscillator::new(mains_hz, fs_hz, uniform(rng, 0.0, 2.0 * PI));
    for v in lead.iter_mut() {
        *v += amp_mv * osc.next_sin();
    }
}

/// Add band-limited Gaussian muscle noise with RMS `rms_mv`.
///
/// The filter is y = y_hi − y_lo, two one-pole low-passes y_i[n] = p_i y_i[n−1] + k_i w[n]
/// (k_i = 1 − p_i) of the same white noise w of unit variance, so its stationary variance is
/// Σ_m (k₁p₁ᵐ − k₂p₂ᵐ)² = k₁²/(1−p₁²) + k₂²/(1−p₂²) − 2k₁k₂/(1−p₁p₂); the output is scaled by
/// that, in one pass.
pub(crate) fn add_muscle(lead: &mut [f64], fs_hz: f64, rms_mv: f64, rng: &mut ChaCha8Rng) {
    if rms_mv <= 0.0 {
        return;
    }
    let gain = |fc: f64| 1.0 - (-2.0 * PI * fc / fs_hz).exp();
    let (k1, k2) = (gain((0.45 * fs_hz).min(150.0)), gain(10.0));
    let (p1, p2) = (1.0 - k1, 1.0 - k2);
    let var =
        k1 * k1 / (1.0 - p1 * p1) + k2 * k2 / (1.0 - p2 * p2) - 2.0 * k1 * k2 / (1.0 - p1 * p2);
    if var.is_nan() || var <= 0.0 {
        return;
    }
    let g = rms_mv / var.sqrt();
    // Burn-in of 0.2 s (≥ 12 time constants of the slower 10 Hz pole) so the output is
    // stationary from the first sample.
    let (mut y1, mut y2) = (0.0, 0.0);
    for _ in 0..(0.2 * fs_hz).ceil() as usize {
        let w: f64 = StandardNormal.sample(rng);
        y1 = p1 * y1 + k1 * w;
        y2 = p2 * y2 + k2 * w;
    }
    for v in lead.iter_mut() {
        let w: f64 = StandardNormal.sample(rng);
        y1 = p1 * y1 + k1 * w;
        y2 = p2 * y2 + k2 * w;
        *v += g * (y1 - y2);
    }
}

/// One electrode-motion burst.
#[derive(Debug, Clone)]
pub(crate) struct Burst {
    onset_s: f64,
    duration_s: f64,
    freq_hz: f64,
    phase: f64,
    tau_s: f64,
    amp_mv: f64,
    /// Per-lead gain (sign and size of the artefact in each lead).
    lead_gain: [f64; 2],
}

/// Draw Poisson-timed bursts over `[0, duration_s)`.
pub(crate) fn motion_bursts(
    duration_s: f64,
    per_min: f64,
    amp_mv: f64,
    rng: &mut ChaCha8Rng,
) -> Vec<Burst> {
    let mut bursts = Vec::new();
    if per_min <= 0.0 || amp_mv <= 0.0 {
        return bursts;
    }
    let mean_gap_s = 60.0 / per_min;
    let mut t = 0.0;
    loop {
        let u: f64 = rng.gen();
        t += -mean_gap_s * (1.0 - u).ln();
        if t >= duration_s {
            break;
        }
        let sign = if rng.gen::<bool>() { 1.0 } else { -1.0 };
        let gain2 = if rng.gen::<bool>() { 1.0 } else { -1.0 } * uniform(rng, 0.3, 1.0);
        bursts.push(Burst {
            onset_s: t,
            duration_s: uniform(rng, 0.4, 1.5),
            freq_hz: uniform(rng, 0.5, 3.0),
            phase: uniform(rng, 0.0, 2.0 * PI),
            tau_s: uniform(rng, 0.3, 1.0),
            amp_mv: sign * amp_mv * uniform(rng, 0.5, 1.0),
            lead_gain: [1.0, gain2],
        });
    }
    bursts
}

/// Add the bursts to lead `lead_index` (0 or 1).
pub(crate) fn add_motion(lead: &mut [f64], fs_hz: f64, bursts: &[Burst], lead_index: usize) {
    for b in bursts {
        let g = b.lead_gain.get(lead_index).copied().unwrap_or(1.0) * b.amp_mv;
        let span_s = b.duration_s.max(8.0 * b.tau_s);
        let n0 = (b.onset_s * fs_hz).ceil().max(0.0) as usize;
        let n1 = (((b.onset_s + span_s) * fs_hz).ceil().max(0.0) as usize).min(lead.len());
        for (n, v) in lead.iter_mut().enumerate().take(n1).skip(n0) {
            let u = n as f64 / fs_hz - b.onset_s;
            let osc = if u < b.duration_s {
                let hann = 0.5 - 0.5 * (2.0 * PI * u / b.duration_s).cos();
                hann * (2.0 * PI * b.freq_hz * u + b.phase).sin()
            } else {
                0.0
            };
            // Baseline jump: rises within ~50 ms, relaxes with tau_s.
            let jump = 0.5 * (1.0 - (-u / 0.05).exp()) * (-u / b.tau_s).exp();
            *v += g * (osc + jump);
        }
    }
}
