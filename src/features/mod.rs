//! Beat features: windows of the conditioned signal aligned on each R peak, plus RR context.
//!
//! In: conditioned samples, rate, R-peak indices. Out: [`Features`], one row per kept beat.

use crate::points::Points;
use serde::{Deserialize, Serialize};

/// Feature matrix of beats.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Features {
    /// One row per kept beat.
    pub points: Points,
    /// Column names (e.g. `w-0.200s` … and `rr_prev_s`, `rr_next_s`).
    pub names: Vec<String>,
    /// For each row, the index of its beat in the detection list.
    pub beat_index: Vec<usize>,
}

pub mod table;
mod window;

pub use window::{beat_features, beat_features_scaled, FeatureParams};
