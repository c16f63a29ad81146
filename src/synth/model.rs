//! The dynamical ECG model: beat schedule in, noise-free leads in mV out.
//!
//! McSharry, Clifford, Tarassenko & Smith (2003), "A dynamical model for generating synthetic
//! electrocardiogram signals", IEEE Trans. Biomed. Eng. 50:289–294. Three coupled ODEs:
//!
//! ```text
//! ẋ = αx − ωy,   ẏ = αy + ωx,   α = 1 − √(x² + y²)
//! ż = −Σ_{i ∈ P,Q,R,S,T} a_i Δθ_i exp(−Δθ_i² / 2b_i²) − (z − z₀)
//! ```
//!
//! (x, y) runs round the unit limit cycle at angular speed ω, θ = atan2(y, x), and each wave is a
//! Gaussian event at angle θ_i with amplitude a_i and width b_i (Table 1 of the paper, recalled
//! from memory: P (−π/3, 1.2, 0.25), Q (−π/12, −5, 0.1), R (0, 30, 0.1), S (π/12, −7.5, 0.1),
//! T (π/2, 0.75, 0.4)). Integration is fixed-step fourth-order Runge–Kutta at an internal rate of
//! at least [`MIN_INTERNAL_HZ`] (a whole multiple of the output rate).
//!
//! Our choices, documented:
//! - ω is piecewise constant: between beats k and k+1 it is 2π / (t_{k+1} − t_k), and an RK4 step
//!   that contains a beat time is split there, so the phase crosses the R angle (θ = 0) exactly
//!   at every scheduled beat time. Those times are the ground truth. At each beat (x, y) is put
//!   back on θ = 0 (radius kept), so the small phase error of RK4 never accumulates.
//! - Rate dependence as in the paper (from memory): in an interval of length RR, with
//!   s = √(1 s / RR) = √(hr/60), all widths are b_i·s, the Q and S angles θ_i·s and the P and T
//!   angles θ_i·√s. In time, a wave then lasts b_i·s/ω ∝ √RR (QRS and T durations grow with
//!   √RR). Since ż has no factor ω, a wave's size is ∝ a_i b_i² / ω, which this scaling keeps
//!   independent of the rate. We apply it per interval rather than with the record's mean
//!   rate, so premature beats and irregular episodes keep their wave sizes.
//! - Each interval carries the events of both beats that bound it (the earlier beat's at angle
//!   θ_i, the later beat's at 2π + θ_i), each beat with its own waveform (normal, without P, or
//!   ectopic); this avoids any wrap-around discontinuity.
//! - z₀ = 0 here: baseline wander is added by the noise stage so that the noise-free signal has
//!   a flat baseline.
//! - Output = gain · z with the gain chosen so that the R wave of a normal beat at 60 bpm peaks
//!   at `r_amplitude_mv` (found by simulating that beat). A second lead uses other event
//!   amplitudes (a different projection); ectopic complexes are inverted there.

use super::schedule::{BeatKind, ScheduledBeat, SETTLE_S};
use crate::error::{Error, Result};
use std::f64::consts::PI;

/// Lowest internal integration rate, Hz; the output rate is multiplied up to at least this.
pub(crate) const MIN_INTERNAL_HZ: f64 = 250.0;

/// Order of the five waves in every table.
const N_WAVES: usize = 5;
/// Exponent of s = √(hr/60) applied to each wave's angle (P, Q, R, S, T); from memory.
const ANGLE_EXP: [f64; N_WAVES] = [0.5, 1.0, 0.0, 1.0, 0.5];
/// Table 1 of McSharry et al. (2003) [from memory]: (θ_i rad, a_i, b_i rad) for P, Q, R, S, T.
const SINUS: [(f64, f64, f64); N_WAVES] = [
    (-PI / 3.0, 1.2, 0.25),
    (-PI / 12.0, -5.0, 0.1),
    (0.0, 30.0, 0.1),
    (PI / 12.0, -7.5, 0.1),
    (PI / 2.0, 0.75, 0.4),
];
/// Premature ectopic beat (our own values): no P, wide and symmetric QRS (so the R maximum stays
/// at the R angle), larger inverted T.
const VENTRICULAR: [(f64, f64, f64); N_WAVES] = [
    (-PI / 3.0, 0.0, 0.25),
    (-0.35, -3.0, 0.15),
    (0.0, 8.0, 0.22),
    (0.35, -3.0, 0.15),
    (0.6 * PI, -1.0, 0.45),
];
/// Lead-2 amplitude multipliers of P, Q, R, S, T for normal beats (our own projection).
const LEAD2_NORMAL: [f64; N_WAVES] = [0.7, 0.4, 0.6, 1.8, 0.8];
/// Lead-2 amplitude multipliers for ectopic beats: the complex is inverted.
const LEAD2_VENTRICULAR: [f64; N_WAVES] = [0.0, -0.5, -0.8, -0.5, -0.6];
/// Events further than this many widths from the phase are skipped (exp(−18) ≈ 1.5e−8).
const CUT_WIDTHS: f64 = 6.0;

/// Gain (mV per model unit) that makes the R wave of a normal beat at 60 bpm peak at
/// `r_amplitude_mv` in lead 1.
///
/// The R size predicted from the equations, a_R b_R² / ω, ignores the decay term −(z − z₀) and the
/// Q/S overlap, which lower the peak by ≈ 10 %; so the reference beat is simulated instead: a
/// regular train at RR = 1 s integrated at 1 kHz, its maximum over one beat taken as the model
/// size. Faster or slower rates change R by a few per cent only, since the width scaling keeps
/// a_i b_i² / ω fixed.
pub(crate) fn gain_mv(r_amplitude_mv: f64) -> Result<f64> {
    let beats: Vec<ScheduledBeat> = (-(SETTLE_S as i64) - 2..=2)
        .map(|k| ScheduledBeat {
            t_s: k as f64,
            kind: BeatKind::Sinus,
        })
        .collect();
    let fs_hz = 1000.0;
    let mut z = vec![0.0; 1000];
    // One beat around t = 0.5 s … 1.5 s, R at t = 1 s.
    integrate_chunk(&beats, fs_hz, 500, 1.0, &mut z, None)?;
    let peak = z.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if peak.is_finite() && peak > 0.0 {
        Ok(r_amplitude_mv / peak)
    } else {
        Err(Error::Analysis("reference beat has no R wave".into()))
    }
}

/// (θ_i, a_i, b_i) and lead-2 multipliers of a beat kind.
fn waves(kind: BeatKind) -> ([(f64, f64, f64); N_WAVES], [f64; N_WAVES]) {
    match kind {
        BeatKind::Sinus => (SINUS, LEAD2_NORMAL),
        BeatKind::Conducted => {
            let mut w = SINUS;
            w[0].1 = 0.0; // no P wave in irregular-rhythm episodes
            (w, LEAD2_NORMAL)
        }
        BeatKind::Ventricular => (VENTRICULAR, LEAD2_VENTRICULAR),
    }
}

/// One Gaussian event in interval phase coordinates.
#[derive(Debug, Clone, Copy, Default)]
struct Event {
    /// Centre, rad of interval phase (0 = earlier beat's R, 2π = later beat's R).
    centre: f64,
    /// Skip distance, rad.
    cut: f64,
    /// 1 / (2 b²), rad⁻².
    inv_2b2: f64,
    /// Amplitude per lead.
    a: [f64; 2],
}

/// Constant data of one inter-beat interval.
#[derive(Debug, Clone, Copy)]
struct Interval {
    /// Time of the earlier beat, s.
    t0_s: f64,
    /// Angular speed, rad/s.
    omega: f64,
    events: [Event; 2 * N_WAVES],
    n_events: usize,
}

impl Interval {
    fn new(start: ScheduledBeat, end: ScheduledBeat) -> Interval {
        let rr_s = end.t_s - start.t_s;
        let s = (1.0 / rr_s).sqrt();
        let mut events = [Event::default(); 2 * N_WAVES];
        let mut n_events = 0;
        for (beat, base) in [(start, 0.0), (end, 2.0 * PI)] {
            let (w, lead2) = waves(beat.kind);
            for i in 0..N_WAVES {
                let (theta0, a, b0) = w[i];
                let centre = base + theta0 * s.powf(ANGLE_EXP[i]);
                let b = b0 * s;
                let cut = CUT_WIDTHS * b;
                // The phase stays in [0, 2π] within the interval: skip events that never reach it.
                if a == 0.0 || centre + cut < 0.0 || centre - cut > 2.0 * PI {
                    continue;
                }
                if let Some(e) = events.get_mut(n_events) {
                    *e = Event {
                        centre,
                        cut,
                        inv_2b2: 1.0 / (2.0 * b * b),
                        a: [a, a * lead2[i]],
                    };
                    n_events += 1;
                }
            }
        }
        Interval {
            t0_s: start.t_s,
            omega: 2.0 * PI / rr_s,
            events,
            n_events,
        }
    }
}

/// State (x, y, z_lead1, z_lead2).
type State = [f64; 4];

/// The event sum −Σ a_i Δθ_i exp(−Δθ_i² / 2b_i²) of both leads at phase `theta`.
#[inline]
fn forcing(iv: &Interval, theta: f64) -> [f64; 2] {
    let (mut f1, mut f2) = (0.0, 0.0);
    for e in iv.events.iter().take(iv.n_events) {
        let dt = theta - e.centre;
        if dt.abs() < e.cut {
            let g = -dt * (-dt * dt * e.inv_2b2).exp();
            f1 += e.a[0] * g;
            f2 += e.a[1] * g;
        }
    }
    [f1, f2]
}

/// One classical RK4 step of length `h_s` from time `t_s` for the state (x, y, z₁, z₂).
///
/// θ = atan2(y, x) is read once, at the start of the step (on the branch nearest the interval's
/// nominal phase ω·(t − t₀)), and advanced at ω within the step. On the limit cycle this is the
/// exact phase of the flow (taking atan2 of the RK4 stage predictions instead would be off by
/// O((ωh)³)). The event sum then depends on time only, so the two mid-step stages share one
/// evaluation and the end-of-step value is handed to the next step in `f_start`.
#[inline]
fn rk4(iv: &Interval, t_s: f64, h_s: f64, st: &mut State, f_start: &mut Option<[f64; 2]>) {
    let [x, y, z1, z2] = *st;
    let w = iv.omega;
    let nominal = w * (t_s - iv.t0_s);
    let mut d = y.atan2(x) - nominal;
    d -= 2.0 * PI * (d / (2.0 * PI)).round();
    let theta = nominal + d;
    let f0 = f_start.unwrap_or_else(|| forcing(iv, theta));
    let fm = forcing(iv, theta + 0.5 * w * h_s);
    let f1 = forcing(iv, theta + w * h_s);
    *f_start = Some(f1);

    // Limit cycle: ẋ = αx − ωy, ẏ = αy + ωx, α = 1 − r.
    let xy = |x: f64, y: f64| {
        let alpha = 1.0 - (x * x + y * y).sqrt();
        (alpha * x - w * y, alpha * y + w * x)
    };
    let (h2, h6) = (0.5 * h_s, h_s / 6.0);
    let (ax, ay) = xy(x, y);
    let (bx, by) = xy(x + h2 * ax, y + h2 * ay);
    let (cx, cy) = xy(x + h2 * bx, y + h2 * by);
    let (dx, dy) = xy(x + h_s * cx, y + h_s * cy);
    st[0] = x + h6 * (ax + 2.0 * bx + 2.0 * cx + dx);
    st[1] = y + h6 * (ay + 2.0 * by + 2.0 * cy + dy);
    // ECG: ż = F(θ(t)) − z (z₀ = 0), per lead.
    for (l, z) in [z1, z2].into_iter().enumerate() {
        let k1 = f0[l] - z;
        let k2 = fm[l] - (z + h2 * k1);
        let k3 = fm[l] - (z + h2 * k2);
        let k4 = f1[l] - (z + h_s * k3);
        st[2 + l] = z + h6 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
    }
}

/// Output is computed in independent chunks of this many seconds (in parallel).
const CHUNK_S: f64 = 600.0;

/// Integrate the model over the schedule and return `n_leads` noise-free leads of `n_samples`
/// samples at `fs_hz`, in mV (`gain_mv` · z). `beats` must start at least [`SETTLE_S`] before
/// t = 0 (warm-up, discarded) and reach at or beyond the last sample time.
///
/// The record is cut into fixed chunks of [`CHUNK_S`] integrated in parallel, each started
/// [`SETTLE_S`] early; the chunk layout does not depend on the number of threads, so the output
/// is deterministic.
pub(crate) fn integrate(
    beats: &[ScheduledBeat],
    fs_hz: f64,
    n_samples: usize,
    n_leads: usize,
    gain_mv: f64,
) -> Result<Vec<Vec<f64>>> {
    use rayon::prelude::*;
    let chunk_n = ((CHUNK_S * fs_hz).round() as usize).max(1);
    let mut out = vec![vec![0.0; n_samples]; n_leads.clamp(1, 2)];
    /// Samples `n0 ..` of lead 1 and (optionally) lead 2.
    struct Chunk<'a> {
        n0: usize,
        lead1: &'a mut [f64],
        lead2: Option<&'a mut [f64]>,
    }
    let mut lead_iter = out.iter_mut();
    let mut jobs: Vec<Chunk> = Vec::new();
    if let Some(l1) = lead_iter.next() {
        let mut second = lead_iter.next().map(|l2| l2.chunks_mut(chunk_n));
        for (k, lead1) in l1.chunks_mut(chunk_n).enumerate() {
            let lead2 = second.as_mut().and_then(|it| it.next());
            jobs.push(Chunk {
                n0: k * chunk_n,
                lead1,
                lead2,
            });
        }
    }
    jobs.into_par_iter()
        .map(|c| integrate_chunk(beats, fs_hz, c.n0, gain_mv, c.lead1, c.lead2))
        .collect::<Result<Vec<()>>>()?;
    Ok(out)
}

/// Fill `out1` (and `out2`) with samples `n0 ..` of the noise-free leads.
pub(super) fn integrate_chunk(
    beats: &[ScheduledBeat],
    fs_hz: f64,
    n0: usize,
    gain_mv: f64,
    out1: &mut [f64],
    mut out2: Option<&mut [f64]>,
) -> Result<()> {
    let not_covered = || Error::Analysis("beat schedule does not cover the record".into());
    let m = ((MIN_INTERNAL_HZ / fs_hz).ceil() as i64).max(1);
    let h_s = 1.0 / (fs_hz * m as f64);
    // Start half-way through the interval that contains n0/fs − SETTLE_S, with z = 0.
    let t_settle = n0 as f64 / fs_hz - SETTLE_S;
    let mut j = beats
        .partition_point(|b| b.t_s <= t_settle)
        .saturating_sub(1);
    let (first, second) = match (beats.get(j), beats.get(j + 1)) {
        (Some(a), Some(b)) => (*a, *b),
        _ => return Err(not_covered()),
    };
    let mut i = ((first.t_s + 0.5 * (second.t_s - first.t_s)) / h_s).ceil() as i64;
    let mut t = i as f64 * h_s;
    if t < first.t_s || t >= second.t_s {
        return Err(not_covered());
    }
    let mut iv = Interval::new(first, second);
    let phase = iv.omega * (t - iv.t0_s);
    let mut st: State = [phase.cos(), phase.sin(), 0.0, 0.0];
    let mut f_start: Option<[f64; 2]> = None;
    let i_out = n0 as i64 * m;
    loop {
        if i >= i_out && i % m == 0 {
            let n = ((i - i_out) / m) as usize;
            match out1.get_mut(n) {
                Some(v) => *v = gain_mv * st[2],
                None => break,
            }
            if let Some(v) = out2.as_deref_mut().and_then(|o| o.get_mut(n)) {
                *v = gain_mv * st[3];
            }
        }
        let t_next = (i + 1) as f64 * h_s;
        let mut ta = t;
        loop {
            let end = *beats.get(j + 1).ok_or_else(not_covered)?;
            if end.t_s >= t_next {
                break;
            }
            if end.t_s > ta {
                rk4(&iv, ta, end.t_s - ta, &mut st, &mut f_start);
                ta = end.t_s;
            }
            j += 1;
            let next = *beats.get(j + 1).ok_or_else(not_covered)?;
            iv = Interval::new(end, next);
            f_start = None;
            // Now exactly at a beat: put (x, y) back on the R angle θ = 0, keeping its radius,
            // so RK4's phase error (≈ (ωh)⁵/120 per step) cannot accumulate across beats.
            st[0] = st[0].hypot(st[1]);
            st[1] = 0.0;
        }
        rk4(&iv, ta, t_next - ta, &mut st, &mut f_start);
        i += 1;
        t = t_next;
    }
    Ok(())
}
