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
//!   at every scheduled beat time. Those times are the ground truth.
//! - Rate dependence as in the paper (from memory): in an interval of length RR, with
//!   s = √(60 / (60·RR)) = √(hr/60), all widths are b_i·s, the Q and S angles θ_i·s and the P and T
//!   angles θ_i·√s. Since ż has no factor ω, a wave's size is ∝ a_i b_i² / ω, which this scaling
//!   keeps independent of the rate. We apply it per interval rather than with the record's mean
//!   rate, so premature beats and irregular episodes keep their wave sizes.
//! - Each interval carries the events of both beats that bound it (the earlier beat's at angle
//!   θ_i, the later beat's at 2π + θ_i), each beat with its own waveform (normal, without P, or
//!   ectopic); this avoids any wrap-around discontinuity.
//! - z₀ = 0 here: baseline wander is added by the noise stage so that the noise-free signal has
//!   a flat baseline.
//! - Output = gain · z with the gain chosen so that a normal R wave is ≈ `r_amplitude_mv`
//!   (predicted size a_R b_R² / 2π in model units). A second lead uses other event amplitudes
//!   (a different projection); ectopic complexes are inverted there.

use super::rr::{BeatKind, ScheduledBeat};
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

/// Model-unit size of the reference R wave, a_R b_R² / 2π: the gain maps it to `r_amplitude_mv`.
pub(crate) fn gain_mv(r_amplitude_mv: f64) -> f64 {
    let (_, a_r, b_r) = SINUS[2];
    r_amplitude_mv / (a_r * b_r * b_r / (2.0 * PI))
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

/// Right-hand side of the model at time `t_s`.
#[inline]
fn rhs(iv: &Interval, t_s: f64, st: &State) -> State {
    let [x, y, z1, z2] = *st;
    let alpha = 1.0 - (x * x + y * y).sqrt();
    let w = iv.omega;
    // θ = atan2(y, x), taken on the branch nearest the interval's nominal phase.
    let nominal = w * (t_s - iv.t0_s);
    let mut d = y.atan2(x) - nominal;
    d -= 2.0 * PI * (d / (2.0 * PI)).round();
    let theta = nominal + d;
    let (mut f1, mut f2) = (0.0, 0.0);
    for e in iv.events.iter().take(iv.n_events) {
        let dt = theta - e.centre;
        if dt.abs() < e.cut {
            let g = -dt * (-dt * dt * e.inv_2b2).exp();
            f1 += e.a[0] * g;
            f2 += e.a[1] * g;
        }
    }
    [alpha * x - w * y, alpha * y + w * x, f1 - z1, f2 - z2]
}

/// One classical RK4 step of length `h_s` from time `t_s`.
#[inline]
fn rk4(iv: &Interval, t_s: f64, h_s: f64, st: &mut State) {
    let add = |a: &State, k: &State, f: f64| -> State {
        [
            a[0] + f * k[0],
            a[1] + f * k[1],
            a[2] + f * k[2],
            a[3] + f * k[3],
        ]
    };
    let k1 = rhs(iv, t_s, st);
    let k2 = rhs(iv, t_s + 0.5 * h_s, &add(st, &k1, 0.5 * h_s));
    let k3 = rhs(iv, t_s + 0.5 * h_s, &add(st, &k2, 0.5 * h_s));
    let k4 = rhs(iv, t_s + h_s, &add(st, &k3, h_s));
    for i in 0..4 {
        st[i] += h_s / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
    }
}

/// Integrate the model over the schedule and return `n_leads` noise-free leads of `n_samples`
/// samples at `fs_hz`, in mV (`gain_mv` · z). `beats` must start at least a few seconds before
/// t = 0 (warm-up, discarded) and reach at or beyond the last sample time.
pub(crate) fn integrate(
    beats: &[ScheduledBeat],
    fs_hz: f64,
    n_samples: usize,
    n_leads: usize,
    gain_mv: f64,
) -> Result<Vec<Vec<f64>>> {
    let not_covered = || Error::Analysis("beat schedule does not cover the record".into());
    let (first, second) = match beats {
        [a, b, ..] => (*a, *b),
        _ => return Err(not_covered()),
    };
    let m = ((MIN_INTERNAL_HZ / fs_hz).ceil() as i64).max(1);
    let h_s = 1.0 / (fs_hz * m as f64);
    // Start at half-way through the first interval, on the internal grid, with z = 0.
    let mut i = ((first.t_s + 0.5 * (second.t_s - first.t_s)) / h_s).ceil() as i64;
    let mut t = i as f64 * h_s;
    if t < first.t_s || t >= second.t_s {
        return Err(not_covered());
    }
    let mut j = 0usize;
    let mut iv = Interval::new(first, second);
    let phase = iv.omega * (t - iv.t0_s);
    let mut st: State = [phase.cos(), phase.sin(), 0.0, 0.0];
    let mut out = vec![vec![0.0; n_samples]; n_leads.clamp(1, 2)];
    loop {
        if i >= 0 && i % m == 0 {
            let n = (i / m) as usize;
            if n >= n_samples {
                break;
            }
            for (l, lead) in out.iter_mut().enumerate() {
                if let Some(v) = lead.get_mut(n) {
                    *v = gain_mv * st[2 + l];
                }
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
                rk4(&iv, ta, end.t_s - ta, &mut st);
                ta = end.t_s;
            }
            j += 1;
            let next = *beats.get(j + 1).ok_or_else(not_covered)?;
            iv = Interval::new(end, next);
        }
        rk4(&iv, ta, t_next - ta, &mut st);
        i += 1;
        t = t_next;
    }
    Ok(out)
}
