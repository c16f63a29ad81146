//! Rhythm verdicts of whole records, one at a time or for a labelled folder of records.
//!
//! In: a [`Record`] (or a folder and a label file) and [`AnalyzeParams`]. Out: a
//! [`Verdict`] with its [`VerdictEvidence`] per record and, for labelled records, a
//! [`LabelScore`]. The decision itself is [`crate::rhythm::verdict::decide`]; this module runs the
//! stages it needs (quality, detection, irregular-rhythm screen, P-wave index) and, for the beat
//! geometry comparison, the diffusion map and recurrence of the beat trajectory.
//!
//! Research use only: a verdict is a research label for a recording, never a diagnosis.

use crate::error::{Error, Result};
use crate::io::{self, ReadOptions};
use crate::params::Checked;
use crate::pipeline::{self, AnalyzeParams, BeatsResult};
use crate::record::Record;
use crate::rhythm::label_score::{LabelMap, LabelScore};
use crate::rhythm::recurrence::RqaWindow;
use crate::rhythm::verdict::{
    decide, evidence, plausible_rr, Verdict, VerdictClass, VerdictEvidence,
};
use crate::signal::QualitySegment;
use serde::Serialize;
use std::path::{Path, PathBuf};

/// The verdict of a record whose beats are detected: `lead` is the analysed lead, `quality` its
/// quality segments and `screen_irregular_s` the seconds in the screen's episodes.
pub fn verdict_of_beats(
    rec: &Record,
    lead: usize,
    b: &BeatsResult,
    quality: &[QualitySegment],
    screen_irregular_s: f64,
    p: &Checked<AnalyzeParams>,
) -> Result<(Verdict, VerdictEvidence)> {
    let raw = rec
        .leads
        .get(lead)
        .map(|l| l.samples.as_slice())
        .unwrap_or(&[]);
    let ap = p.verdict_atrial();
    // When the detectors disagree, the beats of the second detector are used if the primary's
    // are implausible and the second's are not (see `VerdictParams::min_agreement_plausible`).
    let second_rr = crate::beats::rr_intervals_s(&b.second, rec.fs_hz);
    let use_second =
        b.agreement < p.verdict.min_agreement && !plausible_rr(&b.rr_s) && plausible_rr(&second_rr);
    let (samples, rr_s) = if use_second {
        (&b.second, &second_rr)
    } else {
        (&b.samples, &b.rr_s)
    };
    let pw = crate::rhythm::atrial::p_wave_index_with(&b.conditioned, samples, rec.fs_hz, &ap)?;
    let mut e = evidence(
        raw,
        rec.fs_hz,
        samples,
        rr_s,
        &pw.index,
        pw.accepted,
        b.agreement,
        quality,
        screen_irregular_s,
        &p.verdict,
    );
    e.fwave = crate::rhythm::fwave::fwave(&b.conditioned, samples, rec.fs_hz);
    e.qrs_match = crate::rhythm::qrs_match::qrs_match(&b.conditioned, samples, rec.fs_hz);
    e.kurtosis = crate::rhythm::sqi::kurtosis(&b.conditioned);
    Ok((decide(&e, &p.verdict), e))
}

/// The verdict of a record from scratch: quality, beats, the screen and the P-wave index (no
/// embedding). A record too short or too broken for detection gets an `unreadable` verdict
/// with the reason, not an error; bad parameters are errors.
pub fn record_verdict(
    rec: &Record,
    p: &Checked<AnalyzeParams>,
) -> Result<(Verdict, VerdictEvidence)> {
    let (v, e, _) = record_verdict_geometry(rec, p, false)?;
    Ok((v, e))
}

/// [`record_verdict`] and, with `geometry`, the record's beat-geometry index
/// ([`record_geometry_index`]; NaN when not asked for or when the record has too few beats).
pub fn record_verdict_geometry(
    rec: &Record,
    p: &Checked<AnalyzeParams>,
    geometry: bool,
) -> Result<(Verdict, VerdictEvidence, f64)> {
    let li = pipeline::choose_lead(rec, p.lead.as_deref())?;
    let raw = &rec.leads[li].samples;
    let fs_ok = rec.fs_hz.is_finite() && rec.fs_hz > 2.0 * p.condition.band_hz.1;
    let too_short = !(rec.duration_s() >= p.verdict.min_duration_s);
    let all_missing = raw.iter().all(|v| !v.is_finite());
    if !fs_ok || too_short || all_missing || raw.is_empty() {
        let quality = crate::signal::quality(raw, rec.fs_hz, p.quality_segment_s);
        let e = evidence(
            raw,
            rec.fs_hz,
            &[],
            &[],
            &[],
            false,
            f64::NAN,
            &quality,
            0.0,
            &p.verdict,
        );
        let mut v = decide(&e, &p.verdict);
        if !fs_ok {
            v.class = VerdictClass::Unreadable;
            v.reasons = vec![format!(
                "the sampling rate {} Hz is too low for beat detection (above {} Hz needed)",
                rec.fs_hz,
                2.0 * p.condition.band_hz.1
            )];
        }
        return Ok((v, e, f64::NAN));
    }
    let quality = crate::signal::quality(raw, rec.fs_hz, p.quality_segment_s);
    let b = pipeline::detect_beats_on(rec, li, p)?;
    let screen = pipeline::screen_rhythm(&b, rec.fs_hz, p)?;
    let irregular_s = screen.irregular_s();
    let (v, e) = verdict_of_beats(rec, li, &b, &quality, irregular_s, p)?;
    let g = if geometry {
        record_geometry_index(rec, &b, p)?
    } else {
        f64::NAN
    };
    Ok((v, e, g))
}

/// Beat-geometry irregularity index of a recurrence timeline of the embedded beat trajectory:
/// 1 − the median determinism (DET, Marwan et al. 2007) of its windows. A trajectory that
/// revisits its own path beat after beat (regular rhythm, or a repeating pattern such as
/// bigeminy) has long diagonal lines and a high DET; one that jumps without a repeating order
/// has a low DET. NaN without windows.
pub fn geometry_index(windows: &[RqaWindow]) -> f64 {
    1.0 - crate::stats::median(windows.iter().map(|w| w.rqa.det))
}

/// The beat-geometry index of a record computed on its own (features, dense diffusion map,
/// recurrence of the first `p.recurrence_components` coordinates) for the comparison of
/// docs/validation.md; NaN when the record has too few beats with complete windows.
pub fn record_geometry_index(
    rec: &Record,
    b: &BeatsResult,
    p: &Checked<AnalyzeParams>,
) -> Result<f64> {
    let feats = match crate::features::beat_features(
        &b.conditioned,
        rec.fs_hz,
        &b.samples,
        &p.features(),
    ) {
        Ok(f) => f,
        Err(Error::Analysis(_)) => return Ok(f64::NAN),
        Err(e) => return Err(e),
    };
    if feats.points.n < 8 || feats.points.n < p.diffusion.components + 2 {
        return Ok(f64::NAN);
    }
    let dense = crate::embed::DiffusionParams {
        neighbors: 0,
        max_fit_points: feats.points.n.clamp(p.diffusion.components + 2, 5000),
        ..p.diffusion.clone()
    };
    // A new block (the dense kernel for this record's beats): checked here.
    let e = match crate::embed::diffusion_map(&feats.points, &Checked::new(dense)?) {
        Ok(e) => e,
        Err(Error::Analysis(_)) => return Ok(f64::NAN),
        Err(err) => return Err(err),
    };
    let c = p.recurrence_components.min(e.components);
    if c == 0 || e.n < 8 {
        return Ok(f64::NAN);
    }
    let traj: Vec<f64> = e
        .coords
        .chunks(e.components)
        .flat_map(|r| r[..c].to_vec())
        .collect();
    let pts = crate::points::Points::new(e.n, c, traj)?;
    Ok(geometry_index(&crate::rhythm::recurrence::rqa_timeline(
        &pts,
        &p.recurrence(),
    )?))
}

/// Extensions tried, in order, for a record named in a label file.
pub const RECORD_EXTENSIONS: [&str; 5] = ["hea", "csv", "edf", "h5", "tsv"];

/// The file of record `name` in `dir`: the first of `name.<ext>` for [`RECORD_EXTENSIONS`]
/// that exists. Errors name the folder, the record and the extensions tried.
pub fn find_record(dir: &Path, name: &str) -> Result<PathBuf> {
    RECORD_EXTENSIONS
        .iter()
        .map(|ext| dir.join(format!("{name}.{ext}")))
        .find(|p| p.is_file())
        .ok_or_else(|| {
            Error::Analysis(format!(
                "record `{name}` named in the labels is not in {} (looked for {name}.{{{}}})",
                dir.display(),
                RECORD_EXTENSIONS.join(",")
            ))
        })
}

/// One scored record.
#[derive(Debug, Clone, Serialize)]
pub struct LabelledVerdict {
    /// Record name.
    pub record: String,
    /// The label as written in the label file.
    pub label: String,
    /// The class the label maps to.
    pub truth: VerdictClass,
    /// The verdict.
    pub verdict: Verdict,
    /// Its evidence.
    pub evidence: VerdictEvidence,
    /// Reader warnings (e.g. a checksum that does not match).
    pub warnings: Vec<String>,
    /// The beat-geometry irregularity index ([`record_geometry_index`]).
    pub geometry_index: f64,
}

/// Verdicts of every record of a label file found in `dir`, in the label file's order, computed
/// in parallel (the result does not depend on the thread count). Every record is found before
/// any is analysed, so a missing one fails fast. With `geometry` each record's beat-geometry
/// index is computed too (a diffusion map per record; NaN otherwise).
pub fn verdicts_for_labels(
    dir: &Path,
    labels: &[(String, String)],
    map: &LabelMap,
    p: &Checked<AnalyzeParams>,
    geometry: bool,
) -> Result<Vec<LabelledVerdict>> {
    use rayon::prelude::*;
    let jobs: Vec<(String, String, VerdictClass, PathBuf)> = labels
        .iter()
        .map(|(name, label)| {
            let truth = map.class_of(label).ok_or_else(|| {
                Error::Analysis(format!(
                    "record `{name}`: label `{label}` is not in the label map ({})",
                    map.describe()
                ))
            })?;
            Ok((name.clone(), label.clone(), truth, find_record(dir, name)?))
        })
        .collect::<Result<_>>()?;
    jobs.par_iter()
        .map(|(name, label, truth, path)| {
            let loaded = io::read_record(path, &ReadOptions::default())?;
            let (verdict, evidence, geometry_index) =
                record_verdict_geometry(&loaded.record, p, geometry)?;
            Ok(LabelledVerdict {
                record: name.clone(),
                label: label.clone(),
                truth: *truth,
                verdict,
                evidence,
                warnings: loaded.warnings,
                geometry_index,
            })
        })
        .collect()
}

/// Score a folder of records against a label file (see [`verdicts_for_labels`]).
pub fn score_labels(
    dir: &Path,
    labels_path: &Path,
    map: &LabelMap,
    p: &Checked<AnalyzeParams>,
    geometry: bool,
) -> Result<(LabelScore, Vec<LabelledVerdict>)> {
    let labels = crate::rhythm::label_score::read_labels(labels_path)?;
    let rows = verdicts_for_labels(dir, &labels, map, p, geometry)?;
    let pairs: Vec<(VerdictClass, VerdictClass)> =
        rows.iter().map(|r| (r.truth, r.verdict.class)).collect();
    Ok((LabelScore::from_pairs(&pairs), rows))
}
