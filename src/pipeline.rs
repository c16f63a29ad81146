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
    /// The reader's warnings about the input (e.g. a checksum that does not match its header).
    pub input_warnings: Vec<String>,
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
    /// Total duration of the screen's irregular episodes, seconds.
    pub irregular_s: f64,
    /// Recurrence quantification of the beat trajectory in diffusion coordinates, in sliding
    /// windows (Marwan et al. 2007); window bounds index feature rows.
    pub recurrence: Vec<crate::rhythm::recurrence::RqaWindow>,
    /// The trajectory the recurrence windows were computed on: the first
    /// `recurrence_components` diffusion coordinates of each embedded beat (empty when there
    /// was no recurrence quantification).
    pub recurrence_trajectory: crate::points::Points,
    /// The recurrence parameters used (threshold, window, step, line lengths).
    pub recurrence_params: crate::params::Checked<crate::rhythm::recurrence::RqaParams>,
    /// Median determinism of the recurrence windows (NaN without windows).
    pub recurrence_det_median: f64,
    /// The record's rhythm verdict (research label, never a diagnosis).
    pub verdict: crate::rhythm::verdict::Verdict,
    /// What the verdict rests on.
    pub verdict_evidence: crate::rhythm::verdict::VerdictEvidence,
    /// Beat-geometry irregularity: 1 − median determinism of the recurrence windows of the
    /// embedded trajectory (NaN without an embedding); see [`crate::verdicts::geometry_index`].
    pub geometry_index: f64,
    /// Reference annotations that came with the record (possibly empty).
    pub reference: Annotations,
    /// Detection score against the reference beats, when there are any.
    pub score: Option<Score>,
    /// Within-record beat-class separation of the embedded beats, where reference beat labels
    /// give at least two classes (see `separate::protocol::within_analysed`).
    pub separation: Option<crate::separate::Separation>,
    /// All parameters used, as JSON (for provenance).
    pub parameters: serde_json::Value,
    /// What could not be computed, and why (shown in the report).
    pub notes: Vec<String>,
    /// Wall time of the analysis, seconds.
    pub elapsed_s: f64,
}
use crate::beats::{self, DetectParams, DetectorChoice, ElgendiParams, FusionParams};
use crate::dimension::{self, KmeansScalingParams, SuiteParams};
use crate::embed::{self, DiffusionParams};
use crate::error::{Error, Result};
use crate::features::{self, FeatureParams};
use crate::params::{Check, Checked};
use crate::record::Record;
use crate::rhythm;
use crate::signal::{self, ConditionParams};
use serde::Deserialize;

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
    /// Which detector's beats are used (`"elgendi"`, default, or `"pan-tompkins"`); the other
    /// one gives the agreement index.
    pub primary_detector: DetectorChoice,
    /// Pan & Tompkins (1985) detector (older configs: `detect`).
    #[serde(alias = "detect")]
    pub pan_tompkins: DetectParams,
    /// Elgendi et al. (2013) detector (older configs: `second_detector`).
    #[serde(alias = "second_detector")]
    pub elgendi: ElgendiParams,
    /// Use every lead of the record for detection, choosing per agreement window the lead whose
    /// detectors agree best (see `beats::fusion`). Default false: the analysed lead only.
    pub fuse_leads: bool,
    /// bSQI margin by which another lead must beat the analysed one to be used (default 0.2).
    pub fuse_margin: f64,
    /// How `fuse_leads` combines the leads: `"choose"` (default, the best-agreeing lead per
    /// window) or `"vote"` (the vote fusion of `beats::fusion`, fewer false detections in noise).
    pub fuse_method: beats::FuseMethod,
    /// Window for the per-window beat agreement, seconds (default 10).
    pub agreement_window_s: f64,
    /// Beat features.
    pub features: FeatureParams,
    /// Diffusion map.
    pub diffusion: DiffusionParams,
    /// The dimension suite: estimators, bootstrap, seed and each estimator's keys
    /// (`dimension.twonn_discard`, `dimension.mle_k1`, …), with k-means quantization scaling
    /// under `dimension.kmeans`. `dimension.seed` is the seed of the whole suite, k-means
    /// included (`dimension.kmeans.seed` is refused).
    pub dimension: SuiteParams,
    /// Irregular-rhythm screen.
    pub screen: crate::rhythm::screen::ScreenParams,
    /// P-wave presence index feeding the screen's atrial veto (`screen.atrial_veto`).
    pub atrial: crate::rhythm::atrial::AtrialParams,
    /// Recurrence quantification of the embedded beat trajectory.
    pub recurrence: crate::rhythm::recurrence::RqaParams,
    /// The per-record rhythm verdict.
    pub verdict: crate::rhythm::verdict::VerdictParams,
    /// Records with at most this many beats are embedded with the dense kernel (every pair of
    /// beats; `diffusion.neighbors` is then ignored); larger ones on the kNN graph. Default
    /// 2000; 0 always uses the graph.
    pub dense_kernel_max_beats: usize,
    /// Diffusion coordinates used as the trajectory for recurrence (default 3).
    pub recurrence_components: usize,
    /// Fewest beats with complete windows for which the dimension suite is computed (default
    /// 30, the embedding's own minimum; never below it). Callers that would not report an
    /// estimate from fewer points (e.g. a cohort's minimum support) raise it to save the work.
    pub dimension_min_points: usize,
    /// Quality segment length, seconds.
    pub quality_segment_s: f64,
    /// Beat matching window for scoring against reference beats, seconds (EC57: 0.150).
    pub score_window_s: f64,
    /// The beat-class separation bench (`beatfold separate`, and the within-record separation
    /// of `analyze` where reference labels exist).
    pub separate: crate::separate::SeparateParams,
}

impl Default for AnalyzeParams {
    fn default() -> Self {
        AnalyzeParams {
            lead: None,
            condition: ConditionParams::default(),
            primary_detector: DetectorChoice::default(),
            pan_tompkins: DetectParams::default(),
            elgendi: ElgendiParams::default(),
            fuse_leads: false,
            fuse_margin: 0.2,
            fuse_method: beats::FuseMethod::Choose,
            agreement_window_s: 10.0,
            features: FeatureParams::default(),
            // The library default: a variable bandwidth (Berry & Harlim 2016), which also keeps
            // rare beat shapes connected to their nearest neighbours.
            diffusion: DiffusionParams::default(),
            dimension: SuiteParams::default(),
            screen: crate::rhythm::screen::ScreenParams::default(),
            atrial: crate::rhythm::atrial::AtrialParams::default(),
            recurrence: crate::rhythm::recurrence::RqaParams::default(),
            verdict: crate::rhythm::verdict::VerdictParams::default(),
            dense_kernel_max_beats: 2000,
            recurrence_components: 3,
            dimension_min_points: MIN_BEATS_FOR_GEOMETRY,
            quality_segment_s: 10.0,
            score_window_s: 0.150,
            separate: crate::separate::SeparateParams::default(),
        }
    }
}

impl Check for AnalyzeParams {
    /// Validate every stage's parameters before any work starts; errors name the config path
    /// (e.g. `diffusion.components`).
    fn validate(&self) -> Result<()> {
        self.condition
            .validate()
            .map_err(|e| e.in_block("condition"))?;
        self.pan_tompkins
            .validate()
            .map_err(|e| e.in_block("pan_tompkins"))?;
        self.elgendi.validate().map_err(|e| e.in_block("elgendi"))?;
        self.verdict.validate().map_err(|e| e.in_block("verdict"))?;
        if !(0.0..=1.0).contains(&self.fuse_margin) {
            return Err(Error::param(
                "fuse_margin",
                format!("{} is outside [0, 1] (a bSQI difference)", self.fuse_margin),
            ));
        }
        if !(self.agreement_window_s.is_finite() && self.agreement_window_s >= 1.0) {
            return Err(Error::param(
                "agreement_window_s",
                format!("{} s; must be at least 1 s", self.agreement_window_s),
            ));
        }
        self.features
            .validate()
            .map_err(|e| e.in_block("features"))?;
        self.diffusion
            .validate()
            .map_err(|e| e.in_block("diffusion"))?;
        if self.dimension.kmeans.seed != KmeansScalingParams::default().seed {
            return Err(Error::param(
                "dimension.kmeans.seed",
                "the k-means seed is dimension.seed (one seed for the whole suite); leave this key out",
            ));
        }
        self.dimension
            .validate()
            .map_err(|e| e.in_block("dimension"))?;
        self.screen.validate().map_err(|e| e.in_block("screen"))?;
        self.atrial.validate().map_err(|e| e.in_block("atrial"))?;
        self.recurrence
            .validate()
            .map_err(|e| e.in_block("recurrence"))?;
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
        crate::separate::SeparateParams::check(&self.separate)
            .map_err(|e| e.in_block("separate"))?;
        if !(self.score_window_s > 0.0 && self.score_window_s <= 1.0) {
            return Err(Error::param(
                "score_window_s",
                format!("{} s; allowed 0 < w ≤ 1 s", self.score_window_s),
            ));
        }
        Ok(())
    }
}

/// The checked sub-blocks of checked analysis parameters, for the stages (which take only the
/// checked form). [`AnalyzeParams::validate`] checks each of them, so none is checked again.
impl Checked<AnalyzeParams> {
    /// `condition`, checked.
    pub fn condition(&self) -> Checked<ConditionParams> {
        Checked::part_of_checked(self.condition.clone())
    }
    /// `pan_tompkins`, checked.
    pub fn pan_tompkins(&self) -> Checked<DetectParams> {
        Checked::part_of_checked(self.pan_tompkins.clone())
    }
    /// `elgendi`, checked.
    pub fn elgendi(&self) -> Checked<ElgendiParams> {
        Checked::part_of_checked(self.elgendi.clone())
    }
    /// `features`, checked.
    pub fn features(&self) -> Checked<FeatureParams> {
        Checked::part_of_checked(self.features.clone())
    }
    /// `diffusion`, checked.
    pub fn diffusion(&self) -> Checked<DiffusionParams> {
        Checked::part_of_checked(self.diffusion.clone())
    }
    /// `dimension.kmeans` with the suite's seed, checked.
    pub fn dimension(&self) -> Checked<KmeansScalingParams> {
        Checked::part_of_checked(KmeansScalingParams {
            seed: self.dimension.seed,
            ..self.dimension.kmeans.clone()
        })
    }
    /// `screen`, checked.
    pub fn screen(&self) -> Checked<rhythm::screen::ScreenParams> {
        Checked::part_of_checked(self.screen.clone())
    }
    /// `atrial`, checked.
    pub fn atrial(&self) -> Checked<rhythm::atrial::AtrialParams> {
        Checked::part_of_checked(self.atrial.clone())
    }
    /// `recurrence`, checked.
    pub fn recurrence(&self) -> Checked<rhythm::recurrence::RqaParams> {
        Checked::part_of_checked(self.recurrence.clone())
    }
    /// `verdict`, checked.
    pub fn verdict(&self) -> Checked<rhythm::verdict::VerdictParams> {
        Checked::part_of_checked(self.verdict.clone())
    }
    /// The dimension suite of `analyze`: the `dimension` block, its k-means part on the
    /// suite's seed.
    pub fn suite(&self) -> Checked<dimension::SuiteParams> {
        Checked::part_of_checked(SuiteParams {
            kmeans: self.dimension().into_inner(),
            ..self.dimension.clone()
        })
    }
    /// The P-wave index parameters of the verdict (`atrial` with the verdict's template size;
    /// both blocks allow the same sizes).
    pub fn verdict_atrial(&self) -> Checked<rhythm::atrial::AtrialParams> {
        Checked::part_of_checked(self.verdict.atrial(&self.atrial))
    }
    /// The same parameters with another lead (the lead has no range; [`prepare`] resolves it
    /// against the record).
    pub fn with_lead(self, lead: Option<String>) -> Self {
        let mut t = self.into_inner();
        t.lead = lead;
        Checked::part_of_checked(t)
    }
    /// The same parameters with `dimension_min_points` raised to at least `n` (any count is
    /// allowed).
    pub fn with_dimension_min_points_at_least(self, n: usize) -> Self {
        let mut t = self.into_inner();
        t.dimension_min_points = t.dimension_min_points.max(n);
        Checked::part_of_checked(t)
    }
}

impl AnalyzeParams {
    /// Parse parameters from JSON text; on failure, the dotted config path of the offending key
    /// (e.g. `diffusion.components`, or `(top level)`) and the parser's error.
    pub fn from_json_text(text: &str) -> std::result::Result<Self, (String, serde_json::Error)> {
        let mut de = serde_json::Deserializer::from_str(text);
        serde_path_to_error::deserialize(&mut de).map_err(|e| {
            let path = e.path().to_string();
            let key = if path == "." || path.is_empty() {
                "(top level)".to_string()
            } else {
                path
            };
            (key, e.into_inner())
        })
    }

    /// Read parameters from a JSON file (partial files are fine; unknown keys are refused in
    /// every block, naming the key's config path).
    pub fn from_json_file(path: &std::path::Path) -> Result<Self> {
        let text = crate::io::read_text(path)?;
        let p = Self::from_json_text(&text).map_err(|(key, e)| {
            Error::input(
                path,
                format!("{key} (line {}, column {})", e.line(), e.column()),
                e.to_string(),
            )
        })?;
        // A value out of range names the file as well as the key.
        p.validate().map_err(|e| match e {
            Error::Param { name, msg } => Error::input(path, name, msg),
            e => e,
        })?;
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
    /// The reader's warnings (e.g. a checksum that does not match), kept in the provenance.
    pub warnings: Vec<String>,
}

/// Detected beats of one lead, with RR intervals, heuristic labels and the agreement of a second
/// detector.
#[derive(Debug, Clone)]
pub struct BeatsResult {
    /// R-peak samples of the primary detector.
    pub samples: Vec<usize>,
    /// Beats of the second, independent detector.
    pub second: Vec<usize>,
    /// Which detector is primary.
    pub primary_detector: DetectorChoice,
    /// With `fuse_leads`: the record lead index used in each agreement window; else empty.
    pub lead_per_window: Vec<usize>,
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

/// A note when the diffusion kernel falls into separate or barely connected groups of beats: a
/// non-trivial eigenvalue λ of the Markov matrix within 1e-6 of 1. Eigenvalue 1 repeats once per
/// group that no kernel weight connects (closed classes of a stochastic matrix), and 1 − λ is
/// the rate at which a random walk crosses between groups (Coifman & Lafon 2006): below 1e-6 it
/// takes about a million diffusion steps, so the matching diffusion coordinates say little
/// beyond which group a beat belongs to.
pub fn separate_groups_note(eigenvalues: &[f64]) -> Option<String> {
    let ones = eigenvalues.iter().filter(|&&l| l > 1.0 - 1e-6).count();
    (ones > 0).then(|| {
        format!(
            "diffusion map: the beats fall into at least {} groups that the kernel connects barely or not at all ({ones} eigenvalue{} within 1e-6 of 1); {} mainly mark{} group membership, and distances between groups are not measured",
            ones + 1,
            if ones == 1 { "" } else { "s" },
            if ones == 1 {
                "diffusion coordinate 1".to_string()
            } else {
                format!("diffusion coordinates 1–{ones}")
            },
            if ones == 1 { "s" } else { "" },
        )
    })
}

/// The irregular-rhythm research screen of detected beats (sampled at `fs_hz`) with
/// `p.screen`, and its atrial-activity veto from the P-wave index of the conditioned lead with
/// `p.atrial` ([`rhythm::atrial::p_wave_index_with`], [`rhythm::screen::screen_beats_atrial`]).
pub fn screen_rhythm(
    b: &BeatsResult,
    fs_hz: f64,
    p: &Checked<AnalyzeParams>,
) -> Result<rhythm::screen::Screen> {
    let atrial = rhythm::atrial::p_wave_index_with(&b.conditioned, &b.samples, fs_hz, &p.atrial())?;
    rhythm::screen::screen_beats_atrial(
        &b.samples,
        &b.rr_s,
        &b.labels,
        &atrial.index,
        fs_hz,
        &p.screen(),
    )
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

/// The one preparation step of every command: check that the record's sampling rate is valid
/// and above the Nyquist rate of the conditioning band, and choose the lead. Returns the lead
/// index. A rate too low for the band (e.g. 50 Hz against a 40 Hz band edge) is a property of the
/// data, not a bad option: an analysis failure (exit status 1) with the numbers, before any
/// filter is designed.
pub fn prepare(rec: &Record, p: &AnalyzeParams) -> Result<usize> {
    let li = choose_lead(rec, p.lead.as_deref())?;
    if !(rec.fs_hz.is_finite() && rec.fs_hz > 0.0) {
        return Err(Error::Analysis(format!(
            "record `{}` has an invalid sampling rate {}",
            rec.name, rec.fs_hz
        )));
    }
    let high_hz = p.condition.band_hz.1;
    if rec.fs_hz <= 2.0 * high_hz {
        return Err(Error::Analysis(format!(
            "record `{}` is sampled at {} Hz; the conditioning band reaches {high_hz} Hz, which needs a rate above {} Hz (Nyquist), so no beat can be detected",
            rec.name,
            rec.fs_hz,
            2.0 * high_hz
        )));
    }
    Ok(li)
}

/// Condition one lead and detect its beats (the `beats` command and the first half of
/// [`analyze`]): [`prepare`], then [`detect_beats_on`].
pub fn detect_beats(rec: &Record, p: &Checked<AnalyzeParams>) -> Result<BeatsResult> {
    let li = prepare(rec, p)?;
    detect_beats_on(rec, li, p)
}

/// Condition lead `li` (chosen by [`prepare`]) and detect its beats.
pub fn detect_beats_on(rec: &Record, li: usize, p: &Checked<AnalyzeParams>) -> Result<BeatsResult> {
    let raw = &rec.leads[li].samples;
    // The analysed lead first (it is preferred), then the others when fusing.
    let mut leads: Vec<&[f64]> = vec![raw.as_slice()];
    if p.fuse_leads {
        leads.extend(
            rec.leads
                .iter()
                .enumerate()
                .filter(|(k, l)| *k != li && l.samples.len() == raw.len())
                .map(|(_, l)| l.samples.as_slice()),
        );
    }
    let (pan_tompkins, elgendi) = (p.pan_tompkins(), p.elgendi());
    let fp = FusionParams {
        method: p.fuse_method,
        pan_tompkins: &pan_tompkins,
        elgendi: &elgendi,
        primary: p.primary_detector,
        match_window_s: p.score_window_s,
        window_s: p.agreement_window_s,
        fuse_margin: p.fuse_margin,
    };
    // Conditioning and detection are independent: run them side by side.
    let (conditioned, det) = rayon::join(
        || signal::condition(raw, rec.fs_hz, &p.condition()),
        || beats::detect_leads(&leads, rec.fs_hz, &fp),
    );
    let (conditioned, det) = (conditioned?, det?);
    let agreement = beats::agreement(&det.primary, &det.second, rec.fs_hz, p.score_window_s);
    let beat_agreement = det
        .primary
        .iter()
        .map(|&s| {
            let k = (s as f64 / rec.fs_hz / p.agreement_window_s).floor() as usize;
            det.windows.get(k).map_or(f64::NAN, |x| x.1)
        })
        .collect();
    let rr_s = beats::rr_intervals_s(&det.primary, rec.fs_hz);
    let labels = beats::label_beats(&conditioned, rec.fs_hz, &det.primary);
    let lead_per_window = if leads.len() > 1 {
        // Map indices into `leads` back to record lead indices.
        let others: Vec<usize> = (0..rec.leads.len())
            .filter(|&k| k != li && rec.leads[k].samples.len() == raw.len())
            .collect();
        det.windows
            .iter()
            .map(|w| {
                if w.2 == 0 {
                    li
                } else {
                    others.get(w.2 - 1).copied().unwrap_or(li)
                }
            })
            .collect()
    } else {
        Vec::new()
    };
    Ok(BeatsResult {
        second: det.second,
        agreement,
        beat_agreement,
        samples: det.primary,
        rr_s,
        labels,
        conditioned,
        primary_detector: p.primary_detector,
        lead_per_window,
    })
}

/// Run the whole chain on one record. `progress` is called with each stage's index and name.
pub fn analyze(
    rec: &Record,
    input: &InputInfo,
    p: &Checked<AnalyzeParams>,
    progress: &mut dyn FnMut(usize, &str),
) -> Result<Analysis> {
    analyze_with_table(rec, input, p, None, progress)
}

/// [`analyze`] with a user's per-beat feature table whose columns replace or join the built-in
/// beat windows from the embedding on (see [`features::table`]); its rows and beats left out
/// are counted in the notes.
///
/// Errors: those of [`analyze`]; no table row matching a detected beat.
pub fn analyze_with_table(
    rec: &Record,
    input: &InputInfo,
    p: &Checked<AnalyzeParams>,
    table: Option<(
        &crate::io::beat_table::BeatTable,
        crate::separate::TableMode,
    )>,
    progress: &mut dyn FnMut(usize, &str),
) -> Result<Analysis> {
    let t0 = std::time::Instant::now();
    let li = prepare(rec, p)?;
    progress(0, STAGES[0]);
    let quality = signal::quality(&rec.leads[li].samples, rec.fs_hz, p.quality_segment_s);
    progress(1, STAGES[1]);
    let b = detect_beats_on(rec, li, p)?;
    progress(2, STAGES[2]);
    let mut notes = signal::quality::quality_notes(&quality);
    let feats = match features::beat_features(&b.conditioned, rec.fs_hz, &b.samples, &p.features())
    {
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
    let feats = match table {
        Some((t, mode)) => {
            let (f, j) = features::table::apply(
                &feats,
                &b.samples,
                rec.fs_hz,
                p.score_window_s,
                &rec.name,
                t,
                mode,
            )?;
            notes.push(j.note(t, mode));
            f
        }
        None => feats,
    };
    progress(3, STAGES[3]);
    let (embedding, dim, dimension_suite) = if feats.points.n >= MIN_BEATS_FOR_GEOMETRY {
        // Small records: every pair enters the kernel (the dense form of Coifman & Lafon 2006);
        // a kNN graph of a few hundred beats splits into near-disconnected pieces.
        let e = if feats.points.n <= p.dense_kernel_max_beats && p.diffusion.neighbors > 0 {
            // A new block (the dense kernel for this record's beats): checked here.
            let dense = Checked::new(DiffusionParams {
                neighbors: 0,
                max_fit_points: feats.points.n.clamp(p.diffusion.components + 2, 5000),
                ..p.diffusion.clone()
            })?;
            embed::diffusion_map(&feats.points, &dense)?
        } else {
            embed::diffusion_map(&feats.points, &p.diffusion())?
        };
        match &e.diagnostics.note {
            Some(n) => notes.push(format!("diffusion map: {n}")),
            None => notes.extend(separate_groups_note(&e.eigenvalues)),
        }
        progress(4, STAGES[4]);
        if feats.points.n >= p.dimension_min_points {
            let suite = dimension::dimension_suite(&feats.points, &p.suite())?;
            notes.extend(suite.failures.iter().map(|f| format!("dimension: {f}")));
            let d = suite.kmeans.clone().unwrap_or_else(empty_curve);
            (e, d, Some(suite))
        } else {
            notes.push(format!(
                "only {} beats with complete windows: the dimension estimate needs at least {} (dimension_min_points) and was not computed",
                feats.points.n, p.dimension_min_points
            ));
            (e, empty_curve(), None)
        }
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
    let screen = screen_rhythm(&b, rec.fs_hz, p)?;
    if screen.windows.is_empty() {
        notes.push(format!(
            "irregular-rhythm screen: {} RR intervals, fewer than one window of {}",
            b.rr_s.len(),
            p.screen.window_beats
        ));
    }
    let (recurrence, recurrence_trajectory) = if embedding.n >= 8 {
        let c = p.recurrence_components.min(embedding.components);
        let traj: Vec<f64> = embedding
            .coords
            .chunks(embedding.components.max(1))
            .flat_map(|r| r[..c].to_vec())
            .collect();
        let pts = crate::points::Points::new(embedding.n, c, traj)?;
        (
            rhythm::recurrence::rqa_timeline(&pts, &p.recurrence())?,
            pts,
        )
    } else {
        (
            Vec::new(),
            crate::points::Points {
                n: 0,
                dim: 0,
                data: Vec::new(),
            },
        )
    };
    let recurrence_det_median = crate::stats::median(recurrence.iter().map(|w| w.rqa.det));
    let irregular_s = screen.irregular_s();
    let (verdict, verdict_evidence) =
        crate::verdicts::verdict_of_beats(rec, li, &b, &quality, irregular_s, p)?;
    let geometry_index = crate::verdicts::geometry_index(&recurrence);
    let reference = rec.annotations.clone();
    let score = (!reference.beats.is_empty()).then(|| {
        let r: Vec<usize> = reference.beats.iter().map(|x| x.sample).collect();
        beats::score(&r, &b.samples, rec.fs_hz, p.score_window_s)
    });
    let separation = crate::separate::protocol::within_analysed(
        rec,
        &b.samples,
        p.score_window_s,
        &feats,
        &embedding,
        p.separate.vote_neighbors,
        match table.map(|t| t.1) {
            None => "",
            Some(crate::separate::TableMode::Replace) => "table-",
            Some(crate::separate::TableMode::Join) => "joined-",
        },
    )?;
    let mut parameters = serde_json::to_value(p).map_err(|e| Error::Analysis(e.to_string()))?;
    if let (Some((t, mode)), Some(obj)) = (table, parameters.as_object_mut()) {
        obj.insert(
            "feature_table".into(),
            serde_json::json!({"file": t.path.display().to_string(), "mode": mode,
                "columns": t.names}),
        );
    }
    Ok(Analysis {
        record_name: rec.name.clone(),
        input_sha256: input.sha256.clone(),
        input_name: input.name.clone(),
        input_warnings: input.warnings.clone(),
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
        irregular_s,
        recurrence,
        recurrence_trajectory,
        recurrence_params: p.recurrence(),
        recurrence_det_median,
        verdict,
        verdict_evidence,
        geometry_index,
        reference,
        score,
        separation,
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
        ..Embedding::default()
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn repeated_unit_eigenvalue_is_reported_as_separate_groups() {
        // A stochastic matrix has eigenvalue 1 once per closed class (Perron–Frobenius, common
        // practice): one non-trivial eigenvalue at 1 (or within 1e-6 of it) means two groups.
        let two = separate_groups_note(&[1.0 - 4e-9, 0.98, 0.95]).unwrap();
        assert!(two.contains("at least 2 groups"), "{two}");
        assert!(two.contains("coordinate 1 mainly marks"), "{two}");
        let three = separate_groups_note(&[1.0, 1.0 - 2e-7, 0.9]).unwrap();
        assert!(three.contains("at least 3 groups"), "{three}");
        assert!(
            three.contains("coordinates 1–2 mainly mark group"),
            "{three}"
        );
        assert_eq!(separate_groups_note(&[0.9999, 0.99]), None);
    }

    #[test]
    fn atrial_block_of_the_configuration_is_read_and_checked() {
        let p: AnalyzeParams =
            serde_json::from_str(r#"{"atrial": {"window_start_ms": 250}}"#).unwrap();
        assert_eq!(p.atrial.window_start_ms, 250.0);
        assert_eq!(
            p.atrial.window_end_ms,
            rhythm::atrial::AtrialParams::default().window_end_ms
        );
        assert!(p.validate().is_ok());
        let bad: AnalyzeParams =
            serde_json::from_str(r#"{"atrial": {"window_start_ms": 50}}"#).unwrap();
        match bad.validate() {
            Err(Error::Param { name, .. }) => assert!(name.starts_with("atrial."), "{name}"),
            other => panic!("expected a parameter error, got {other:?}"),
        }
    }

    #[test]
    fn an_out_of_range_value_is_named_by_its_config_path() {
        for (json, key) in [
            (r#"{"condition": {"order": 10}}"#, "condition.order"),
            (r#"{"recurrence": {"l_min": 1}}"#, "recurrence.l_min"),
            (
                r#"{"diffusion": {"components": 0}}"#,
                "diffusion.components",
            ),
        ] {
            let p = AnalyzeParams::from_json_text(json).unwrap();
            match p.validate() {
                Err(Error::Param { name, msg }) => {
                    assert!(name.starts_with(key), "{json}: `{name}`");
                    assert!(!msg.is_empty());
                }
                other => panic!("{json}: expected a parameter error, got {other:?}"),
            }
        }
    }

    #[test]
    fn the_configuration_and_the_filter_designer_allow_the_same_orders() {
        for order in 1..=12 {
            let p =
                AnalyzeParams::from_json_text(&format!(r#"{{"condition": {{"order": {order}}}}}"#))
                    .unwrap();
            let config_ok = p.validate().is_ok();
            let design_ok =
                crate::signal::filter::Sos::butter_bandpass(order, 0.5, 40.0, 250.0).is_ok();
            assert_eq!(config_ok, design_ok, "order {order}");
            assert_eq!(config_ok, order <= 8, "order {order}");
        }
    }

    #[test]
    fn a_typo_in_any_block_is_refused_with_its_config_path() {
        // Each block of the configuration, with one misspelt key.
        for (block, json) in [
            (
                "diffusion.componnets",
                r#"{"diffusion": {"componnets": 3}}"#,
            ),
            ("screen.widow_beats", r#"{"screen": {"widow_beats": 64}}"#),
            ("features.pre_s_", r#"{"features": {"pre_s_": 0.2}}"#),
            ("dimension.seeed", r#"{"dimension": {"seeed": 1}}"#),
            ("atrial.windw", r#"{"atrial": {"windw": 1}}"#),
            ("recurrence.rat", r#"{"recurrence": {"rat": 0.1}}"#),
            ("condition.notch_hzz", r#"{"condition": {"notch_hzz": 50}}"#),
            ("pan_tompkins.x", r#"{"pan_tompkins": {"x": 1}}"#),
            ("elgendi.x", r#"{"elgendi": {"x": 1}}"#),
            (
                "verdict.min_duraton_s",
                r#"{"verdict": {"min_duraton_s": 1}}"#,
            ),
            ("lead_", r#"{"lead_": "II"}"#),
            ("diffusionn", r#"{"diffusionn": {}}"#),
        ] {
            let (key, e) = AnalyzeParams::from_json_text(json).expect_err(block);
            let field = block.rsplit('.').next().unwrap();
            assert!(e.to_string().contains("unknown field"), "{block}: {e}");
            assert_eq!(key, block, "{e}");
            assert!(e.to_string().contains(field), "{block}: {e}");
        }
        assert!(AnalyzeParams::from_json_text(r#"{"diffusion": {"components": 3}}"#).is_ok());
    }
}
