//! Diffusion maps (Coifman & Lafon 2006) of a point cloud, scalable to millions of points.
//!
//! In: [`Points`](crate::points::Points) and [`DiffusionParams`]. Out: an [`Embedding`]:
//! diffusion coordinates ψ_j·λ_j^t of every point, the eigenvalues, the kernel settings used, a
//! PCA baseline, and the fitted [`DiffusionModel`] that places new points by Nyström extension.
//! Parts: exact k-nearest neighbours ([`crate::neighbours`]: k-d tree or blocked brute force), the sparse
//! kernel and shift-invert eigensolver ([`sparse`]), PCA ([`pca`]), bandwidth selection, the
//! map itself, and reading/writing a fitted model in HDF5 ([`model_io`]).

use serde::{Deserialize, Serialize};

/// A fitted diffusion-map embedding.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Embedding {
    /// Number of embedded points.
    pub n: usize,
    /// Number of diffusion coordinates (the trivial constant one excluded).
    pub components: usize,
    /// Row-major `n × components` diffusion coordinates ψ_j(x)·λ_j^t.
    pub coords: Vec<f64>,
    /// Non-trivial eigenvalues λ_1 ≥ λ_2 ≥ … of the Markov matrix.
    pub eigenvalues: Vec<f64>,
    /// Gaussian kernel bandwidth ε in k(x,y) = exp(−‖x−y‖²/ε).
    pub epsilon: f64,
    /// Density normalisation exponent α.
    pub alpha: f64,
    /// Diffusion time t.
    pub t: f64,
    /// Neighbours k of the sparse kernel graph (0: dense kernel).
    #[serde(default)]
    pub neighbors: usize,
    /// Points the map was fitted on (fewer than `n` in landmark mode).
    #[serde(default)]
    pub fit_points: usize,
    /// Largest eigen-residual ‖Sv − λv‖ of the fit (0 when not computed).
    #[serde(default)]
    pub residual: f64,
    /// The fit's self-diagnosis: bandwidth rule, residuals, eigengap, connected components.
    #[serde(default)]
    pub diagnostics: FitDiagnostics,
    /// Landmark mode: relative Nyström error on a held-out sample (see
    /// [`landmark_error`]), when measured.
    #[serde(default)]
    pub landmark_error: Option<f64>,
    /// PCA baseline: row-major `n × pca_components` scores on the leading principal axes.
    #[serde(default)]
    pub pca_coords: Vec<f64>,
    /// Number of PCA baseline components.
    #[serde(default)]
    pub pca_components: usize,
    /// Share of the total variance on each PCA baseline axis.
    #[serde(default)]
    pub pca_explained: Vec<f64>,
    /// The fitted model (not serialised; written to HDF5 by [`model_io`]).
    #[serde(skip)]
    pub model: Option<Box<DiffusionModel>>,
}

pub mod bandwidth;
pub mod block_krylov;
pub mod chebyshev;
pub mod components;
mod diffusion;
pub mod model_io;
pub mod pca;
pub mod sparse;

pub use bandwidth::{kernel_sum_dimension, kernel_sum_rule, Bandwidth, KernelSum};
pub use diffusion::{
    aligned_relative_error, diffusion_map, diffusion_map_observed, fit, fit_observed,
    landmark_error, pca_baseline, principal_angles, DiffusionModel, DiffusionParams,
    FitDiagnostics, DENSE_GRAPH_NEIGHBORS, MAX_FIT_POINTS, MAX_SPARSE_FIT_POINTS,
};
pub use pca::Pca;
