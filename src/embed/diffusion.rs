//! Diffusion maps on a sparse k-nearest-neighbour kernel (or a dense kernel for small fits),
//! with Nyström extension and landmark mode.
//!
//! In: [`Points`] and [`DiffusionParams`]. Out: an [`Embedding`] (via [`diffusion_map`]) or a
//! [`DiffusionModel`] (via [`fit`]) that can place new points.
//!
//! Method: diffusion maps (Coifman & Lafon 2006, Appl. Comput. Harmon. Anal. 21:5–30). On the fit
//! set (all points, or `max_fit_points` seeded random landmarks when there are more):
//! K_ij = exp(−‖x_i−x_j‖²/ε) (or exp(−‖x_i−x_j‖²/(σ_iσ_j)), local scaling of Zelnik-Manor &
//! Perona 2004); q_i = Σ_j K_ij; K^α_ij = K_ij/(q_i^α q_j^α); d_i = Σ_j K^α_ij; the top
//! eigenpairs of the symmetric S = D^{−½} K^α D^{−½}; ψ_l = v_l·√(Σd/d), so the trivial
//! ψ_0 = 1 and the ψ_l are orthonormal under the stationary measure d/Σd. Coordinates are
//! ψ_l·λ_l^t for l = 1..components.
//!
//! With `neighbors = k > 0` (default 15) K lives on the symmetrised exact kNN graph and the
//! eigenpairs come from shift-invert with a sparse Cholesky factor (see [`super::sparse`]):
//! memory O(N·k). With `neighbors = 0` the kernel is dense (every pair; fit sets up to 5000)
//! and the eigenpairs come from a dense decomposition or thick-restart Lanczos.
//!
//! Before the neighbour search, inputs of more than `pca_max_dim` coordinates (default 20) are
//! projected on their leading principal axes: as many as keep `pca_variance` (default 99 %) of
//! the variance, at most `pca_max_dim`; the whole model then lives in that space. The default
//! was set by measurement (docs/performance.md): beat-like windows with white noise need more
//! than 20 axes for 99 %, the dropped axes being noise, and exact brute force in 64 dimensions
//! is about 20 times slower than the k-d tree in 20. `pca_max_dim = 0` keeps the exact search in
//! the full dimension.
//!
//! Points outside the fit set are placed by the Nyström extension
//! ψ_l(x) = λ_l⁻¹ Σ_j p(x,x_j) ψ_l(x_j) over the fit points (their k + 1 nearest in sparse
//! mode, all of them in dense mode), with the same α normalisation (Coifman & Lafon 2006).
//!
//! Each eigenvector's sign is fixed so that its entry of largest magnitude is positive.
//! Eigenvalues are clamped at 0 before raising to the power t.

use super::bandwidth::{kernel_sum_rule, Bandwidth};
use super::components::{join_components, Components, MIN_WEIGHT};
use super::pca::Pca;
use super::sparse::{finish, kernel_graph, normalise_scaled, submatrix, top_eigen_sparse, Solver};
use super::Embedding;
use crate::error::{Error, Result};
use crate::neighbours::{knn, Neighbors};
use crate::params::Checked;
use crate::points::Points;
use faer::dyn_stack::{MemBuffer, MemStack};
use faer::linalg::solvers::Solve;
use faer::matrix_free::eigen::{
    partial_self_adjoint_eigen, partial_self_adjoint_eigen_scratch, PartialEigenParams,
};
use faer::{Col, Mat, Side};
use rand::seq::index::sample;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

/// Largest fit set allowed with the dense kernel (`neighbors = 0`; m × m matrix).
pub const MAX_FIT_POINTS: usize = 5000;
/// Largest fit set allowed with the sparse kernel.
pub const MAX_SPARSE_FIT_POINTS: usize = 10_000_000;

/// Parameters of [`diffusion_map`] and [`fit`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct DiffusionParams {
    /// Number of non-trivial diffusion coordinates (default 10; at least 1).
    pub components: usize,
    /// Density normalisation exponent α in [0, 1] (default 1: Laplace–Beltrami, density-free).
    pub alpha: f64,
    /// Diffusion time t ≥ 0 (default 1).
    pub t: f64,
    /// How the kernel bandwidth is chosen: `local` (default), `auto` or a fixed ε (see
    /// [`Bandwidth`]).
    pub bandwidth: Bandwidth,
    /// Largest fit set (default 200 000). Above it, landmark mode: the map is fitted on a seeded
    /// random subset of this many points and every other point is placed by Nyström extension.
    /// At most 5000 with the dense kernel (`neighbors = 0`).
    pub max_fit_points: usize,
    /// Seed for the landmarks, the bandwidth subsample and the eigensolver start (default 0).
    pub seed: u64,
    /// With `bandwidth = local`: the ad hoc scale ρ0_i is the root-mean-square distance from
    /// point i to its first `bandwidth_neighbors` neighbours (default 20; 1 to `neighbors` with
    /// a sparse kernel); ρ then comes from the density estimate it gives.
    pub bandwidth_neighbors: usize,
    /// Neighbours k of the sparse kernel graph (default 30; 0 = dense kernel on every pair).
    pub neighbors: usize,
    /// Project inputs of more than this many coordinates on at most this many principal axes
    /// before the neighbour search (default 20; 0 = never, exact search in full dimension).
    pub pca_max_dim: usize,
    /// Share of variance at which fewer axes suffice, in (0, 1] (default 0.99).
    pub pca_variance: f64,
    /// In landmark mode, held-out points used to measure the Nyström approximation error
    /// (default 0 = not measured; see [`landmark_error`]).
    pub landmark_check: usize,
}

impl Default for DiffusionParams {
    fn default() -> Self {
        DiffusionParams {
            components: 10,
            alpha: 1.0,
            t: 1.0,
            bandwidth: Bandwidth::Local,
            max_fit_points: 200_000,
            seed: 0,
            bandwidth_neighbors: 20,
            neighbors: 30,
            pca_max_dim: 20,
            pca_variance: 0.99,
            landmark_check: 0,
        }
    }
}

impl DiffusionParams {
    /// Overlay user choices of the kernel on these parameters (flag, then file, then default): a
    /// given `bandwidth` replaces the current one; a given `neighbors` count replaces the graph's
    /// and caps `bandwidth_neighbors` at it (a sparse kernel needs that rank ≤ k). `None` keeps
    /// the current value. Shared by the command line and the Python package.
    pub fn overlay_kernel(&mut self, bandwidth: Option<Bandwidth>, neighbors: Option<usize>) {
        if let Some(b) = bandwidth {
            self.bandwidth = b;
        }
        if let Some(k) = neighbors {
            self.neighbors = k;
            if k > 0 {
                self.bandwidth_neighbors = self.bandwidth_neighbors.min(k);
            }
        }
    }

    /// Validate: `components` in 1..=1000; `alpha` in [0, 1]; `t` in [0, 1e6]; a fixed
    /// bandwidth finite and above 0; `neighbors` 0 or 2..=1000; `bandwidth_neighbors` from 1 to
    /// `neighbors` (sparse kernel) or 1000; `max_fit_points` from components + 2 to 10 000 000
    /// (with the dense kernel the fit set itself may hold at most 5000 points, checked by
    /// [`fit`]); `pca_variance` in (0, 1]; `landmark_check` at most 1 000 000.
    pub fn check(&self) -> Result<&Self> {
        if !(1..=1000).contains(&self.components) {
            return Err(Error::param(
                "components",
                format!("{}; allowed 1 to 1000 coordinates", self.components),
            ));
        }
        if !(self.alpha.is_finite() && (0.0..=1.0).contains(&self.alpha)) {
            return Err(Error::param(
                "alpha",
                format!("{}; allowed 0 to 1 (dimensionless)", self.alpha),
            ));
        }
        if !(self.t.is_finite() && (0.0..=1e6).contains(&self.t)) {
            return Err(Error::param(
                "t",
                format!("{}; allowed 0 to 1e6 diffusion steps", self.t),
            ));
        }
        if let Bandwidth::Fixed(e) = self.bandwidth {
            if !(e.is_finite() && e > 0.0) {
                return Err(Error::param(
                    "bandwidth",
                    format!(
                        "{e}; a fixed ε must be finite and above 0 (squared feature units), \
                         or `auto` or `local`"
                    ),
                ));
            }
        }
        if self.neighbors == 1 || self.neighbors > 1000 {
            return Err(Error::param(
                "neighbors",
                format!(
                    "{}; allowed 0 (dense kernel) or 2 to 1000 neighbours",
                    self.neighbors
                ),
            ));
        }
        let rho_cap = if self.neighbors > 0 {
            self.neighbors
        } else {
            1000
        };
        if self.bandwidth == Bandwidth::Local
            && (self.bandwidth_neighbors == 0 || self.bandwidth_neighbors > rho_cap)
        {
            return Err(Error::param(
                "bandwidth_neighbors",
                format!(
                    "{}; allowed 1 to {rho_cap} neighbours{}",
                    self.bandwidth_neighbors,
                    if self.neighbors > 0 {
                        " (at most `neighbors`)"
                    } else {
                        ""
                    }
                ),
            ));
        }
        if self.max_fit_points < self.components + 2 || self.max_fit_points > MAX_SPARSE_FIT_POINTS
        {
            return Err(Error::param(
                "max_fit_points",
                format!(
                    "{}; allowed components + 2 = {} to {MAX_SPARSE_FIT_POINTS} points",
                    self.max_fit_points,
                    self.components + 2,
                ),
            ));
        }
        if !(self.pca_variance > 0.0 && self.pca_variance <= 1.0) {
            return Err(Error::param(
                "pca_variance",
                format!("{}; allowed share 0 < v ≤ 1", self.pca_variance),
            ));
        }
        if self.landmark_check > 1_000_000 {
            return Err(Error::param(
                "landmark_check",
                format!("{}; allowed 0 to 1 000 000 points", self.landmark_check),
            ));
        }
        Ok(self)
    }
}

/// What the fit reports about itself (shown by `embed --json`, results.h5 and the report).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct FitDiagnostics {
    /// How ε was chosen: `fixed`, `kernel-sum` (one global ε) or `kernel-sum, variable`.
    pub bandwidth_rule: String,
    /// Twice the steepest kernel-sum slope (the dimension it implies), when the rule ran.
    pub kernel_sum_dimension: Option<f64>,
    /// Median kernel weight of the farthest kept neighbour (sparse kernel): near 0 the
    /// truncation to k neighbours cuts only the negligible tail; near 1 the graph is in effect
    /// an unweighted kNN graph.
    pub truncation_weight: Option<f64>,
    /// Residual ‖Av − θv‖ of each computed pair (unit v; the trivial pair first).
    pub residuals: Vec<f64>,
    /// The largest drop λ_l − λ_(l+1) among the non-trivial eigenvalues, and l (1-based).
    pub eigengap: Option<(usize, f64)>,
    /// Connected components of the kernel graph (weights above 1e-12).
    pub connected_components: usize,
    /// Their sizes, largest first.
    pub component_sizes: Vec<usize>,
    /// What more than one component means and what was done (None when connected).
    pub note: Option<String>,
    /// Chebyshev eigensolver work: block products and the lower spectrum bound (None for the
    /// other solvers; not serialised, for benchmarks).
    #[serde(skip)]
    pub chebyshev_work: Option<(usize, f64)>,
}

/// A fitted diffusion map: what is needed to place new points by Nyström extension.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DiffusionModel {
    /// The fit (landmark) points, in the space the kernel works in (after the PCA projection
    /// in `reduction`, when there is one).
    pub landmarks: Points,
    /// Row of each landmark in the input of [`fit`].
    pub landmark_index: Vec<usize>,
    /// Density estimates q_j = (Σ_i K_ji)/ρ_j^kernel_dim over the landmarks (ρ = 1 for a
    /// global ε).
    pub q: Vec<f64>,
    /// Row-major `m × components` eigenfunctions ψ_1..ψ_c at the landmarks (ψ_0 = 1 dropped).
    pub psi: Vec<f64>,
    /// Non-trivial eigenvalues λ_1 ≥ λ_2 ≥ … of the Markov matrix (for a variable bandwidth:
    /// of one step at the median bandwidth, λ = 1 + median(ρ²)·ν with ν the generator's).
    pub eigenvalues: Vec<f64>,
    /// Bandwidth ε.
    pub epsilon: f64,
    /// Density normalisation exponent α asked for (the operator's).
    pub alpha: f64,
    /// Diffusion time t.
    pub t: f64,
    /// Local scales ρ_j of the landmarks (empty for a global ε).
    pub rho: Vec<f64>,
    /// Neighbours whose RMS distance gives the ad hoc scale ρ0 (0 for a global ε).
    pub rho_rank: usize,
    /// Ad hoc scales ρ0_j of the landmarks (empty for a global ε).
    pub rho0: Vec<f64>,
    /// Bandwidth ε0 and dimension d0 of the density estimate q0 = Σ_j K0 / ρ0^d0 over the
    /// `graph_k` + 1 nearest landmarks, from which ρ = q0^(−1/d0).
    pub eps0: f64,
    /// See `eps0`.
    pub dim0: f64,
    /// See `eps0`.
    pub graph_k: usize,
    /// The exponent a of q in K/(q_i^a q_j^a) that realises `alpha` (= alpha for a global ε).
    pub kernel_alpha: f64,
    /// Dimension d in the density estimate q = Σ K / ρ^d (0 for a global ε).
    pub kernel_dim: f64,
    /// median(ρ²) (1 for a global ε).
    pub rho_scale: f64,
    /// Neighbours k of the sparse kernel (0: dense kernel).
    #[serde(default)]
    pub neighbors: usize,
    /// PCA applied to every input before the kernel, and the number of axes kept.
    #[serde(default)]
    pub reduction: Option<(Pca, usize)>,
    /// Largest eigen-residual of the fit (0 when not computed).
    #[serde(default)]
    pub residual: f64,
    /// The fit's self-diagnosis (not saved with the model).
    #[serde(default)]
    pub diagnostics: FitDiagnostics,
}

/// ρ below this share of the median ρ is raised to it (exact duplicates).
const RHO_FLOOR: f64 = 1e-6;
/// Neighbours of the graph on which a dense kernel's bandwidth is chosen.
pub const DENSE_GRAPH_NEIGHBORS: usize = 15;

/// RMS of the first `r` squared distances of an ascending list, one exact 0 (the point
/// itself) skipped.
fn rms_skip_self(sorted: &[f64], r: usize) -> f64 {
    let start = usize::from(sorted.first() == Some(&0.0));
    let end = (start + r).min(sorted.len());
    if end <= start {
        return 0.0;
    }
    (sorted[start..end].iter().sum::<f64>() / (end - start) as f64).sqrt()
}

/// λ^t with λ clamped at 0.
fn power(lambda: f64, t: f64) -> f64 {
    lambda.max(0.0).powf(t)
}

/// ψ_l = v_l·√(Σw/w) for l = 1..=c (column 0 of `u` is the trivial pair), signs fixed; w the
/// stationary weights (d for a global ε, d·ρ² for a variable one).
fn psi_from(u: &Mat<f64>, w: &[f64], c: usize) -> Vec<f64> {
    let m = w.len();
    let sum_w: f64 = w.iter().sum();
    let mut psi = vec![0.0; m * c];
    for l in 1..=c {
        let mut v: Vec<f64> = (0..m).map(|i| u[(i, l)] * (sum_w / w[i]).sqrt()).collect();
        let big = v
            .iter()
            .copied()
            .fold(0.0f64, |b, x| if x.abs() > b.abs() { x } else { b });
        if big < 0.0 {
            v.iter_mut().for_each(|x| *x = -*x);
        }
        for (i, x) in v.into_iter().enumerate() {
            psi[i * c + (l - 1)] = x;
        }
    }
    psi
}

/// The bandwidth chosen for a fit.
struct Chosen {
    rho: Vec<f64>,
    rho0: Vec<f64>,
    eps0: f64,
    dim0: f64,
    graph_k: usize,
    rank: usize,
    eps: f64,
    rule: String,
    dimension: Option<f64>,
    kernel_alpha: f64,
    kernel_dim: f64,
    rho_scale: f64,
}

impl Chosen {
    /// s_ij in K_ij = exp(−‖x_i − x_j‖²/s_ij).
    fn scale(&self, a: usize, b: usize) -> f64 {
        if self.rho.is_empty() {
            self.eps
        } else {
            self.eps * self.rho[a] * self.rho[b]
        }
    }
}

/// ρ, ε and the kernel exponent for `p.bandwidth` on the kNN table `nb` of the fit points
/// (each row: the point, then its neighbours).
///
/// Variable bandwidth (Berry & Harlim 2016): ρ_i = RMS distance to the first
/// `bandwidth_neighbors` neighbours, ∝ q^(−1/d) for a sampling density q; ε and d from the
/// kernel-sum rule on the ρ-scaled graph; then the operator R⁻¹(D⁻¹K^a − I)/ε has the limit
/// Δ + (2 − 2a + dβ + 2β)∇log q·∇ with β = −1/d, so a = α − ½ − 1/d gives the
/// (2 − 2α)∇log q·∇ drift of Coifman & Lafon's α: α = 1 is the Laplace–Beltrami operator.
fn choose_bandwidth(nb: &Neighbors, p: &DiffusionParams) -> Result<Chosen> {
    let global = |eps: f64, rule: &str, dimension: Option<f64>| Chosen {
        rho: Vec::new(),
        rho0: Vec::new(),
        eps0: 0.0,
        dim0: 0.0,
        graph_k: 0,
        rank: 0,
        eps,
        rule: rule.to_string(),
        dimension,
        kernel_alpha: p.alpha,
        kernel_dim: 0.0,
        rho_scale: 1.0,
    };
    match p.bandwidth {
        Bandwidth::Fixed(e) => Ok(global(e, "fixed", None)),
        Bandwidth::Auto => {
            let ks = kernel_sum_rule(nb, &[], p.seed)?;
            Ok(global(ks.epsilon, "kernel-sum", Some(ks.dimension())))
        }
        Bandwidth::Local => {
            let r = p.bandwidth_neighbors.min(nb.k.saturating_sub(1)).max(1);
            let mut rho: Vec<f64> = (0..nb.n)
                .map(|i| {
                    let d: Vec<f64> = nb
                        .index_of(i)
                        .iter()
                        .zip(nb.dist2_of(i))
                        .filter(|(&j, _)| j != i)
                        .map(|(_, &v)| v)
                        .take(r)
                        .collect();
                    (d.iter().sum::<f64>() / d.len().max(1) as f64).sqrt()
                })
                .collect();
            let mut sorted = rho.clone();
            sorted.sort_by(f64::total_cmp);
            let med = sorted[sorted.len() / 2];
            if !(med > 0.0 && med.is_finite()) {
                return Err(Error::Analysis(format!(
                    "local bandwidth: most points coincide with their {r} nearest neighbours                      (median neighbour distance {med}); the points have no spread to measure"
                )));
            }
            rho.iter_mut().for_each(|v| *v = v.max(RHO_FLOOR * med));
            // Second step (Berry & Harlim 2016): a density estimate q0 with the ad hoc
            // bandwidth ρ0, then ρ = q0^(−1/d0). The raw neighbour distances are noisy from
            // point to point; the kernel sum over the neighbourhood is smooth.
            let ks0 = kernel_sum_rule(nb, &rho, p.seed)?;
            let d0 = ks0.dimension().max(1.0);
            let q0: Vec<f64> = (0..nb.n)
                .map(|i| {
                    let s: f64 = nb
                        .index_of(i)
                        .iter()
                        .zip(nb.dist2_of(i))
                        .map(|(&j, &v)| (-v / (ks0.epsilon * rho[i] * rho[j])).exp())
                        .sum();
                    s / rho[i].powf(d0)
                })
                .collect();
            let rho0 = std::mem::take(&mut rho);
            let mut rho: Vec<f64> = q0.iter().map(|q| q.powf(-1.0 / d0)).collect();
            let mut sorted = rho.clone();
            sorted.sort_by(f64::total_cmp);
            let med = sorted[sorted.len() / 2];
            rho.iter_mut().for_each(|v| *v = v.max(RHO_FLOOR * med));
            let ks = kernel_sum_rule(nb, &rho, p.seed)?;
            // At least 1: a continuum of points has d ≥ 1; the slope reads low when the
            // truncated sum saturates early.
            let d = ks.dimension().max(1.0);
            let mut r2: Vec<f64> = rho.iter().map(|v| v * v).collect();
            r2.sort_by(f64::total_cmp);
            Ok(Chosen {
                rho0,
                eps0: ks0.epsilon,
                dim0: d0,
                graph_k: nb.k - 1,
                rank: r,
                eps: ks.epsilon,
                rule: "kernel-sum, variable".to_string(),
                dimension: Some(ks.dimension()),
                kernel_alpha: p.alpha - 0.5 - 1.0 / d,
                kernel_dim: d,
                rho_scale: r2[r2.len() / 2],
                rho,
            })
        }
    }
}

/// The note for a kernel graph with more than one component.
fn component_note(sizes: &[usize], components: usize) -> Option<String> {
    let k = sizes.len();
    (k > 1).then(|| {
        let shown: Vec<String> = sizes.iter().take(8).map(|s| s.to_string()).collect();
        let flat = (k - 1).min(components);
        format!(
            "the kernel graph has {k} connected components (sizes {}{}): no diffusion crosses \
             between them, so distances between components are not measured. Each component \
             was embedded on its own and the spectra joined: diffusion coordinate{} {} (eigenvalue \
             1) only mark{} which component a point is in; the others describe the shape within \
             the components.",
            shown.join(", "),
            if k > 8 { ", …" } else { "" },
            if flat == 1 { "" } else { "s" },
            if flat == 1 {
                "1".to_string()
            } else {
                format!("1–{flat}")
            },
            if flat == 1 { "s" } else { "" },
        )
    })
}

/// Largest drop among the non-trivial eigenvalues.
fn eigengap(l: &[f64]) -> Option<(usize, f64)> {
    l.windows(2)
        .enumerate()
        .map(|(i, w)| (i + 1, w[0] - w[1]))
        .fold(None, |b: Option<(usize, f64)>, x| match b {
            Some(b) if b.1 >= x.1 => Some(b),
            _ => Some(x),
        })
}

/// Everything the two fits share once the eigenpairs θ, u of A are known.
#[allow(clippy::too_many_arguments)]
fn assemble(
    lm: Points,
    p: &DiffusionParams,
    bw: Chosen,
    q: Vec<f64>,
    w: &[f64],
    cmin: f64,
    theta: &[f64],
    u: &Mat<f64>,
    residuals: Vec<f64>,
    comps: &Components,
    truncation_weight: Option<f64>,
) -> DiffusionModel {
    let c = p.components;
    let eigenvalues: Vec<f64> = theta[1..=c]
        .iter()
        .map(|&th| 1.0 + bw.rho_scale / cmin * (th - 1.0))
        .collect();
    let psi = psi_from(u, w, c);
    let diagnostics = FitDiagnostics {
        bandwidth_rule: bw.rule,
        kernel_sum_dimension: bw.dimension,
        truncation_weight,
        residuals: residuals.clone(),
        eigengap: eigengap(&eigenvalues),
        connected_components: comps.count(),
        component_sizes: comps.sizes.clone(),
        note: component_note(&comps.sizes, c),
        chebyshev_work: None,
    };
    DiffusionModel {
        landmarks: lm,
        landmark_index: Vec::new(),
        q,
        psi,
        eigenvalues,
        epsilon: bw.eps,
        alpha: p.alpha,
        t: p.t,
        rho: bw.rho,
        rho_rank: bw.rank,
        rho0: bw.rho0,
        eps0: bw.eps0,
        dim0: bw.dim0,
        graph_k: bw.graph_k,
        kernel_alpha: bw.kernel_alpha,
        kernel_dim: bw.kernel_dim,
        rho_scale: bw.rho_scale,
        neighbors: p.neighbors,
        reduction: None,
        residual: residuals.iter().copied().fold(0.0, f64::max),
        diagnostics,
    }
}

/// Project `points` when the model (or the fit) uses a PCA reduction.
fn reduce<'a>(
    points: &'a Points,
    r: &Option<(Pca, usize)>,
) -> Result<std::borrow::Cow<'a, Points>> {
    Ok(match r {
        Some((pca, c)) => std::borrow::Cow::Owned(pca.project(points, *c)?),
        None => std::borrow::Cow::Borrowed(points),
    })
}

/// Fit a diffusion map (see the module notes) on all points, or on a seeded random subset of
/// `p.max_fit_points` landmarks when there are more.
///
/// Errors: bad parameters; fewer than `components + 2` points; a bandwidth that cannot be found;
/// the eigensolver failing to converge.
pub fn fit(points: &Points, p: &Checked<DiffusionParams>) -> Result<DiffusionModel> {
    fit_observed(points, p, &mut |_| {})
}

/// [`fit`], calling `on_phase(name)` as each phase ends (`landmarks`, `pca`, then for a sparse
/// kernel `knn`, `bandwidth`, `kernel graph`, `normalisation`, `eigensolver`, `assemble`; for
/// the dense kernel one `dense fit`), so a caller can time the phases with its own clocks.
pub fn fit_observed(
    points: &Points,
    p: &Checked<DiffusionParams>,
    on_phase: &mut dyn FnMut(&'static str),
) -> Result<DiffusionModel> {
    let c = p.components;
    if points.n < c + 2 || points.dim == 0 {
        return Err(Error::Analysis(format!(
            "diffusion map with {c} components needs at least {} points with at least one \
             coordinate, got {} points in {} dimensions",
            c + 2,
            points.n,
            points.dim
        )));
    }
    let landmark_index: Vec<usize> = if points.n > p.max_fit_points {
        let mut rng = ChaCha8Rng::seed_from_u64(p.seed);
        let mut idx = sample(&mut rng, points.n, p.max_fit_points).into_vec();
        idx.sort_unstable();
        idx
    } else {
        (0..points.n).collect()
    };
    let raw = if landmark_index.len() == points.n {
        std::borrow::Cow::Borrowed(points)
    } else {
        std::borrow::Cow::Owned(points.select(&landmark_index))
    };
    on_phase("landmarks");
    let reduction = if p.neighbors > 0 && p.pca_max_dim > 0 && raw.dim > p.pca_max_dim {
        let pca = Pca::fit(&raw)?;
        let keep = pca.components_for(p.pca_variance).min(p.pca_max_dim);
        Some((pca, keep))
    } else {
        None
    };
    let lm = reduce(&raw, &reduction)?.into_owned();
    drop(raw);
    on_phase("pca");
    let mut model = if p.neighbors == 0 {
        fit_dense(lm, p)?
    } else {
        fit_sparse(lm, p, on_phase)?
    };
    on_phase(if p.neighbors == 0 {
        "dense fit"
    } else {
        "assemble"
    });
    model.landmark_index = landmark_index;
    model.reduction = reduction;
    Ok(model)
}

/// Sparse-kernel fit on the (already reduced) fit points.
fn fit_sparse(
    lm: Points,
    p: &DiffusionParams,
    on_phase: &mut dyn FnMut(&'static str),
) -> Result<DiffusionModel> {
    let c = p.components;
    let m = lm.n;
    let kq = (p.neighbors + 1).min(m);
    let nb = knn(&lm, &lm, kq)?;
    // The PCA's and the neighbour search's matrix products may leave wide-vector state behind
    // on any thread; the kernel phases below call `exp` on every thread.
    crate::cpu::clear_upper_state_everywhere();
    on_phase("knn");
    let bw = choose_bandwidth(&nb, p)?;
    on_phase("bandwidth");
    let mut s = kernel_graph(&nb, &|a, b| bw.scale(a, b));
    // Kernel weight of each row's farthest kept neighbour, median over rows.
    let mut last: Vec<f64> = (0..m)
        .map(|i| {
            let (j, d2) = (nb.index_of(i)[kq - 1], nb.dist2_of(i)[kq - 1]);
            (-d2 / bw.scale(i, j)).exp()
        })
        .collect();
    last.sort_by(f64::total_cmp);
    let truncation = last.get(m / 2).copied();
    drop(nb);
    let comps = Components::from_edges(
        m,
        (0..m).flat_map(|i| {
            let s = &s;
            (s.ptr[i]..s.ptr[i + 1])
                .filter(move |&e| s.col[e] > i && s.val[e] > MIN_WEIGHT)
                .map(move |e| (i, s.col[e]))
        }),
    );
    on_phase("kernel graph");
    let (q, d, cmin) = normalise_scaled(&mut s, bw.kernel_alpha, &bw.rho, bw.kernel_dim);
    let w: Vec<f64> = (0..m)
        .map(|i| d[i] * bw.rho.get(i).map_or(1.0, |r| r * r))
        .collect();
    on_phase("normalisation");
    let eig = if comps.count() == 1 {
        top_eigen_sparse(&s, c + 1, p.seed)?
    } else {
        let (vals, vecs) = join_components(&comps, &w, c + 1, |idx, nev| {
            let e = top_eigen_sparse(&submatrix(&s, idx), nev, p.seed)?;
            Ok((e.values, e.vectors))
        })?;
        finish(&s, vals, vecs, Solver::Components)?
    };
    drop(s);
    on_phase("eigensolver");
    let mut model = assemble(
        lm,
        p,
        bw,
        q,
        &w,
        cmin,
        &eig.values,
        &eig.vectors,
        eig.residuals,
        &comps,
        truncation,
    );
    if eig.solver == Solver::Chebyshev {
        model.diagnostics.chebyshev_work = Some(eig.chebyshev_work);
    }
    Ok(model)
}

/// Dense-kernel fit on the fit points (m ≤ 5000): every pair enters the kernel; ρ and ε are
/// chosen on the graph of the [`DENSE_GRAPH_NEIGHBORS`] nearest neighbours (or
/// `bandwidth_neighbors`, when larger).
fn fit_dense(lm: Points, p: &DiffusionParams) -> Result<DiffusionModel> {
    let c = p.components;
    let m = lm.n;
    if m > MAX_FIT_POINTS {
        return Err(Error::param(
            "neighbors",
            format!(
                "0 (dense kernel) fits at most {MAX_FIT_POINTS} points, this fit set has {m}: \
                 use a sparse kernel (neighbors ≥ 2) or landmarks (max_fit_points ≤ \
                 {MAX_FIT_POINTS})"
            ),
        ));
    }
    let kq = (DENSE_GRAPH_NEIGHBORS.max(p.bandwidth_neighbors) + 1).min(m);
    let nb = knn(&lm, &lm, kq)?;
    let bw = choose_bandwidth(&nb, p)?;
    drop(nb);
    let mut k = vec![0.0; m * m];
    k.par_chunks_mut(m).enumerate().for_each(|(i, row)| {
        let xi = lm.row(i);
        for (j, v) in row.iter_mut().enumerate() {
            *v = (-Points::dist2(xi, lm.row(j)) / bw.scale(i, j)).exp();
        }
    });
    let comps = Components::from_edges(
        m,
        (0..m).flat_map(|i| {
            let k = &k;
            (i + 1..m)
                .filter(move |&j| k[i * m + j] > MIN_WEIGHT)
                .map(move |j| (i, j))
        }),
    );
    let mut q: Vec<f64> = k.par_chunks(m).map(|r| r.iter().sum()).collect();
    if !bw.rho.is_empty() {
        q.iter_mut()
            .zip(&bw.rho)
            .for_each(|(v, r)| *v /= r.powf(bw.kernel_dim));
    }
    let qa: Vec<f64> = q.iter().map(|&v| v.powf(bw.kernel_alpha)).collect();
    k.par_chunks_mut(m).enumerate().for_each(|(i, row)| {
        for (j, v) in row.iter_mut().enumerate() {
            *v /= qa[i] * qa[j];
        }
    });
    let d: Vec<f64> = k.par_chunks(m).map(|r| r.iter().sum()).collect();
    let r2: Vec<f64> = (0..m)
        .map(|i| bw.rho.get(i).map_or(1.0, |r| r * r))
        .collect();
    let cmin = r2.iter().copied().fold(f64::INFINITY, f64::min);
    let w: Vec<f64> = d.iter().zip(&r2).map(|(a, b)| a * b).collect();
    let sw: Vec<f64> = w.iter().map(|v| v.sqrt()).collect();
    let a = Mat::<f64>::from_fn(m, m, |i, j| {
        let v = cmin * k[i * m + j] / (sw[i] * sw[j]);
        if i == j {
            v + 1.0 - cmin / r2[i]
        } else {
            v
        }
    });
    drop(k);
    let (vals, u) = if comps.count() == 1 {
        top_eigen(&a, c + 1, p.seed)?
    } else {
        join_components(&comps, &w, c + 1, |idx, nev| {
            let sub = Mat::<f64>::from_fn(idx.len(), idx.len(), |r, s| a[(idx[r], idx[s])]);
            if idx.len() <= nev + 1 {
                dense_top_eigen(&sub, nev)
            } else {
                top_eigen(&sub, nev, p.seed)
            }
        })?
    };
    let residuals: Vec<f64> = (0..vals.len())
        .map(|l| {
            let col = u.col(l);
            let av = &a * col;
            (0..m)
                .map(|i| (av[i] - vals[l] * col[i]).powi(2))
                .sum::<f64>()
                .sqrt()
        })
        .collect();
    drop(a);
    Ok(assemble(
        lm, p, bw, q, &w, cmin, &vals, &u, residuals, &comps, None,
    ))
}

/// The `nev` largest eigenpairs of the symmetric positive semi-definite `s`, eigenvalues in
/// non-increasing order, eigenvectors as columns. Thick-restart Lanczos
/// (`faer::matrix_free::eigen::partial_self_adjoint_eigen`, started from a seeded random
/// vector); when the matrix is small or not every pair converges, a dense symmetric
/// eigendecomposition instead.
fn top_eigen(s: &Mat<f64>, nev: usize, seed: u64) -> Result<(Vec<f64>, Mat<f64>)> {
    let m = s.nrows();
    // Dense decomposition is fast and certain for small fits (under a second at m = 2000 in a
    // release build); above that, Lanczos with a bounded number of restarts, falling back to dense
    // when it does not converge (the top of a diffusion spectrum can be tightly clustered).
    if m > 2000 {
        // Sequential, so the result does not depend on the thread count.
        let par = faer::Par::Seq;
        let params = PartialEigenParams {
            max_restarts: 200,
            ..PartialEigenParams::default()
        };
        let mut mem = MemBuffer::new(partial_self_adjoint_eigen_scratch(s, nev, par, params));
        let mut rng = ChaCha8Rng::seed_from_u64(seed ^ 0x5eed_1a2c);
        let v0 = Col::<f64>::from_fn(m, |_| rng.gen::<f64>() - 0.5);
        let mut vecs = Mat::<f64>::zeros(m, nev);
        let mut vals = vec![0.0; nev];
        let info = partial_self_adjoint_eigen(
            vecs.as_mut(),
            &mut vals,
            s,
            v0.as_ref(),
            1e-11,
            par,
            MemStack::new(&mut mem),
            params,
        );
        crate::cpu::clear_upper_state_here();
        if info.n_converged_eigen >= nev && vals.iter().all(|v| v.is_finite()) {
            let mut order: Vec<usize> = (0..nev).collect();
            order.sort_by(|&a, &b| vals[b].total_cmp(&vals[a]).then(a.cmp(&b)));
            let sorted = order.iter().map(|&i| vals[i]).collect();
            let u = Mat::<f64>::from_fn(m, nev, |i, j| vecs[(i, order[j])]);
            return Ok((sorted, u));
        }
    }
    dense_top_eigen(s, nev)
}

/// The `nev` largest eigenpairs by a dense symmetric eigendecomposition (non-increasing order).
fn dense_top_eigen(s: &Mat<f64>, nev: usize) -> Result<(Vec<f64>, Mat<f64>)> {
    super::sparse::top_dense_seq(s, nev)
}

impl DiffusionModel {
    /// Number of diffusion coordinates.
    pub fn components(&self) -> usize {
        self.eigenvalues.len()
    }

    /// Input dimension the model accepts (before any PCA reduction).
    pub fn input_dim(&self) -> usize {
        match &self.reduction {
            Some((pca, _)) => pca.dim,
            None => self.landmarks.dim,
        }
    }

    /// Nyström extension of new points: row-major `new.n × components` coordinates ψ_l(x)·λ_l^t
    /// with ψ_l(x) = λ_l⁻¹ Σ_j p(x,x_j) ψ_l(x_j), p(x,·) ∝ k(x,x_j)/(q(x)^α q_j^α) normalised
    /// to sum 1 (q(x)^α cancels in the normalisation). The sum runs over the k + 1 nearest
    /// landmarks (sparse model) or all of them (dense model). Kernel weights are computed
    /// relative to the nearest landmark, so a point far from all landmarks takes the
    /// (λ-scaled) values of its nearest ones instead of underflowing. A component with
    /// λ_l ≤ 0 gets 0.
    ///
    /// Errors: `new` has a different dimension from the model's input.
    pub fn extend(&self, new: &Points) -> Result<Vec<f64>> {
        if new.dim != self.input_dim() {
            return Err(Error::Analysis(format!(
                "Nyström extension: new points have {} coordinates, the model was fitted on {}",
                new.dim,
                self.input_dim()
            )));
        }
        let new = reduce(new, &self.reduction)?;
        let c = self.components();
        let m = self.landmarks.n;
        let qa: Vec<f64> = self.q.iter().map(|&v| v.powf(self.kernel_alpha)).collect();
        // Generator eigenvalues ν_l = (λ_l − 1)/median(ρ²) and the coordinate factors λ_l^t.
        let nu: Vec<f64> = self
            .eigenvalues
            .iter()
            .map(|&l| (l - 1.0) / self.rho_scale)
            .collect();
        let pw: Vec<f64> = self.eigenvalues.iter().map(|&l| power(l, self.t)).collect();
        let rho_min = self.rho.iter().copied().fold(f64::INFINITY, f64::min);
        let rho0_min = self.rho0.iter().copied().fold(f64::INFINITY, f64::min);
        let mut out = vec![0.0; new.n * c];
        if new.n == 0 {
            return Ok(out);
        }
        // Neighbour lists: the k + 1 nearest landmarks (sparse) or every landmark (dense).
        let nb = if self.neighbors > 0 {
            Some(knn(&self.landmarks, &new, (self.neighbors + 1).min(m))?)
        } else {
            None
        };
        out.par_chunks_mut(c.max(1)).enumerate().for_each_init(
            || (Vec::new(), Vec::new(), Vec::new()),
            |(w, idx, buf), (r, orow)| {
                w.clear();
                idx.clear();
                match &nb {
                    Some(nb) => {
                        w.extend_from_slice(nb.dist2_of(r));
                        idx.extend_from_slice(nb.index_of(r));
                    }
                    None => {
                        let x = new.row(r);
                        w.extend((0..m).map(|j| Points::dist2(x, self.landmarks.row(j))));
                        idx.extend(0..m);
                    }
                }
                // ρ_x from the same distances (x itself, if a landmark, is not a neighbour).
                let rho_x = if self.rho_rank > 0 {
                    buf.clear();
                    buf.extend_from_slice(w);
                    let top = (self.rho_rank + 1).min(buf.len());
                    if top < buf.len() {
                        buf.select_nth_unstable_by(top, f64::total_cmp);
                    }
                    buf.truncate(top);
                    buf.sort_by(f64::total_cmp);
                    let r0 = rms_skip_self(buf, self.rho_rank).max(rho0_min);
                    // q0 over the graph_k + 1 nearest landmarks, then ρ = q0^(−1/d0).
                    let kk = (self.graph_k + 1).min(w.len());
                    let q0: f64 = if nb.is_some() {
                        w.iter()
                            .zip(idx.iter())
                            .take(kk)
                            .map(|(&v, &j)| (-v / (self.eps0 * r0 * self.rho0[j])).exp())
                            .sum()
                    } else {
                        let mut near: Vec<(f64, usize)> =
                            w.iter().copied().zip(idx.iter().copied()).collect();
                        if kk < near.len() {
                            near.select_nth_unstable_by(kk, |a, b| a.0.total_cmp(&b.0));
                        }
                        near[..kk]
                            .iter()
                            .map(|&(v, j)| (-v / (self.eps0 * r0 * self.rho0[j])).exp())
                            .sum()
                    };
                    let rx = (q0 / r0.powf(self.dim0))
                        .powf(-1.0 / self.dim0)
                        .max(rho_min);
                    for (wj, &j) in w.iter_mut().zip(idx.iter()) {
                        *wj /= self.epsilon * rx * self.rho[j];
                    }
                    rx
                } else {
                    for wj in w.iter_mut() {
                        *wj /= self.epsilon;
                    }
                    1.0
                };
                // Scaled squared distances; the kernel below is exp(−(this − min)).
                let dmin = w.iter().copied().fold(f64::INFINITY, f64::min);
                let mut total = 0.0;
                for (wj, &j) in w.iter_mut().zip(idx.iter()) {
                    *wj = (-(*wj - dmin)).exp() / qa[j];
                    total += *wj;
                }
                orow.iter_mut().for_each(|v| *v = 0.0);
                for (&wj, &j) in w.iter().zip(idx.iter()) {
                    let pj = wj / total;
                    let prow = &self.psi[j * c..(j + 1) * c];
                    for (o, &ps) in orow.iter_mut().zip(prow) {
                        *o += pj * ps;
                    }
                }
                // P ψ = (1 + ρ_x² ν) ψ at x, then the coordinate factor λ^t.
                for ((o, &n), &f) in orow.iter_mut().zip(&nu).zip(&pw) {
                    let den = 1.0 + rho_x * rho_x * n;
                    *o = if den > 0.0 { *o / den * f } else { 0.0 };
                }
            },
        );
        Ok(out)
    }

    /// Row-major `m × components` coordinates ψ_l·λ_l^t of the fit (landmark) points.
    pub fn coords_of_fit(&self) -> Vec<f64> {
        let c = self.components();
        let pw: Vec<f64> = self.eigenvalues.iter().map(|&l| power(l, self.t)).collect();
        self.psi
            .chunks_exact(c.max(1))
            .flat_map(|row| row.iter().zip(&pw).map(|(a, b)| a * b))
            .collect()
    }

    /// The embedding of the fit (landmark) points, in landmark order (no PCA baseline).
    pub fn embedding_of_fit(&self) -> Embedding {
        Embedding {
            n: self.landmarks.n,
            components: self.components(),
            coords: self.coords_of_fit(),
            eigenvalues: self.eigenvalues.clone(),
            epsilon: self.epsilon,
            alpha: self.alpha,
            t: self.t,
            neighbors: self.neighbors,
            fit_points: self.landmarks.n,
            residual: self.residual,
            diagnostics: self.diagnostics.clone(),
            ..Embedding::default()
        }
    }
}

/// Diffusion map of every input row: fitted directly when `points.n ≤ max_fit_points`,
/// otherwise fitted on seeded random landmarks with all other rows placed by Nyström
/// extension (landmark mode; with `landmark_check > 0` the approximation error is measured, see
/// [`landmark_error`]). Row i of the result belongs to row i of `points`. The result also holds
/// the PCA baseline (scores on the first `components` principal axes and their variance
/// shares) and the fitted model.
pub fn diffusion_map(points: &Points, p: &Checked<DiffusionParams>) -> Result<Embedding> {
    diffusion_map_observed(points, p, &mut |_| {})
}

/// [`diffusion_map`], calling `on_phase(name)` as each phase ends (those of [`fit_observed`],
/// then `nystrom`, `landmark check` and `pca baseline`).
pub fn diffusion_map_observed(
    points: &Points,
    p: &Checked<DiffusionParams>,
    on_phase: &mut dyn FnMut(&'static str),
) -> Result<Embedding> {
    let model = fit_observed(points, p, on_phase)?;
    let mut emb = model.embedding_of_fit();
    if model.landmarks.n != points.n {
        let c = model.components();
        let mut is_landmark = vec![false; points.n];
        for &i in &model.landmark_index {
            is_landmark[i] = true;
        }
        let others: Vec<usize> = (0..points.n).filter(|&i| !is_landmark[i]).collect();
        let ext = model.extend(&points.select(&others))?;
        let mut coords = vec![0.0; points.n * c];
        for (r, &i) in model.landmark_index.iter().enumerate() {
            coords[i * c..(i + 1) * c].copy_from_slice(&emb.coords[r * c..(r + 1) * c]);
        }
        for (r, &i) in others.iter().enumerate() {
            coords[i * c..(i + 1) * c].copy_from_slice(&ext[r * c..(r + 1) * c]);
        }
        emb.n = points.n;
        emb.coords = coords;
        on_phase("nystrom");
        if p.landmark_check > 0 {
            emb.landmark_error = Some(landmark_error(points, &model, p)?);
            on_phase("landmark check");
        }
    }
    let (pca_coords, pca_components, pca_explained) = pca_baseline(points, p.components)?;
    on_phase("pca baseline");
    emb.pca_coords = pca_coords;
    emb.pca_components = pca_components;
    emb.pca_explained = pca_explained;
    emb.model = Some(Box::new(model));
    Ok(emb)
}

/// PCA baseline: row-major scores on the first min(c, dim) axes and their variance shares.
pub fn pca_baseline(points: &Points, c: usize) -> Result<(Vec<f64>, usize, Vec<f64>)> {
    let pca = Pca::fit(points)?;
    let c = c.min(points.dim);
    let scores = pca.project(points, c)?;
    let mut share = pca.explained_ratio();
    share.truncate(c);
    Ok((scores.data, c, share))
}

/// Landmark-mode approximation error on a held-out sample (Nyström against a direct fit).
///
/// `p.landmark_check` seeded non-landmark points H are drawn; the map is fitted again on
/// landmarks ∪ H (same parameters) and H's coordinates from that fit are compared with their
/// Nyström extension from `model`. Because eigenvectors are defined only up to sign and, for
/// (nearly) equal eigenvalues, rotation, the extension is first mapped by the least-squares
/// linear map that takes the model's landmark coordinates onto the refit's landmark coordinates.
/// Returned: RMS of the difference over H divided by the RMS of H's refit coordinates
/// (relative error, 0 = identical).
///
/// Errors: the model has no landmarks outside the input, or the refit fails.
pub fn landmark_error(
    points: &Points,
    model: &DiffusionModel,
    p: &Checked<DiffusionParams>,
) -> Result<f64> {
    let mut is_landmark = vec![false; points.n];
    for &i in &model.landmark_index {
        if let Some(v) = is_landmark.get_mut(i) {
            *v = true;
        }
    }
    let others: Vec<usize> = (0..points.n).filter(|&i| !is_landmark[i]).collect();
    if others.is_empty() || model.landmark_index.is_empty() {
        return Err(Error::Analysis(
            "landmark error: no held-out points outside the landmarks".to_string(),
        ));
    }
    let h = p.landmark_check.min(others.len());
    let mut rng = ChaCha8Rng::seed_from_u64(p.seed ^ 0x0ab5_e7ed);
    let mut pick: Vec<usize> = sample(&mut rng, others.len(), h)
        .into_iter()
        .map(|i| others[i])
        .collect();
    pick.sort_unstable();
    let held = points.select(&pick);
    let ext = model.extend(&held)?;
    let mut all = model.landmark_index.clone();
    all.extend_from_slice(&pick);
    // A new block (the refit's landmark count), so checked here.
    let q = Checked::new(DiffusionParams {
        max_fit_points: all.len().max(p.components + 2),
        landmark_check: 0,
        ..(**p).clone()
    })?;
    let refit = fit(&points.select(&all), &q)?;
    let c = model.components();
    let m = model.landmark_index.len();
    let own = model.coords_of_fit();
    let re = refit.coords_of_fit();
    Ok(aligned_relative_error(
        &own,
        &re[..m * c],
        &ext,
        &re[m * c..],
        c,
    ))
}

/// Relative error after linear alignment: fit the `c × c` least-squares map B ≈ A·M on the
/// training rows (`a_train`, `b_train`, row-major with `c` columns), apply it to `a_test`, and
/// return RMS(a_test·M − b_test) / RMS(b_test). Used to compare two embeddings whose
/// eigenvectors may differ by sign or by a rotation within (nearly) repeated eigenvalues.
pub fn aligned_relative_error(
    a_train: &[f64],
    b_train: &[f64],
    a_test: &[f64],
    b_test: &[f64],
    c: usize,
) -> f64 {
    let rows = a_train.len() / c.max(1);
    let a = Mat::<f64>::from_fn(rows, c, |i, j| a_train[i * c + j]);
    let b = Mat::<f64>::from_fn(rows, c, |i, j| b_train[i * c + j]);
    // Normal equations (AᵀA) M = AᵀB, solved by a symmetric eigendecomposition-free LLT with a
    // tiny ridge for safety.
    let mut ata = a.transpose() * &a;
    for j in 0..c {
        ata[(j, j)] += 1e-14 * (1.0 + ata[(j, j)]);
    }
    let atb = a.transpose() * &b;
    let map = match ata.llt(Side::Lower) {
        Ok(l) => l.solve(&atb),
        Err(_) => return f64::NAN,
    };
    let t_rows = a_test.len() / c.max(1);
    let (mut num, mut den) = (0.0, 0.0);
    for i in 0..t_rows {
        for s in 0..c {
            let z: f64 = (0..c).map(|r| a_test[i * c + r] * map[(r, s)]).sum();
            let y = b_test[i * c + s];
            num += (z - y) * (z - y);
            den += y * y;
        }
    }
    (num / den.max(f64::MIN_POSITIVE)).sqrt()
}

/// Principal angles (radians, ascending) between the column spans of two row-major matrices
/// `a` (`n × ca`) and `b` (`n × cb`) (Björck & Golub 1973): the arc-cosines of the singular
/// values of Q_aᵀ Q_b, with Q_a, Q_b orthonormal bases from thin QR factorisations. With
/// `center`, each column's mean is removed first (the angles are then the arc-cosines of the
/// canonical correlations).
pub fn principal_angles(
    a: &[f64],
    b: &[f64],
    n: usize,
    ca: usize,
    cb: usize,
    center: bool,
) -> Result<Vec<f64>> {
    if a.len() != n * ca || b.len() != n * cb || n < ca.max(cb) {
        return Err(Error::Analysis(format!(
            "principal angles: shapes {} and {} do not match {n} x {ca} and {n} x {cb}",
            a.len(),
            b.len()
        )));
    }
    let basis = |m: &[f64], c: usize| {
        let mut x = Mat::<f64>::from_fn(n, c, |i, j| m[i * c + j]);
        if center {
            for j in 0..c {
                let mean: f64 = (0..n).map(|i| x[(i, j)]).sum::<f64>() / n as f64;
                for i in 0..n {
                    x[(i, j)] -= mean;
                }
            }
        }
        x.qr().compute_thin_Q()
    };
    let (qa, qb) = (basis(a, ca), basis(b, cb));
    let m = qa.transpose() * &qb;
    let sv = m
        .singular_values()
        .map_err(|e| Error::Analysis(format!("principal angles: SVD failed: {e:?}")))?;
    let mut ang: Vec<f64> = sv.iter().map(|s| s.clamp(-1.0, 1.0).acos()).collect();
    ang.sort_by(f64::total_cmp);
    Ok(ang)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    /// `n` seeded uniform angles and the points (cos θ, sin θ) on the unit circle.
    fn circle(n: usize, seed: u64) -> (Vec<f64>, Points) {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let th: Vec<f64> = (0..n).map(|_| rng.gen::<f64>() * 2.0 * PI).collect();
        let data = th.iter().flat_map(|t| [t.cos(), t.sin()]).collect();
        (th, Points::new(n, 2, data).unwrap())
    }

    /// Swiss roll: angle θ = 1.5π(1 + 2u), height h ∈ [0, 21]; (θ cos θ, h, θ sin θ).
    fn swiss_roll(n: usize, seed: u64) -> (Vec<f64>, Points) {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let mut th = Vec::with_capacity(n);
        let mut data = Vec::with_capacity(3 * n);
        for _ in 0..n {
            let t = 1.5 * PI * (1.0 + 2.0 * rng.gen::<f64>());
            let h = 21.0 * rng.gen::<f64>();
            th.push(t);
            data.extend_from_slice(&[t * t.cos(), h, t * t.sin()]);
        }
        (th, Points::new(n, 3, data).unwrap())
    }

    /// Column `j` of a row-major matrix with `c` columns.
    fn col(m: &[f64], c: usize, j: usize) -> Vec<f64> {
        m.chunks_exact(c).map(|r| r[j]).collect()
    }

    /// Solve the 3×3 normal equations of y ≈ b0 + b1 a + b2 b; return R².
    fn r2(y: &[f64], a: &[f64], b: &[f64]) -> f64 {
        let n = y.len() as f64;
        let mean = |v: &[f64]| v.iter().sum::<f64>() / n;
        let (my, ma, mb) = (mean(y), mean(a), mean(b));
        let (mut saa, mut sab, mut sbb, mut say, mut sby, mut syy) = (0.0, 0.0, 0.0, 0.0, 0.0, 0.0);
        for i in 0..y.len() {
            let (da, db, dy) = (a[i] - ma, b[i] - mb, y[i] - my);
            saa += da * da;
            sab += da * db;
            sbb += db * db;
            say += da * dy;
            sby += db * dy;
            syy += dy * dy;
        }
        let det = saa * sbb - sab * sab;
        let b1 = (say * sbb - sby * sab) / det;
        let b2 = (sby * saa - say * sab) / det;
        (b1 * say + b2 * sby) / syy
    }

    fn ranks(v: &[f64]) -> Vec<f64> {
        let mut idx: Vec<usize> = (0..v.len()).collect();
        idx.sort_by(|&a, &b| v[a].total_cmp(&v[b]));
        let mut r = vec![0.0; v.len()];
        for (k, &i) in idx.iter().enumerate() {
            r[i] = k as f64;
        }
        r
    }

    fn spearman(a: &[f64], b: &[f64]) -> f64 {
        let (ra, rb) = (ranks(a), ranks(b));
        let n = a.len() as f64;
        let m = (n - 1.0) / 2.0;
        let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
        for i in 0..a.len() {
            sab += (ra[i] - m) * (rb[i] - m);
            saa += (ra[i] - m) * (ra[i] - m);
            sbb += (rb[i] - m) * (rb[i] - m);
        }
        sab / (saa * sbb).sqrt()
    }

    fn params(eps: f64, components: usize) -> DiffusionParams {
        DiffusionParams {
            components,
            alpha: 1.0,
            t: 1.0,
            bandwidth: Bandwidth::Fixed(eps),
            max_fit_points: 3000,
            seed: 7,
            neighbors: 0,
            ..DiffusionParams::default()
        }
    }

    #[test]
    fn circle_eigenvalues_and_coordinates() {
        let (th, pts) = circle(1500, 11);
        let cos: Vec<f64> = th.iter().map(|t| t.cos()).collect();
        let sin: Vec<f64> = th.iter().map(|t| t.sin()).collect();
        // Source: docs/references.md §5 [C]: on the uniform unit circle λ_k = I_k(2/ε)/I_0(2/ε),
        // each k ≥ 1 twice (cos kθ, sin kθ). ε = 0.1: 0.97467051, 0.90253295.
        // Tolerance: §5 gives ±0.003 for N = 2000 random points; the sampling error scales like
        // N^{-1/2}, so ±0.003·√(2000/1500) ≈ ±0.0035 for N = 1500; we allow ±0.005.
        let emb = diffusion_map(&pts, &crate::params::ck(params(0.1, 4))).unwrap();
        eprintln!("circle eps 0.1 eigenvalues {:?}", emb.eigenvalues);
        let want = [0.97467051, 0.97467051, 0.90253295, 0.90253295];
        for (got, w) in emb.eigenvalues.iter().zip(want) {
            assert!((got - w).abs() < 0.005, "{:?}", emb.eigenvalues);
        }
        // Source: Coifman & Lafon (2006): the first eigenfunctions of the circle are cos θ,
        // sin θ, so (ψ1, ψ2) spans them up to a rotation. R² of a linear fit > 0.98 (exact
        // eigenfunctions give 1; sampling noise takes off well under 1 %).
        let (p1, p2) = (col(&emb.coords, 4, 0), col(&emb.coords, 4, 1));
        let (rc, rs) = (r2(&cos, &p1, &p2), r2(&sin, &p1, &p2));
        eprintln!("circle R2 cos {rc} sin {rs}");
        assert!(rc > 0.98 && rs > 0.98);

        // Source: docs/references.md §5 [C]: ε = 1: λ = 0.69777466 (twice), 0.30222534 (twice).
        let emb = diffusion_map(&pts, &crate::params::ck(params(1.0, 4))).unwrap();
        eprintln!("circle eps 1 eigenvalues {:?}", emb.eigenvalues);
        // With this wide kernel the random angles split each degenerate pair at first order
        // by about λ·|ĉ₂|, ĉ₂ the empirical second Fourier coefficient of the angles
        // (SD ≈ 1/√(2N) = 0.018), while the pair's mean moves only at second order. So: each
        // pair mean within ±0.005, each member within ±0.03.
        let e = &emb.eigenvalues;
        for (pair, w) in [(0, 0.69777466), (2, 0.30222534)] {
            assert!(((e[pair] + e[pair + 1]) / 2.0 - w).abs() < 0.005, "{e:?}");
            assert!(
                (e[pair] - w).abs() < 0.03 && (e[pair + 1] - w).abs() < 0.03,
                "{e:?}"
            );
        }
    }

    #[test]
    fn swiss_roll_first_coordinate_follows_the_roll() {
        let (th, pts) = swiss_roll(1500, 5);
        let emb = diffusion_map(&pts, &crate::params::ck(params(SWISS_EPS, 2))).unwrap();
        let rho = spearman(&col(&emb.coords, 2, 0), &th);
        eprintln!(
            "swiss roll eigenvalues {:?} spearman {rho}",
            emb.eigenvalues
        );
        // Source: Coifman & Lafon (2006); the Swiss roll is the common-practice benchmark: the
        // slowest diffusion mode runs along the roll, so ψ1 is monotone in the roll angle.
        assert!(rho.abs() > 0.95, "spearman {rho}");
    }

    /// ε for the Swiss roll of height 21 and angles 1.5π..4.5π: the gap between turns is 2π,
    /// so the kernel scale √ε must stay well below it; √6 ≈ 2.4 still links about ten
    /// neighbours at 1500 points over its ≈ 1850-unit² area.
    const SWISS_EPS: f64 = 6.0;

    #[test]
    fn nystrom_matches_full_fit() {
        let (_, pts) = circle(1500, 11);
        let full = diffusion_map(&pts, &crate::params::ck(params(0.1, 2))).unwrap();
        let fit_idx: Vec<usize> = (0..750).collect();
        let new_idx: Vec<usize> = (750..1500).collect();
        let model = fit(&pts.select(&fit_idx), &crate::params::ck(params(0.1, 2))).unwrap();
        // A landmark extended is its own fitted coordinate (P ψ = λ ψ on the fit set).
        let again = model.extend(&model.landmarks).unwrap();
        let own = model.coords_of_fit();
        assert!(again.iter().zip(&own).all(|(a, b)| (a - b).abs() < 1e-9));
        let ext = model.extend(&pts.select(&new_idx)).unwrap();
        // The circle's (ψ1, ψ2) pair is degenerate, so the two fits may differ by a rotation
        // within it, not only by sign: align with the least-squares 2×2 map fitted on the fit
        // half only, then compare on the extended half.
        let a: Vec<[f64; 2]> = own.chunks_exact(2).map(|r| [r[0], r[1]]).collect();
        let b: Vec<[f64; 2]> = full.coords[..1500]
            .chunks_exact(2)
            .map(|r| [r[0], r[1]])
            .collect();
        let (mut aa, mut ab) = ([[0.0; 2]; 2], [[0.0; 2]; 2]);
        for (x, y) in a.iter().zip(&b) {
            for r in 0..2 {
                for s in 0..2 {
                    aa[r][s] += x[r] * x[s];
                    ab[r][s] += x[r] * y[s];
                }
            }
        }
        let det = aa[0][0] * aa[1][1] - aa[0][1] * aa[1][0];
        let inv = [
            [aa[1][1] / det, -aa[0][1] / det],
            [-aa[1][0] / det, aa[0][0] / det],
        ];
        let mut map = [[0.0; 2]; 2];
        for r in 0..2 {
            for s in 0..2 {
                map[r][s] = inv[r][0] * ab[0][s] + inv[r][1] * ab[1][s];
            }
        }
        let mut worst = 0.0f64;
        for (s, (m0, m1)) in [(map[0][0], map[1][0]), (map[0][1], map[1][1])]
            .into_iter()
            .enumerate()
        {
            let fc = col(&full.coords, 2, s);
            let range = fc.iter().copied().fold(f64::MIN, f64::max)
                - fc.iter().copied().fold(f64::MAX, f64::min);
            for (r, &i) in new_idx.iter().enumerate() {
                let z = ext[2 * r] * m0 + ext[2 * r + 1] * m1;
                worst = worst.max((z - full.coords[2 * i + s]).abs() / range);
            }
        }
        eprintln!("nystrom worst relative error {worst}");
        // Source: issue criterion (2 % of the coordinate range); Coifman & Lafon (2006) Nyström.
        assert!(worst < 0.02, "worst {worst}");

        // Subset fit inside diffusion_map: every row gets coordinates that still follow θ.
        let (th, _) = circle(1500, 11);
        let mut p = params(0.1, 2);
        p.max_fit_points = 600;
        let emb = diffusion_map(&pts, &crate::params::ck(p.clone())).unwrap();
        assert_eq!(emb.n, 1500);
        let cos: Vec<f64> = th.iter().map(|t| t.cos()).collect();
        let rc = r2(&cos, &col(&emb.coords, 2, 0), &col(&emb.coords, 2, 1));
        assert!(rc > 0.98, "R2 {rc}");
    }

    #[test]
    fn lanczos_agrees_with_dense() {
        // Same top eigenpairs from both solver paths on a 400-point Gaussian kernel matrix.
        let (_, pts) = swiss_roll(400, 1);
        let s = Mat::<f64>::from_fn(400, 400, |i, j| {
            (-Points::dist2(pts.row(i), pts.row(j)) / 20.0).exp() / 400.0
        });
        let (a, ua) = top_eigen(&s, 6, 0).unwrap();
        let (b, ub) = dense_top_eigen(&s, 6).unwrap();
        for l in 0..6 {
            assert!((a[l] - b[l]).abs() < 1e-9, "{a:?} vs {b:?}");
            let dot: f64 = (0..400).map(|i| ua[(i, l)] * ub[(i, l)]).sum();
            assert!((dot.abs() - 1.0).abs() < 1e-6, "vector {l}: |dot| {dot}");
        }
    }

    #[test]
    fn deterministic_and_parameter_errors() {
        let (_, pts) = swiss_roll(700, 9);
        let p = DiffusionParams {
            components: 3,
            max_fit_points: 400,
            seed: 3,
            ..DiffusionParams::default()
        };
        let a = diffusion_map(&pts, &crate::params::ck(p.clone())).unwrap();
        let b = diffusion_map(&pts, &crate::params::ck(p.clone())).unwrap();
        assert_eq!(a, b);
        assert!(a.epsilon > 0.0 && a.eigenvalues.windows(2).all(|w| w[0] >= w[1]));
        for bad in [
            DiffusionParams {
                components: 0,
                ..p.clone()
            },
            DiffusionParams {
                alpha: 1.5,
                ..p.clone()
            },
            DiffusionParams {
                t: f64::NAN,
                ..p.clone()
            },
            DiffusionParams {
                bandwidth: Bandwidth::Fixed(0.0),
                ..p.clone()
            },
            DiffusionParams {
                max_fit_points: 20_000_000,
                ..p.clone()
            },
            DiffusionParams {
                neighbors: 0,
                bandwidth_neighbors: 2000,
                ..p.clone()
            },
            DiffusionParams {
                neighbors: 1,
                ..p.clone()
            },
            DiffusionParams {
                bandwidth_neighbors: 40,
                ..p.clone()
            },
            DiffusionParams {
                pca_variance: 0.0,
                ..p.clone()
            },
            DiffusionParams {
                max_fit_points: 4,
                ..p.clone()
            },
        ] {
            // Out of range: no checked form, so no fit.
            assert!(matches!(
                crate::params::Check::check(bad.clone()),
                Err(Error::Param { .. })
            ));
        }
        let few = Points::new(4, 3, vec![0.5; 12]).unwrap();
        assert!(matches!(
            diffusion_map(&few, &crate::params::ck(p.clone())),
            Err(Error::Analysis(_))
        ));
        let model = fit(&pts, &crate::params::ck(p.clone())).unwrap();
        let wrong = Points::new(1, 2, vec![0.0, 0.0]).unwrap();
        assert!(model.extend(&wrong).is_err());
    }

    #[test]
    fn local_scaling_keeps_an_outlier_connected() {
        // A circle of 400 points plus one outlier 0.6 from it. With a small global ε the outlier is a
        // component of its own, which shows as a second eigenvalue equal to 1 (a Markov chain's
        // eigenvalue 1 has the multiplicity of its connected components: common practice). With
        // the local scaling of Zelnik-Manor & Perona (2004) the graph stays connected.
        let (_, circ) = circle(400, 9);
        let mut data = circ.data.clone();
        data.extend_from_slice(&[1.6, 0.0]);
        let pts = Points::new(401, 2, data).unwrap();
        let global = diffusion_map(&pts, &crate::params::ck(params(0.01, 2))).unwrap();
        assert!(
            global.eigenvalues[0] > 1.0 - 1e-9,
            "{:?}",
            global.eigenvalues
        );
        let local = diffusion_map(
            &pts,
            &crate::params::ck(DiffusionParams {
                components: 2,
                ..DiffusionParams::default()
            }),
        )
        .unwrap();
        assert!(local.eigenvalues[0] < 1.0 - 1e-4, "{:?}", local.eigenvalues);
    }
}
