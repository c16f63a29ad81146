//! Intrinsic dimension, scale by scale.
//!
//! In: [`Points`](crate::points::Points). Out: a [`ScalingCurve`] of dimension against scale
//! from k-means quantization scaling (distortion D(k) ∝ k^(−2/d); Zador 1982, Graf & Luschgy
//! 2000), measured on held-out points, and a [`DimensionSuite`] of five estimators — k-means
//! scaling, TwoNN (Facco et al. 2017), MLE (Levina & Bickel 2004, MacKay & Ghahramani
//! correction), correlation dimension (Grassberger & Procaccia 1983) and local PCA — each with a
//! curve against scale and a bootstrap 95 % interval ([`dimension_suite`]), a finite-sample
//! correction against reference cubes ([`calibrate`]) and one consensus answer over a shared
//! scale axis ([`consensus`]). Point clouds from a
//! scalar series come from a delay embedding (Takens 1981) whose delay is the first minimum of
//! the average mutual information (Fraser & Swinney 1986) ([`delay`]).

use serde::{Deserialize, Serialize};

/// One point of a dimension-against-scale curve.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ScalePoint {
    /// Length scale (for k-means: √D at the pair's geometric mean).
    pub scale: f64,
    /// Local dimension estimate at that scale.
    pub d: f64,
}

/// Result of k-means quantization scaling.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ScalingCurve {
    /// Ladder of k (number of centres).
    pub ks: Vec<usize>,
    /// Held-out distortion D(k): mean squared distance to the nearest centre.
    pub distortion: Vec<f64>,
    /// Local slopes as dimension against scale, one per neighbouring pair of k.
    pub curve: Vec<ScalePoint>,
    /// Plateau estimate of d (robust summary of the curve over the non-noise scales).
    pub d: f64,
    /// Least-squares slope of log D against log k over the plateau, and its intercept.
    pub fit_slope: f64,
    /// Intercept of that fit (natural logs).
    pub fit_intercept: f64,
    /// Scale below which d climbs steeply (noise-dominated regime), if detected.
    pub noise_scale: Option<f64>,
}

mod kmeans;
mod scaling;

pub use kmeans::{distortion, kmeans, KmeansFit};
pub use scaling::{kmeans_scaling, KmeansScalingParams};

mod nn_estimators;

pub use crate::neighbours::knn_distances;
pub use nn_estimators::{mle, mle_zero_radius, twonn};

mod bootstrap;
pub mod calibrate;
pub mod consensus;
mod correlation;
pub mod delay;
mod local_pca;
mod local_spread;
mod suite;

pub use crate::neighbours::{knn_table, knn_table_rows};
pub use calibrate::Correction;
pub use consensus::{Consensus, ScaleCurve, Status};
pub use correlation::{correlation_counts, CorrelationCounts};
pub use local_pca::{local_pca_counts, PcaRule};
pub use suite::{
    dimension_suite, subset_indices, DimensionSuite, Method, MethodEstimate, SuiteParams,
};
