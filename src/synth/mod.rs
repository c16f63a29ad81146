//! Synthetic ECG-like recordings with exact ground truth.
//!
//! In: checked [`SynthParams`] (or a named [`Scenario`]). Out: a [`Record`] with one or two leads
//! in mV and, as annotations, every beat (sample of its R peak, code `N` or `V`) and rhythm
//! intervals covering the whole record (`regular` / `irregular`).
//!
//! The waveform is the dynamical ECG model of McSharry, Clifford, Tarassenko & Smith (2003), IEEE
//! Trans. Biomed. Eng. 50:289–294 (three coupled ODEs, a Gaussian event per P, Q, R, S, T wave,
//! fixed-step RK4; details in the private `model` module), driven by their two-band RR process
//! (LF ≈ 0.1 Hz, HF ≈ 0.25 Hz; private `rr` module). On top we add, with our own shapes and constants:
//! irregular-rhythm episodes (independent gamma RR, no P wave, a 4–9 Hz fibrillatory baseline),
//! premature ectopic beats (short coupling, wide QRS, inverted T, compensatory pause), baseline
//! wander, mains hum, muscle noise and electrode-motion bursts. Every random step draws from its
//! own ChaCha8 stream of the one seed, so the same parameters give the same record bit for bit.
//!
//! Ground truth is exact by construction: the beat times are fixed first, the model's phase
//! crosses the R angle exactly at each of them, and the annotation is that time rounded to the
//! nearest sample. Rhythm intervals are the requested episodes themselves.

mod model;
mod noise;
mod params;
mod rr;
mod scenario;
mod schedule;

pub use params::{SynthParams, MAX_MINUTES};
pub use scenario::Scenario;

use crate::error::Result;
use crate::params::Checked;
use crate::record::{
    Annotations, BeatAnnotation, Lead, Record, RhythmInterval, RHYTHM_IRREGULAR, RHYTHM_REGULAR,
};
use rand::Rng;
use rand_chacha::rand_core::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rr::ScheduledBeat;

/// Random streams of the one seed, one per random step.
mod stream {
    pub const RR: u64 = 1;
    pub const SCHEDULE: u64 = 2;
    pub const FIBRILLATION: u64 = 3;
    pub const RESPIRATION: u64 = 4;
    pub const MOTION: u64 = 5;
    /// Per-lead streams are `LEAD_BASE · (lead + 1) + offset`.
    pub const LEAD_BASE: u64 = 16;
    pub const WANDER: u64 = 1;
    pub const MAINS: u64 = 2;
    pub const MUSCLE: u64 = 3;
}

fn rng(seed: u64, stream: u64) -> ChaCha8Rng {
    let mut r = ChaCha8Rng::seed_from_u64(seed);
    r.set_stream(stream);
    r
}

/// Everything [`generate`] makes; tests look inside, [`synthesize`] packs it into a record.
struct Generated {
    leads: Vec<Vec<f64>>,
    beats: Vec<ScheduledBeat>,
    duration_s: f64,
}

/// Number of samples of a record of `p.minutes` at `p.fs_hz` (at least one).
fn n_samples(p: &SynthParams) -> usize {
    ((p.duration_s() * p.fs_hz).round() as usize).max(1)
}

/// Schedule the beats, integrate the model, add the fibrillatory baseline and, when
/// `with_noise`, the recording noise. `p` has been checked by the caller.
fn generate(p: &SynthParams, with_noise: bool) -> Result<Generated> {
    let n = n_samples(p);
    let fs = p.fs_hz;
    let duration_s = n as f64 / fs;
    let tach = rr::Tachogram::spectral(
        p,
        duration_s + 4.0 * rr::RR_MAX_S + 16.0,
        &mut rng(p.seed, stream::RR),
    );
    let beats = rr::schedule(p, &tach, duration_s, &mut rng(p.seed, stream::SCHEDULE))?;
    let mut leads = model::integrate(&beats, fs, n, p.leads, model::gain_mv(p.r_amplitude_mv)?)?;

    // The fibrillatory baseline is cardiac activity, hence part of the noise-free signal; lead 2
    // sees it at 70 % (same atrial source, other projection).
    let fib_rng = rng(p.seed, stream::FIBRILLATION);
    for (l, lead) in leads.iter_mut().enumerate() {
        let g = if l == 0 { 1.0 } else { 0.7 };
        noise::add_fibrillation(
            lead,
            fs,
            &p.irregular_episodes,
            g * p.fibrillation_mv,
            &mut fib_rng.clone(),
        );
    }

    if with_noise {
        let resp_hz = 0.2 + 0.1 * rng(p.seed, stream::RESPIRATION).gen::<f64>();
        let bursts = noise::motion_bursts(
            duration_s,
            p.motion_bursts_per_min,
            p.motion_mv,
            &mut rng(p.seed, stream::MOTION),
        );
        // Leads use their own streams, so they can be noised in parallel deterministically.
        use rayon::prelude::*;
        leads.par_iter_mut().enumerate().for_each(|(l, lead)| {
            let base = stream::LEAD_BASE * (l as u64 + 1);
            // Lead 2: same breathing, other electrode geometry.
            let g = if l == 0 { 1.0 } else { 0.8 };
            noise::add_baseline_wander(
                lead,
                fs,
                g * p.baseline_wander_mv,
                resp_hz,
                &mut rng(p.seed, base + stream::WANDER),
            );
            noise::add_mains(
                lead,
                fs,
                p.mains_hz,
                g * p.mains_mv,
                &mut rng(p.seed, base + stream::MAINS),
            );
            noise::add_muscle(
                lead,
                fs,
                p.muscle_noise_mv,
                &mut rng(p.seed, base + stream::MUSCLE),
            );
            noise::add_motion(lead, fs, &bursts, l);
        });
    }
    Ok(Generated {
        leads,
        beats,
        duration_s,
    })
}

/// Ground-truth annotations: beats in the record (R time rounded to the nearest sample) and
/// rhythm intervals covering `[0, duration_s)`.
fn annotations(p: &SynthParams, g: &Generated, n: usize) -> Annotations {
    let beats = g
        .beats
        .iter()
        .filter(|b| b.t_s >= 0.0)
        .map(|b| BeatAnnotation {
            sample: (b.t_s * p.fs_hz).round() as usize,
            code: b.kind.code(),
        })
        .filter(|b| b.sample < n)
        .collect();
    let mut rhythms = Vec::new();
    let mut t = 0.0;
    let mut push = |start_s: f64, end_s: f64, label: &str| {
        if end_s > start_s {
            rhythms.push(RhythmInterval {
                start_s,
                end_s,
                label: label.to_string(),
            });
        }
    };
    for &(a, b) in &p.irregular_episodes {
        let (a, b) = (a.min(g.duration_s), b.min(g.duration_s));
        push(t, a, RHYTHM_REGULAR);
        push(a, b, RHYTHM_IRREGULAR);
        t = b;
    }
    push(t, g.duration_s, RHYTHM_REGULAR);
    Annotations { beats, rhythms }
}

/// Make a synthetic recording with exact ground truth (see the module documentation).
///
/// The record is named `p.name` (or `"synthetic"` when empty), has `p.leads` leads named
/// `"ecg1"`, `"ecg2"` in `"mV"`, and its annotations list every beat and the rhythm intervals.
/// The parameters were checked by [`crate::params::Check::check`]
/// (a [`crate::Error::Param`] names the first out-of-range one).
pub fn synthesize(p: &Checked<SynthParams>) -> Result<Record> {
    let g = generate(p, true)?;
    let n = n_samples(p);
    let annotations = annotations(p, &g, n);
    let leads = g
        .leads
        .into_iter()
        .enumerate()
        .map(|(l, samples)| Lead {
            name: format!("ecg{}", l + 1),
            unit: "mV".to_string(),
            samples,
        })
        .collect();
    Ok(Record {
        name: if p.name.is_empty() {
            "synthetic".to_string()
        } else {
            p.name.clone()
        },
        fs_hz: p.fs_hz,
        leads,
        start_time: None,
        annotations,
    })
}

#[cfg(test)]
mod tests;
