//! Parameters of the synthetic generator, their defaults per scenario and their validation.
//!
//! [`SynthParams`] is plain data (serde, so a config file can set any field; missing fields take
//! the [`Default`], i.e. the `resting` scenario, 5 min at 250 Hz, seed 0). [`SynthParams::check`]
//! validates every field before any work starts and names the parameter, its unit and the allowed
//! range in the error.

use super::scenario::Scenario;
use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};

/// Longest record the generator accepts, minutes (24 h; memory is about 8 bytes per sample and
/// lead, i.e. ≈ 350 MB for two leads at 250 Hz).
pub const MAX_MINUTES: f64 = 24.0 * 60.0;

/// Everything that defines a synthetic recording. Same parameters (seed included) ⇒ same record.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SynthParams {
    /// Name given to the record (the scenario name for [`SynthParams::for_scenario`]).
    pub name: String,
    /// Duration, minutes; (0, 1440].
    pub minutes: f64,
    /// Output sampling rate, Hz; [50, 2000].
    pub fs_hz: f64,
    /// Seed of every random step.
    pub seed: u64,
    /// Number of leads, 1 or 2. Lead 2 is a different projection of the same heart (other event
    /// amplitudes, inverted ectopic complexes) with its own noise, not a copy of lead 1.
    pub leads: usize,
    /// Mean heart rate of the regular rhythm, beats per minute; [20, 250].
    pub mean_hr_bpm: f64,
    /// Standard deviation of the heart rate, bpm; [0, 0.15 × `mean_hr_bpm`]. Converted to an RR
    /// standard deviation as `60 · hr_std / hr²` seconds.
    pub hr_std_bpm: f64,
    /// Ratio of low- to high-frequency power of the RR process; [0.01, 100].
    pub lf_hf_ratio: f64,
    /// Centre of the low-frequency (Mayer-wave) band of the RR process, Hz; [0.02, 0.2].
    pub lf_hz: f64,
    /// Centre of the high-frequency (respiratory) band of the RR process, Hz; [0.1, 0.5], above
    /// `lf_hz`.
    pub hf_hz: f64,
    /// Standard deviation (width) of both spectral Gaussians of the RR process, Hz; [0.001, 0.05].
    pub band_width_hz: f64,
    /// Irregular-rhythm episodes `[start_s, end_s)`, seconds from the record start, sorted,
    /// non-overlapping, inside the record.
    pub irregular_episodes: Vec<(f64, f64)>,
    /// Mean heart rate inside irregular episodes as a multiple of `mean_hr_bpm`; [1, 2]. The
    /// resulting mean RR is kept at or above 0.2 s (300 bpm).
    pub irregular_rate_factor: f64,
    /// Coefficient of variation of RR inside irregular episodes (gamma-distributed RR); [0, 0.5].
    pub irregular_rr_cv: f64,
    /// Approximate peak amplitude of the fibrillatory (4–9 Hz) baseline inside irregular
    /// episodes, mV; [0, 0.5].
    pub fibrillation_mv: f64,
    /// Fraction of beats that are premature ectopic (`V`) beats; [0, 0.3]. Ectopic beats are
    /// placed in regular stretches only, never two in a row.
    pub ectopic_rate: f64,
    /// A fixed ectopic pattern instead of `ectopic_rate` (default 0, none): every
    /// `ectopic_every`-th beat of the regular stretches is a premature ectopic beat, so 2 gives
    /// ventricular bigeminy (N V N V …) and 3 trigeminy (N N V N N V …); 0 or 2..=10.
    pub ectopic_every: usize,
    /// Nominal R-wave amplitude of a normal beat in lead 1, mV; [0.1, 5].
    pub r_amplitude_mv: f64,
    /// Peak amplitude of the baseline wander (respiratory 0.2–0.3 Hz part plus slow drift), mV;
    /// [0, 5].
    pub baseline_wander_mv: f64,
    /// Mains frequency, Hz; [40, 70] (50 or 60 in practice). Omitted when at or above fs/2, as an
    /// anti-aliasing filter of a real recorder would remove it.
    pub mains_hz: f64,
    /// Peak amplitude of the mains hum, mV; [0, 5].
    pub mains_mv: f64,
    /// RMS of the muscle (band-limited Gaussian) noise, mV; [0, 5].
    pub muscle_noise_mv: f64,
    /// Mean number of electrode-motion bursts per minute (Poisson), 1/min; [0, 60].
    pub motion_bursts_per_min: f64,
    /// Peak amplitude of an electrode-motion burst, mV; [0, 10].
    pub motion_mv: f64,
}

impl Default for SynthParams {
    /// The `resting` scenario, 5 minutes at 250 Hz, seed 0.
    fn default() -> Self {
        SynthParams::for_scenario(Scenario::Resting, 5.0, 250.0, 0)
    }
}

impl SynthParams {
    /// The parameters of a named scenario for a record of `minutes` at `fs_hz` with `seed`.
    /// Episode times scale with `minutes`.
    pub fn for_scenario(s: Scenario, minutes: f64, fs_hz: f64, seed: u64) -> SynthParams {
        let base = SynthParams {
            name: s.name().to_string(),
            minutes,
            fs_hz,
            seed,
            leads: 2,
            mean_hr_bpm: 70.0,
            hr_std_bpm: 3.0,
            lf_hf_ratio: 0.5,
            lf_hz: 0.1,
            hf_hz: 0.25,
            band_width_hz: 0.01,
            irregular_episodes: Vec::new(),
            irregular_rate_factor: 1.3,
            irregular_rr_cv: 0.25,
            fibrillation_mv: 0.07,
            ectopic_rate: 0.002,
            ectopic_every: 0,
            r_amplitude_mv: 1.2,
            baseline_wander_mv: 0.05,
            mains_hz: 50.0,
            mains_mv: 0.01,
            muscle_noise_mv: 0.005,
            motion_bursts_per_min: 0.0,
            motion_mv: 0.0,
        };
        let duration_s = minutes * 60.0;
        match s {
            Scenario::Resting => base,
            Scenario::TelemetryNight => SynthParams {
                mean_hr_bpm: 58.0,
                hr_std_bpm: 3.0,
                lf_hf_ratio: 0.7,
                irregular_episodes: vec![(0.40 * duration_s, 0.55 * duration_s)],
                ectopic_rate: 0.005,
                baseline_wander_mv: 0.08,
                mains_mv: 0.02,
                muscle_noise_mv: 0.01,
                motion_bursts_per_min: 0.2,
                motion_mv: 0.3,
                ..base
            },
            Scenario::AmbulatoryNoisy => SynthParams {
                mean_hr_bpm: 85.0,
                hr_std_bpm: 5.0,
                lf_hf_ratio: 2.0,
                ectopic_rate: 0.02,
                baseline_wander_mv: 0.2,
                mains_mv: 0.03,
                muscle_noise_mv: 0.05,
                motion_bursts_per_min: 2.0,
                motion_mv: 1.0,
                ..base
            },
        }
    }

    /// Record duration in seconds (`minutes · 60`).
    pub fn duration_s(&self) -> f64 {
        self.minutes * 60.0
    }

    /// Validate every field; the error names the parameter, its unit and the allowed range.
    pub fn check(&self) -> Result<()> {
        if !(self.minutes > 0.0 && self.minutes <= MAX_MINUTES) {
            return Err(Error::param(
                "minutes",
                format!(
                    "{} min is outside the allowed range (0, {MAX_MINUTES}] min",
                    self.minutes
                ),
            ));
        }
        range("fs_hz", self.fs_hz, 50.0, 2000.0, "Hz")?;
        if !(self.leads == 1 || self.leads == 2) {
            return Err(Error::param(
                "leads",
                format!("{} leads: allowed are 1 or 2", self.leads),
            ));
        }
        range("mean_hr_bpm", self.mean_hr_bpm, 20.0, 250.0, "bpm")?;
        range(
            "hr_std_bpm",
            self.hr_std_bpm,
            0.0,
            0.15 * self.mean_hr_bpm,
            "bpm (upper limit 0.15 × mean_hr_bpm)",
        )?;
        range("lf_hf_ratio", self.lf_hf_ratio, 0.01, 100.0, "(ratio)")?;
        range("lf_hz", self.lf_hz, 0.02, 0.2, "Hz")?;
        range("hf_hz", self.hf_hz, 0.1, 0.5, "Hz")?;
        if self.hf_hz <= self.lf_hz {
            return Err(Error::param(
                "hf_hz",
                format!("{} Hz must be above lf_hz = {} Hz", self.hf_hz, self.lf_hz),
            ));
        }
        range("band_width_hz", self.band_width_hz, 0.001, 0.05, "Hz")?;
        range(
            "irregular_rate_factor",
            self.irregular_rate_factor,
            1.0,
            2.0,
            "(× mean_hr_bpm)",
        )?;
        range("irregular_rr_cv", self.irregular_rr_cv, 0.0, 0.5, "(ratio)")?;
        range("fibrillation_mv", self.fibrillation_mv, 0.0, 0.5, "mV")?;
        range(
            "ectopic_rate",
            self.ectopic_rate,
            0.0,
            0.3,
            "(fraction of beats)",
        )?;
        if self.ectopic_every == 1 || self.ectopic_every > 10 {
            return Err(Error::param(
                "ectopic_every",
                format!(
                    "{} beats; allowed 0 (no pattern) or 2..=10 (2 bigeminy, 3 trigeminy)",
                    self.ectopic_every
                ),
            ));
        }
        range("r_amplitude_mv", self.r_amplitude_mv, 0.1, 5.0, "mV")?;
        range(
            "baseline_wander_mv",
            self.baseline_wander_mv,
            0.0,
            5.0,
            "mV",
        )?;
        range("mains_hz", self.mains_hz, 40.0, 70.0, "Hz")?;
        range("mains_mv", self.mains_mv, 0.0, 5.0, "mV")?;
        range("muscle_noise_mv", self.muscle_noise_mv, 0.0, 5.0, "mV")?;
        range(
            "motion_bursts_per_min",
            self.motion_bursts_per_min,
            0.0,
            60.0,
            "1/min",
        )?;
        range("motion_mv", self.motion_mv, 0.0, 10.0, "mV")?;
        self.check_episodes()
    }

    fn check_episodes(&self) -> Result<()> {
        let duration_s = self.duration_s();
        let mut prev_end = 0.0_f64;
        for (i, &(start_s, end_s)) in self.irregular_episodes.iter().enumerate() {
            let ok = start_s.is_finite()
                && end_s.is_finite()
                && start_s >= prev_end
                && end_s > start_s
                && end_s <= duration_s;
            if !ok {
                return Err(Error::param(
                    "irregular_episodes",
                    format!(
                        "episode {i} [{start_s}, {end_s}) s: episodes must satisfy \
                         0 ≤ start_s < end_s ≤ duration ({duration_s} s), sorted and \
                         non-overlapping (previous episode ends at {prev_end} s)"
                    ),
                ));
            }
            prev_end = end_s;
        }
        Ok(())
    }
}

/// `Ok` when `lo ≤ v ≤ hi` (NaN fails), else a parameter error naming unit and range.
fn range(name: &str, v: f64, lo: f64, hi: f64, unit: &str) -> Result<()> {
    if v >= lo && v <= hi {
        Ok(())
    } else {
        Err(Error::param(
            name,
            format!("{v} is outside the allowed range [{lo}, {hi}] {unit}"),
        ))
    }
}
