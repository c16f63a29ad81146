//! The whole chain on one record: condition → detect → features → embed → dimension → rhythm.
//!
//! [`Analysis`] is everything the report writes; it is computed here and only read by `report`.

use crate::beats::Score;
use crate::dimension::{DimensionSuite, ScalingCurve};
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
    /// The five-estimator dimension suite of the feature rows (k-means scaling, TwoNN, MLE,
    /// correlation dimension, local PCA, each with a curve and a bootstrap interval); None when
    /// there were too few beats. Its k-means result is `dimension`.
    pub dimension_suite: Option<DimensionSuite>,
    /// Time-domain variability of the NN series.
    pub variability: Variability,
    /// Poincaré SD1 and SD2 of the NN series, milliseconds (Brennan et al. 2001).
    pub poincare_ms: (f64, f64),
    /// Sample entropy of the NN series (m = 2, r = 0.2·SD; Richman & Moorman 2000), computed on
    /// at most the first 5000 intervals; NaN when undefined.
    pub sample_entropy: f64,
    /// Irregular-rhythm research screen over the RR series (Dash et al. 2009 statistics).
    pub screen: crate::rhythm::screen::Screen,
    /// Recurrence quantification of the beat trajectory in diffusion coordinates, in sliding
    /// windows (Marwan et al. 2007); window bounds index feature rows.
    pub recurrence: Vec<crate::rhythm::recurrence::RqaWindow>,
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
use crate::beats::{self, DetectParams, ElgendiParams};
use crate::dimension::{self, KmeansScalingParams};
use crate::embed::{self, DiffusionParams};
use crate::error::{Error, Result};
use crate::features::{self, FeatureParams};
use crate::record::Record;
use crate::rhythm;
use crate::signal::{self, ConditionParams};
use serde::Deserialize;

/// Bootstrap resamples of the dimension suite in `analyze`.
const SUITE_BOOTSTRAP: usize = 20;

/// Fewest beats for which an embedding and a dimension estimate are attempted.
pub const MIN_BEATS_FOR_GEOMETRY: usize = 30;

/// Every parameter of [`analyze`], deserialisable from a JSON config file (missing keys take
/// their defaults; unknown keys are refused so a typo cannot pass silently).
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct AnalyzeParams {
    /// Lead to analyse: a name or a zero-based index; `None` = the first lead.
    pub lead: Option<String>,
    /// Conditioning (band-pass, notch, baseline removal).
    pub condition: ConditionParams,
    /// Beat detection (Pan & Tompkins 1985).
    pub detect: DetectParams,
    /// The second, independent detector used for the agreement index (Elgendi et al. 2013).
    pub second_detector: ElgendiParams,
    /// Window for the per-window beat agreement, seconds (default 10).
    pub agreement_window_s: f64,
    /// Beat features.
    pub features: FeatureParams,
    /// Diffusion map.
    pub diffusion: DiffusionParams,
    /// k-means quantization scaling.
    pub dimension: KmeansScalingParams,
    /// Irregular-rhythm screen.
    pub screen: crate::rhythm::screen::ScreenParams,
    /// Recurrence quantification of the embedded beat trajectory.
    pub recurrence: crate::rhythm::recurrence::RqaParams,
    /// Diffusion coordinates used as the trajectory for recurrence (default 3).
    pub recurrence_components: usize,
    /// Quality segment length, seconds.
    pub quality_segment_s: f64,
    /// Beat matching window for scoring against reference beats, seconds (EC57: 0.150).
    pub score_window_s: f64,
}

impl Default for AnalyzeParams {
    fn default() -> Self {
        AnalyzeParams {
            lead: None,
            condition: ConditionParams::default(),
            detect: DetectParams::default(),
            second_detector: ElgendiParams::default(),
            agreement_window_s: 10.0,
            features: FeatureParams::default(),
            // Local scaling (Zelnik-Manor & Perona 2004) keeps rare beat shapes connected.
            diffusion: DiffusionParams {
                local_scaling_neighbors: 7,
                ..DiffusionParams::default()
            },
            dimension: KmeansScalingParams::default(),
            screen: crate::rhythm::screen::ScreenParams::default(),
            recurrence: crate::rhythm::recurrence::RqaParams::default(),
            recurrence_components: 3,
            quality_segment_s: 10.0,
            score_window_s: 0.150,
        }
    }
}

impl AnalyzeParams {
    /// Validate every stage's parameters before any work starts.
    pub fn check(&self) -> Result<()> {
        self.condition.check()?;
        self.detect.check()?;
        self.second_detector.check()?;
        if !(self.agreement_window_s.is_finite() && self.agreement_window_s >= 1.0) {
            return Err(Error::param(
                "agreement_window_s",
                format!("{} s; must be at least 1 s", self.agreement_window_s),
            ));
        }
        self.features.check()?;
        self.diffusion.check()?;
        self.dimension.check()?;
        self.screen.check()?;
        self.recurrence.check()?;
        if self.recurrence_components == 0 {
            return Err(Error::param(
                "recurrence_components",
                "must be at least 1 diffusion coordinate",
            ));
        }
        if !(self.quality_segment_s.is_finite() && self.quality_segment_s >= 1.0) {
            return Err(Error::param(
                "quality_segment_s",
                format!("{} s; must be at least 1 s", self.quality_segment_s),
            ));
        }
        if !(self.score_window_s > 0.0 && self.score_window_s <= 1.0) {
            return Err(Error::param(
                "score_window_s",
                format!("{} s; allowed 0 < w ≤ 1 s", self.score_window_s),
            ));
        }
        Ok(())
    }

    /// Read parameters from a JSON file (partial files are fine).
    pub fn from_json_file(path: &std::path::Path) -> Result<Self> {
        let text = crate::io::read_text(path)?;
        let p: AnalyzeParams = serde_json::from_str(&text).map_err(|e| {
            Error::input(
                path,
                format!("line {}, column {}", e.line(), e.column()),
                e.to_string(),
            )
        })?;
        p.check()?;
        Ok(p)
    }
}

/// Stages reported to a progress callback.
pub const STAGES: [&str; 6] = [
    "conditioning",
    "detecting beats",
    "describing beats",
    "embedding",
    "measuring dimension",
    "rhythm",
];

/// Provenance of the input, when it came from a file.
#[derive(Debug, Clone, Default)]
pub struct InputInfo {
    /// File name as the user gave it.
    pub name: String,
    /// SHA-256 of the file, hex.
    pub sha256: Option<String>,
}

/// Detected beats of one lead, with RR intervals, heuristic labels and the agreement of a second
/// detector.
#[derive(Debug, Clone)]
pub struct BeatsResult {
    /// R-peak samples (Pan & Tompkins 1985).
    pub samples: Vec<usize>,
    /// Beats of the second, independent detector (Elgendi et al. 2013).
    pub second: Vec<usize>,
    /// Record-level beat agreement bSQI of the two (Li, Mark & Clifford 2008).
    pub agreement: f64,
    /// Per beat: the bSQI of the agreement window holding it.
    pub beat_agreement: Vec<f64>,
    /// RR intervals, seconds.
    pub rr_s: Vec<f64>,
    /// One label per beat.
    pub labels: Vec<char>,
    /// Conditioned lead.
    pub conditioned: Vec<f64>,
}

/// Choose the lead to analyse.
pub fn choose_lead(rec: &Record, lead: Option<&str>) -> Result<usize> {
    if rec.leads.is_empty() {
        return Err(Error::Analysis(format!(
            "record `{}` has no lead",
            rec.name
        )));
    }
    match lead {
        None => Ok(0),
        Some(k) => rec.find_lead(k).ok_or_else(|| {
            let names: Vec<&str> = rec.leads.iter().map(|l| l.name.as_str()).collect();
            Error::param(
                "lead",
                format!("`{k}` is neither a lead name nor an index; this record has {names:?}"),
            )
        }),
    }
}

/// Condition one lead and detect its beats (the `beats` command and the first half of
/// [`analyze`]).
pub fn detect_beats(rec: &Record, p: &AnalyzeParams) -> Result<BeatsResult> {
    let li = choose_lead(rec, p.lead.as_deref())?;
    let raw = &rec.leads[li].samples;
    let conditioned = signal::condition(raw, rec.fs_hz, &p.condition)?;
    let det = beats::pan_tompkins(raw, rec.fs_hz, &p.detect)?;
    let second = beats::elgendi(raw, rec.fs_hz, &p.second_detector)?;
    let w = p.score_window_s;
    let agreement = beats::agreement(&det.samples, &second, rec.fs_hz, w);
    let windows = beats::agreement_windows(
        &det.samples,
        &second,
        rec.fs_hz,
        w,
        p.agreement_window_s,
        raw.len(),
    );
    let beat_agreement = det
        .samples
        .iter()
        .map(|&s| {
            let k = (s as f64 / rec.fs_hz / p.agreement_window_s).floor() as usize;
            windows.get(k).map_or(f64::NAN, |x| x.1)
        })
        .collect();
    let rr_s = beats::rr_intervals_s(&det.samples, rec.fs_hz);
    let labels = beats::label_beats(&conditioned, rec.fs_hz, &det.samples);
    Ok(BeatsResult {
        second,
        agreement,
        beat_agreement,
        samples: det.samples,
        rr_s,
        labels,
        conditioned,
    })
}

/// Run the whole chain on one record. `progress` is called with each stage's index and name.
pub fn analyze(
    rec: &Record,
    input: &InputInfo,
    p: &AnalyzeParams,
    progress: &mut dyn FnMut(usize, &str),
) -> Result<Analysis> {
    p.check()?;
    let t0 = std::time::Instant::now();
    let li = choose_lead(rec, p.lead.as_deref())?;
    if !(rec.fs_hz.is_finite() && rec.fs_hz > 0.0) {
        return Err(Error::Analysis(format!(
            "record `{}` has an invalid sampling rate {}",
            rec.name, rec.fs_hz
        )));
    }
    progress(0, STAGES[0]);
    let quality = signal::quality(&rec.leads[li].samples, rec.fs_hz, p.quality_segment_s);
    progress(1, STAGES[1]);
    let b = detect_beats(rec, p)?;
    progress(2, STAGES[2]);
    let mut notes = Vec::new();
    let feats = match features::beat_features(&b.conditioned, rec.fs_hz, &b.samples, &p.features) {
        Ok(f) => f,
        Err(Error::Analysis(msg)) => {
            notes.push(format!("beat features: {msg}"));
            Features {
                points: crate::points::Points {
                    n: 0,
                    dim: 0,
                    data: Vec::new(),
                },
                names: Vec::new(),
                beat_index: Vec::new(),
            }
        }
        Err(e) => return Err(e),
    };
    progress(3, STAGES[3]);
    let (embedding, dim, dimension_suite) = if feats.points.n >= MIN_BEATS_FOR_GEOMETRY {
        let e = embed::diffusion_map(&feats.points, &p.diffusion)?;
        progress(4, STAGES[4]);
        let sp = dimension::SuiteParams {
            seed: p.dimension.seed,
            bootstrap: SUITE_BOOTSTRAP,
            kmeans: p.dimension.clone(),
            ..dimension::SuiteParams::default()
        };
        let suite = dimension::dimension_suite(&feats.points, &sp)?;
        notes.extend(suite.failures.iter().map(|f| format!("dimension: {f}")));
        let d = suite.kmeans.clone().unwrap_or_else(empty_curve);
        (e, d, Some(suite))
    } else {
        notes.push(format!(
            "only {} beats with complete windows: at least {MIN_BEATS_FOR_GEOMETRY} are needed for the embedding and the dimension estimate, which were not computed",
            feats.points.n
        ));
        (empty_embedding(&p.diffusion), empty_curve(), None)
    };
    progress(5, STAGES[5]);
    let nn = rhythm::nn_intervals(&b.rr_s, &b.labels);
    let variability = rhythm::variability(&nn);
    let (sd1_ms, sd2_ms, sample_entropy) = rhythm::entropy::nn_descriptors(&nn);
    let screen = rhythm::screen::screen_beats(&b.samples, &b.rr_s, rec.fs_hz, &p.screen)?;
    if screen.windows.is_empty() {
        notes.push(format!(
            "irregular-rhythm screen: {} RR intervals, fewer than one window of {}",
            b.rr_s.len(),
            p.screen.window_beats
        ));
    }
    let recurrence = if embedding.n >= 8 {
        let c = p.recurrence_components.min(embedding.components);
        let traj: Vec<f64> = embedding
            .coords
            .chunks(embedding.components.max(1))
            .flat_map(|r| r[..c].to_vec())
            .collect();
        let pts = crate::points::Points::new(embedding.n, c, traj)?;
        rhythm::recurrence::rqa_timeline(&pts, &p.recurrence)?
    } else {
        Vec::new()
    };
    let reference = rec.annotations.clone();
    let score = (!reference.beats.is_empty()).then(|| {
        let r: Vec<usize> = reference.beats.iter().map(|x| x.sample).collect();
        beats::score(&r, &b.samples, rec.fs_hz, p.score_window_s)
    });
    let parameters = serde_json::to_value(p).map_err(|e| Error::Analysis(e.to_string()))?;
    Ok(Analysis {
        record_name: rec.name.clone(),
        input_sha256: input.sha256.clone(),
        input_name: input.name.clone(),
        fs_hz: rec.fs_hz,
        duration_s: rec.duration_s(),
        raw: rec.leads[li].clone(),
        conditioned: b.conditioned,
        quality,
        beat_agreement: b.beat_agreement,
        agreement: Some(b.agreement),
        beat_samples: b.samples,
        beat_labels: b.labels,
        rr_s: b.rr_s,
        features: feats,
        embedding,
        dimension: dim,
        dimension_suite,
        variability,
        poincare_ms: (sd1_ms, sd2_ms),
        sample_entropy,
        screen,
        recurrence,
        reference,
        score,
        parameters,
        notes,
        elapsed_s: t0.elapsed().as_secs_f64(),
    })
}

fn empty_embedding(p: &DiffusionParams) -> Embedding {
    Embedding {
        n: 0,
        components: 0,
        coords: Vec::new(),
        eigenvalues: Vec::new(),
        epsilon: f64::NAN,
        alpha: p.alpha,
        t: p.t,
    }
}

fn empty_curve() -> ScalingCurve {
    ScalingCurve {
        ks: Vec::new(),
        distortion: Vec::new(),
        curve: Vec::new(),
        d: f64::NAN,
        fit_slope: f64::NAN,
        fit_intercept: f64::NAN,
        noise_scale: None,
    }
}
