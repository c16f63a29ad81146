//! Diffusion maps (Coifman & Lafon 2006) of a point cloud.
//!
//! In: [`Points`](crate::points::Points) and parameters. Out: an [`Embedding`]: diffusion
//! coordinates ψ_j·λ_j^t of every point, the eigenvalues, and the kernel settings used.

use serde::{Deserialize, Serialize};

/// A fitted diffusion-map embedding.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
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
}

mod bandwidth;
mod diffusion;

pub use bandwidth::{auto_epsilon, kernel_sum_curve};
pub use diffusion::{diffusion_map, fit, DiffusionModel, DiffusionParams};
