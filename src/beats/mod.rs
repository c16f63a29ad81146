//! Beat detection, beat-by-beat scoring and the RR series.
//!
//! In: a lead (raw samples) and its rate. Out: R-peak sample indices, RR intervals, and, when a
//! reference is given, a [`Score`] by the ANSI/AAMI EC57 matching rule.
//!
//! Submodules: [`pan_tompkins`] (the detector of Pan & Tompkins 1985 with its checked
//! [`DetectParams`]; [`PanTompkins`] is designed once per sampling rate and run on many leads),
//! [`elgendi`] (an independent detector, Elgendi et al. 2013, the default primary), [`fusion`]
//! (which detector is primary, and a per-window choice between leads) and [`scoring`] (EC57 beat matching, RR intervals, beat agreement of Li, Mark & Clifford 2008).

use serde::{Deserialize, Serialize};

pub mod ec57;
pub mod elgendi;
pub mod fusion;
pub mod labels;
pub mod noise_stress;
pub mod pan_tompkins;
pub mod readable;
pub mod scoring;
#[cfg(test)]
mod testsig;

pub use elgendi::{elgendi, ElgendiParams};
pub use fusion::{
    detect_leads, detect_leads_with, DetectorChoice, FuseMethod, FusionParams, LeadDetection,
    VoteParams,
};
pub use labels::label_beats;
pub use pan_tompkins::{pan_tompkins, DetectParams, Detection, PanTompkins};
pub use scoring::{agreement, agreement_windows, rr_intervals_s, score, score_between};

/// Beat-by-beat comparison of detected beats against reference beats.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Score {
    /// Number of reference beats.
    pub reference: usize,
    /// Number of detected beats.
    pub detected: usize,
    /// True positives (matched pairs).
    pub tp: usize,
    /// False positives (detections without a reference beat).
    pub fp: usize,
    /// False negatives (reference beats without a detection).
    #[serde(rename = "fn")]
    pub fn_: usize,
    /// Sensitivity TP/(TP+FN); 1 when there is no reference beat.
    pub se: f64,
    /// Positive predictivity TP/(TP+FP); 1 when nothing was detected.
    pub ppv: f64,
    /// Matching window in milliseconds (150 in EC57).
    pub match_window_ms: f64,
}
