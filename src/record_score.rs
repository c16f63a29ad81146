//! Scoring one record's results against its reference annotations, shared by `beatfold score`,
//! the validation examples and the Python package: beats by the EC57 rules
//! ([`crate::beats::ec57`]), the noise stress test ([`crate::beats::noise_stress`]) and the
//! irregular-rhythm screen by duration.
//!
//! In: a record with reference annotations, its detected beats ([`pipeline::BeatsResult`]) and
//! checked parameters. Out: typed, serialisable scores.

use crate::beats::ec57::{self, Ec57Rules, RecordScore};
use crate::beats::noise_stress::{self, NoiseRecord, NoiseSchedule};
use crate::beats::readable::{self, ReadableParams};
use crate::error::Result;
use crate::pipeline::{self, AnalyzeParams, BeatsResult};
use crate::record::Record;
use crate::rhythm::screen::{duration_agreement, irregular_reference};
use serde::Serialize;

/// Reference beat samples of a record.
pub fn reference_beats(rec: &Record) -> Vec<usize> {
    rec.annotations.beats.iter().map(|x| x.sample).collect()
}

/// The record's detected beats scored by the EC57 rules.
pub fn beat_score(rec: &Record, b: &BeatsResult, rules: &Ec57Rules) -> RecordScore {
    ec57::score_record(
        &rec.name,
        &reference_beats(rec),
        &b.samples,
        rec.fs_hz,
        rec.n_samples(),
        rules,
    )
}

/// The record scored as a noise stress test record: its SNR from its name, the noise layout of
/// `schedule`, and the beats inside the stretches the quality index marks unreadable counted
/// apart ([`readable::unreadable_intervals`] on the analysed lead, compared with the record's
/// other leads).
pub fn noise_record(
    rec: &Record,
    b: &BeatsResult,
    p: &crate::params::Checked<AnalyzeParams>,
    readable_params: &ReadableParams,
    rules: &Ec57Rules,
    schedule: &NoiseSchedule,
) -> Result<NoiseRecord> {
    let li = pipeline::prepare(rec, p)?;
    let quality = crate::signal::quality(&rec.leads[li].samples, rec.fs_hz, p.quality_segment_s);
    let mut other_leads = Vec::new();
    if readable_params.cross_lead {
        for k in (0..rec.leads.len()).filter(|&k| k != li) {
            if rec.leads[k].samples.len() == rec.n_samples() {
                other_leads.push(pipeline::detect_beats_on(rec, k, p)?.samples);
            }
        }
    }
    let unreadable = readable::unreadable_intervals(
        &b.samples,
        &b.second,
        &other_leads,
        &quality,
        rec.fs_hz,
        rec.n_samples(),
        readable_params,
    );
    Ok(noise_stress::score_noise_record(
        &rec.name,
        &reference_beats(rec),
        &b.samples,
        &unreadable,
        rec.fs_hz,
        rec.n_samples(),
        rules,
        schedule,
    ))
}

/// Duration agreement of the irregular-rhythm screen with the reference rhythm labels.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct RhythmDurationScore {
    /// Seconds labelled irregular (AF/AFL or synthetic `irregular`) in the reference.
    pub reference_irregular_s: f64,
    /// Seconds the screen called irregular.
    pub detected_irregular_s: f64,
    /// Overlap ÷ reference time (None without reference time).
    pub duration_se: Option<f64>,
    /// Agreement on the regular time ÷ reference regular time (None without it).
    pub duration_sp: Option<f64>,
    /// Reference episodes.
    pub reference_episodes: usize,
    /// Screened episodes.
    pub detected_episodes: usize,
}

/// The screen of `b` against the record's rhythm labels, or None when it has none.
pub fn rhythm_duration(
    rec: &Record,
    b: &BeatsResult,
    p: &crate::params::Checked<AnalyzeParams>,
) -> Result<Option<RhythmDurationScore>> {
    if rec.annotations.rhythms.is_empty() {
        return Ok(None);
    }
    let sc = pipeline::screen_rhythm(b, rec.fs_hz, p)?;
    let truth = irregular_reference(&rec.annotations);
    let found = sc.episode_bounds();
    let (r, d, se, sp) = duration_agreement(&truth, &found, rec.duration_s());
    let finite = |v: f64| v.is_finite().then_some(v);
    Ok(Some(RhythmDurationScore {
        reference_irregular_s: r + 0.0,
        detected_irregular_s: d + 0.0,
        duration_se: finite(se),
        duration_sp: finite(sp),
        reference_episodes: truth.len(),
        detected_episodes: found.len(),
    }))
}
