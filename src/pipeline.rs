//! The whole chain on one record: condition → detect → features → embed → dimension → rhythm.
//!
//! [`Analysis`] is everything the report writes; it is computed here and only read by `report`.

use crate::beats::Score;
use crate::dimension::ScalingCurve;
use crate::embed::Embedding;
use crate::features::Features;
use crate::record::{Annotations, Lead};
use crate::rhythm::Variability;
use crate::signal::QualitySegment;
use serde::Serialize;

/// Everything computed for one record; the input of every writer in `report`.
#[derive(Debug, Clone, Serialize)]
pub struct Analysis {
    /// Record name (untrusted text: escape before display).
    pub record_name: String,
    /// SHA-256 of the input file, hex, when the record came from a file.
    pub input_sha256: Option<String>,
    /// Input file name as given, when the record came from a file.
    pub input_name: String,
    /// Sampling rate, Hz.
    pub fs_hz: f64,
    /// Duration, seconds.
    pub duration_s: f64,
    /// The analysed lead, raw (physical units).
    pub raw: Lead,
    /// The analysed lead after conditioning (same length and unit).
    pub conditioned: Vec<f64>,
    /// Quality flags per segment.
    pub quality: Vec<QualitySegment>,
    /// Detected R-peak sample indices, increasing.
    pub beat_samples: Vec<usize>,
    /// Beat labels, one per detected beat (`N`, `V` premature, `Q` other/unknown).
    pub beat_labels: Vec<char>,
    /// Beat agreement of two detectors per beat (0..1), when computed.
    pub beat_agreement: Vec<f64>,
    /// Record-level agreement index (0..1), when computed.
    pub agreement: Option<f64>,
    /// RR intervals, seconds; `rr_s[i]` is between beats i and i+1.
    pub rr_s: Vec<f64>,
    /// Beat features (rows refer to beats through `features.beat_index`).
    pub features: Features,
    /// Diffusion-map embedding of the feature rows (row i ↔ features row i).
    pub embedding: Embedding,
    /// Scale-resolved dimension of the feature rows.
    pub dimension: ScalingCurve,
    /// Time-domain variability of the RR series.
    pub variability: Variability,
    /// Reference annotations that came with the record (possibly empty).
    pub reference: Annotations,
    /// Detection score against the reference beats, when there are any.
    pub score: Option<Score>,
    /// All parameters used, as JSON (for provenance).
    pub parameters: serde_json::Value,
    /// What could not be computed, and why (shown in the report).
    pub notes: Vec<String>,
    /// Wall time of the analysis, seconds.
    pub elapsed_s: f64,
}
