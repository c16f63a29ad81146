//! The scale-resolved dimension suite: five estimators, each with a curve of d against scale and
//! a bootstrap 95 % interval.
//!
//! In: [`Points`] and [`SuiteParams`]. Out: a [`DimensionSuite`].
//!
//! - `kmeans`: k-means quantization scaling on held-out points ([`kmeans_scaling`]); interval by
//!   resampling the held-out points (the same draw for every k, so the D(k) stay paired) and
//!   re-applying the plateau rule; the fitted centres are kept fixed.
//! - `twonn`: TwoNN (Facco et al. 2017) with the largest `twonn_discard` ratios left out; interval
//!   by resampling the per-point ratios μ. Its curve is the TwoNN estimate on nested halvings
//!   of the point set (N, N/2, N/4, … down to 50 points) at the scale of the mean
//!   second-neighbour distance (the scale analysis of Facco et al. 2017).
//! - `mle`: Levina & Bickel (2004) with the MacKay & Ghahramani (2005) correction, averaged over
//!   k = `mle_k1..=mle_k2`; interval by resampling points. Its curve: the corrected MLE at each
//!   k of `mle_curve_ks` against the mean distance to the k-th neighbour.
//! - `correlation`: Grassberger & Procaccia (1983) on `correlation_refs` reference points
//!   ([`correlation_counts`]); interval by resampling reference points.
//! - `local_pca`: Fukunaga & Olsen (1971): the number of local covariance eigenvalues above
//!   `local_pca_ratio` of the largest, in neighbourhoods of `local_pca_ks` neighbours around
//!   `local_pca_centres` centres, against the mean neighbourhood radius; the estimate is the
//!   median of the curve; interval by resampling centres.
//! - `kernel_sum`: the kernel-sum dimension curve d(ε) = 2 · d ln S / d ln ε of Berry, Giannakis
//!   & Harlim (2015) on the truncated `mle_k2`-neighbour graph of the subset
//!   ([`crate::embed::kernel_sum_dimension`]), drawn against the scale √ε; the estimate is twice
//!   the steepest slope. No interval, no correction, and not part of the consensus: the
//!   truncated sum saturates at N(k + 1), which bends the curve low before it is straight (a
//!   known low bias that grows with d), so it is shown for comparison on the shared axis.
//! - `pca_variance_share` (not run by default): the same neighbourhoods, counting components up
//!   to `local_pca_variance` of the variance (a cumulative-variance rule).
//!
//! Finite-sample correction ([`super::calibrate`], on by default): TwoNN, MLE, correlation and
//! local PCA are also run on seeded uniform cubes of known dimension with the same number of
//! points and the same settings, and each raw estimate (and interval) is mapped through that
//! reference curve (`corrected_d`, `corrected_ci95`; the raw values stay in `d`, `ci95`). The
//! [`Consensus`] combines the corrected estimates with the curves on one scale axis
//! ([`super::consensus`]). `pointwise` holds a local dimension per input point (Levina & Bickel
//! 2004 at `mle_k2` neighbours).
//!
//! The four neighbour-based estimators work on a seeded random subset of at most `max_points`
//! points (exact brute-force neighbours, O(m²·dim)); k-means has its own `max_points`. The
//! intervals are percentile intervals (Efron & Tibshirani 1993) over `bootstrap` resamples of
//! the units named above, conditional on the neighbour graph (resampling whole points would
//! create duplicate points at distance 0, which these estimators cannot use). The suite's
//! `noise_scale` is the k-means one. Every random step derives from `seed`.

use super::bootstrap::percentile_ci95;
use super::calibrate::{correct_estimates, Correction};
use super::consensus::{consensus, uniformity_guard, Consensus, ScaleCurve, Status};
use super::correlation::correlation_counts;
use super::local_pca::{local_pca_counts, PcaRule};
use super::local_spread::{cube_spread, log_iqr, pointwise};
use super::nn_estimators::{mle_inverse, twonn_fit};
use super::scaling::{curve_from_distortion, kmeans_scaling_errors};
use super::{KmeansScalingParams, ScalePoint, ScalingCurve};
use crate::error::{Error, Result};
use crate::neighbours::{knn_table, knn_table_rows};
use crate::params::Checked;
use crate::points::Points;
use rand::seq::SliceRandom;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use serde::{Deserialize, Serialize};

/// One estimator of the suite.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Method {
    /// k-means quantization scaling on held-out points.
    Kmeans,
    /// TwoNN (Facco et al. 2017).
    Twonn,
    /// Levina & Bickel (2004) MLE with the MacKay & Ghahramani correction.
    Mle,
    /// Correlation dimension (Grassberger & Procaccia 1983).
    Correlation,
    /// Local PCA, Fukunaga & Olsen (1971) eigenvalue-ratio rule.
    LocalPca,
    /// Local PCA counting components up to a share of the variance.
    PcaVarianceShare,
    /// Kernel-sum dimension curve (Berry, Giannakis & Harlim 2015).
    KernelSum,
}

impl Method {
    /// All methods, in report order.
    pub const ALL: [Method; 7] = [
        Method::Kmeans,
        Method::Twonn,
        Method::Mle,
        Method::Correlation,
        Method::LocalPca,
        Method::PcaVarianceShare,
        Method::KernelSum,
    ];

    /// The methods run by default.
    pub const DEFAULT: [Method; 6] = [
        Method::Kmeans,
        Method::Twonn,
        Method::Mle,
        Method::Correlation,
        Method::LocalPca,
        Method::KernelSum,
    ];

    /// Whether the finite-sample correction calibrates this estimator.
    pub fn calibrated(self) -> bool {
        matches!(
            self,
            Method::Twonn | Method::Mle | Method::Correlation | Method::LocalPca
        )
    }

    /// The method's name as used on the command line and as a JSON key.
    pub fn name(self) -> &'static str {
        match self {
            Method::Kmeans => "kmeans",
            Method::Twonn => "twonn",
            Method::Mle => "mle",
            Method::Correlation => "correlation",
            Method::LocalPca => "local_pca",
            Method::PcaVarianceShare => "pca_variance_share",
            Method::KernelSum => "kernel_sum",
        }
    }

    /// Parse a comma-separated list of names (duplicates removed, order kept).
    ///
    /// Errors: an unknown or empty name.
    pub fn parse_list(s: &str) -> Result<Vec<Method>> {
        let mut out = Vec::new();
        for part in s.split(',') {
            let part = part.trim();
            let m = Method::ALL
                .into_iter()
                .find(|m| m.name() == part)
                .ok_or_else(|| {
                    Error::param(
                        "method",
                        format!(
                            "`{part}` is not an estimator; available: kmeans, twonn, mle, \
                             correlation, local_pca, pca_variance_share, kernel_sum"
                        ),
                    )
                })?;
            if !out.contains(&m) {
                out.push(m);
            }
        }
        Ok(out)
    }
}

/// Parameters of [`dimension_suite`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SuiteParams {
    /// Estimators to run (default all but `pca_variance_share`).
    pub methods: Vec<Method>,
    /// Bootstrap resamples per estimate (default 30; 0 = no interval; at most 10 000).
    pub bootstrap: usize,
    /// Seed of the subsets and the resamples (default 0).
    pub seed: u64,
    /// Most points used by the neighbour-based estimators (default 5000; at least 20).
    pub max_points: usize,
    /// k-means quantization scaling.
    pub kmeans: KmeansScalingParams,
    /// Share of the largest TwoNN ratios discarded (default 0.1; 0 to 0.9).
    pub twonn_discard: f64,
    /// Smallest neighbour count of the MLE average (default 10; at least 2).
    pub mle_k1: usize,
    /// Largest neighbour count of the MLE average (default 20; at least `mle_k1`).
    pub mle_k2: usize,
    /// Neighbour counts of the MLE curve (default 5, 10, 20, 40, 80; each at least 2).
    pub mle_curve_ks: Vec<usize>,
    /// Reference points of the correlation sum (default 1000; at least 2).
    pub correlation_refs: usize,
    /// Radii of the correlation sum (default 10; 3 to 100).
    pub correlation_radii: usize,
    /// Centres of the local PCA (default 200; at least 1).
    pub local_pca_centres: usize,
    /// Neighbourhood sizes of the local PCA (default 10, 20, 40, 80, 160; each at least 2).
    pub local_pca_ks: Vec<usize>,
    /// Fukunaga–Olsen threshold: eigenvalues above this fraction of the largest count
    /// (default 0.1; 0 < ratio < 1).
    pub local_pca_ratio: f64,
    /// Explained-variance share of `pca_variance_share` (default 0.95; 0 < share ≤ 1).
    pub local_pca_variance: f64,
    /// Correct TwoNN, MLE, correlation and local PCA against uniform reference cubes (default
    /// true).
    pub calibrate: bool,
}

impl Default for SuiteParams {
    fn default() -> Self {
        SuiteParams {
            methods: Method::DEFAULT.to_vec(),
            bootstrap: 30,
            seed: 0,
            max_points: 5_000,
            kmeans: KmeansScalingParams::default(),
            twonn_discard: 0.1,
            mle_k1: 10,
            mle_k2: 20,
            mle_curve_ks: vec![5, 10, 20, 40, 80],
            correlation_refs: 1000,
            correlation_radii: 10,
            local_pca_centres: 200,
            local_pca_ks: vec![10, 20, 40, 80, 160],
            local_pca_ratio: 0.1,
            local_pca_variance: 0.95,
            calibrate: true,
        }
    }
}

impl SuiteParams {
    /// Validate every setting (see the field notes for the allowed ranges).
    pub fn check(&self) -> Result<&Self> {
        let bad = |name: &str, msg: String| Err(Error::param(name, msg));
        if self.methods.is_empty() {
            return bad("methods", "no estimator chosen; pick at least one".into());
        }
        if self.bootstrap > 10_000 {
            return bad(
                "bootstrap",
                format!("{} resamples; allowed 0 to 10000", self.bootstrap),
            );
        }
        if self.max_points < 20 {
            return bad(
                "max_points",
                format!("{} points; allowed at least 20", self.max_points),
            );
        }
        self.kmeans.check().map_err(|e| e.in_block("kmeans"))?;
        if !(self.twonn_discard.is_finite() && (0.0..=0.9).contains(&self.twonn_discard)) {
            return bad(
                "twonn_discard",
                format!("{}; allowed 0 to 0.9 of the ratios", self.twonn_discard),
            );
        }
        if self.mle_k1 < 2 || self.mle_k2 < self.mle_k1 || self.mle_k2 > 10_000 {
            return bad(
                "mle_k1",
                format!(
                    "k1 = {}, k2 = {} neighbours; need 2 ≤ k1 ≤ k2 ≤ 10000",
                    self.mle_k1, self.mle_k2
                ),
            );
        }
        if self
            .mle_curve_ks
            .iter()
            .any(|&k| !(2..=10_000).contains(&k))
        {
            return bad(
                "mle_curve_ks",
                format!("{:?} neighbours; each 2 to 10000", self.mle_curve_ks),
            );
        }
        if self.correlation_refs < 2 {
            return bad(
                "correlation_refs",
                format!("{} reference points; at least 2", self.correlation_refs),
            );
        }
        if !(3..=100).contains(&self.correlation_radii) {
            return bad(
                "correlation_radii",
                format!("{} radii; allowed 3 to 100", self.correlation_radii),
            );
        }
        if self.local_pca_centres == 0 {
            return bad("local_pca_centres", "0 centres; at least 1".into());
        }
        if self.local_pca_ks.is_empty()
            || self
                .local_pca_ks
                .iter()
                .any(|&k| !(2..=10_000).contains(&k))
        {
            return bad(
                "local_pca_ks",
                format!("{:?} neighbours; each 2 to 10000", self.local_pca_ks),
            );
        }
        if !(self.local_pca_ratio > 0.0 && self.local_pca_ratio < 1.0) {
            return bad(
                "local_pca_ratio",
                format!(
                    "{}; allowed 0 < ratio < 1 of the largest eigenvalue",
                    self.local_pca_ratio
                ),
            );
        }
        if !(self.local_pca_variance > 0.0 && self.local_pca_variance <= 1.0) {
            return bad(
                "local_pca_variance",
                format!("{}; allowed 0 < share ≤ 1", self.local_pca_variance),
            );
        }
        Ok(self)
    }
}

/// One estimator's result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MethodEstimate {
    /// Which estimator.
    pub method: Method,
    /// The estimate of d.
    pub d: f64,
    /// Bootstrap 95 % percentile interval [lo, hi] (NaN without resamples).
    pub ci95: [f64; 2],
    /// Local d against scale, coarse scales first for k-means, otherwise as computed.
    pub curve: Vec<ScalePoint>,
    /// The estimate after the finite-sample correction (equal to `d` when not calibrated).
    #[serde(default)]
    pub corrected_d: f64,
    /// The interval after the correction.
    #[serde(default)]
    pub corrected_ci95: [f64; 2],
    /// Whether the correction was applied, and whether it ran out of reference dimensions.
    #[serde(default)]
    pub correction: Correction,
}

/// Everything [`dimension_suite`] found.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DimensionSuite {
    /// Number of input points.
    pub n: usize,
    /// Their dimension.
    pub ambient_dim: usize,
    /// Points used by the neighbour-based estimators.
    pub n_used: usize,
    /// Bootstrap resamples per interval.
    pub bootstrap: usize,
    /// One entry per estimator that ran, in the order asked.
    pub estimates: Vec<MethodEstimate>,
    /// The full k-means scaling result, when k-means ran.
    pub kmeans: Option<ScalingCurve>,
    /// Scale below which the k-means curve climbs steeply (noise), when detected.
    pub noise_scale: Option<f64>,
    /// Estimators that could not run on these points, and why.
    pub failures: Vec<String>,
    /// The one answer the estimators agree on (None when fewer than one calibrated estimator
    /// ran).
    #[serde(default)]
    pub consensus: Option<Consensus>,
    /// Local dimension per input point (Levina & Bickel 2004 at `mle_k2` neighbours, inverse of
    /// the mean log distance ratio); NaN for points outside the neighbour subset or with
    /// duplicates. Empty when MLE did not run.
    #[serde(default)]
    pub pointwise: Vec<f64>,
}

impl DimensionSuite {
    /// The estimate of one method, if it ran.
    pub fn get(&self, m: Method) -> Option<&MethodEstimate> {
        self.estimates.iter().find(|e| e.method == m)
    }
}

/// Generator for one method's random steps, derived from the suite seed.
fn rng_for(seed: u64, m: Method) -> ChaCha8Rng {
    ChaCha8Rng::seed_from_u64(seed ^ (0x9E37_79B9_7F4A_7C15u64.wrapping_mul(m as u64 + 1)))
}

/// The point indices the neighbour-based estimators of [`dimension_suite`] use: a seeded
/// shuffle of `0..n` cut to at most `max_points` (so other tools can be run on the same points).
pub fn subset_indices(n: usize, max_points: usize, seed: u64) -> Vec<usize> {
    let mut order: Vec<usize> = (0..n).collect();
    order.shuffle(&mut ChaCha8Rng::seed_from_u64(seed));
    order.truncate(n.min(max_points));
    order
}

/// Run the chosen estimators (see the module notes).
///
/// Errors: bad parameters; fewer than 20 points or points without coordinates. An estimator
/// that cannot work on these points (for example too few distinct points) is listed in
/// `failures` instead of failing the suite.
pub fn dimension_suite(points: &Points, p: &Checked<SuiteParams>) -> Result<DimensionSuite> {
    if points.n < 20 || points.dim == 0 {
        return Err(Error::Analysis(format!(
            "the dimension suite needs at least 20 points with coordinates, got {} × {}",
            points.n, points.dim
        )));
    }
    let mut suite = DimensionSuite {
        n: points.n,
        ambient_dim: points.dim,
        n_used: points.n.min(p.max_points),
        bootstrap: p.bootstrap,
        estimates: Vec::new(),
        kmeans: None,
        noise_scale: None,
        failures: Vec::new(),
        consensus: None,
        pointwise: Vec::new(),
    };
    // Seeded subset for the neighbour-based estimators.
    let order = subset_indices(points.n, p.max_points, p.seed);
    let sub = points.select(&order);
    let m = sub.n;
    let table = Tables::build(&p.methods, p, &sub)?;

    for &method in &p.methods {
        let mut rng = rng_for(p.seed, method);
        let res = match (method, &table) {
            (Method::Kmeans, _) => run_kmeans(points, p, &mut rng).map(|(e, c)| {
                suite.noise_scale = c.noise_scale;
                suite.kmeans = Some(c);
                e
            }),
            (m, Some(t)) if m != Method::Correlation && m != Method::KernelSum => {
                run_neighbour_method(m, &sub, t, p, true, &mut rng)
            }
            (Method::Correlation, _) => run_correlation(&sub, p, &mut rng),
            (Method::KernelSum, _) => run_kernel_sum(&sub, p),
            _ => Err(Error::Analysis("neighbour table missing".to_string())),
        };
        match res {
            Ok(e) => suite.estimates.push(e),
            Err(Error::Analysis(msg)) => suite.failures.push(format!("{}: {msg}", method.name())),
            Err(e) => return Err(e),
        }
    }
    if let (Some(t), true) = (&table, p.methods.contains(&Method::Mle)) {
        let k = p.mle_k2.min(t.k);
        let mut pw = vec![f64::NAN; points.n];
        for (v, &i) in pointwise(&t.dist, t.k, k).into_iter().zip(&order) {
            pw[i] = v;
        }
        suite.pointwise = pw;
    }
    for e in &mut suite.estimates {
        e.corrected_d = e.d;
        e.corrected_ci95 = e.ci95;
    }
    if p.calibrate {
        correct_estimates(&mut suite.estimates, m, points.dim, p)?;
    }
    let curves: Vec<ScaleCurve> = suite
        .estimates
        .iter()
        .filter(|e| e.method != Method::KernelSum)
        .map(ScaleCurve::of_estimate)
        .collect();
    suite.consensus = consensus(&curves, &suite.estimates, points.dim, suite.noise_scale);
    // Rule 6 of the consensus, measured only where it can change the status.
    if let (Some(c), Some(t), Some(s)) =
        (suite.consensus.as_mut(), &table, log_iqr(&suite.pointwise))
    {
        if c.status == Status::Resolved {
            let delta = (c.d.round().max(1.0) as usize).min(points.dim);
            if let Some(s_cube) = cube_spread(m, delta, p.mle_k2.min(t.k))? {
                uniformity_guard(c, s, s_cube);
            }
        }
    }
    Ok(suite)
}

/// Neighbour tables of the subset: `k` neighbours of every point (TwoNN, MLE, pointwise
/// dimension) and `wide_k` neighbours of the first `wide_rows` points (a random subset, since
/// the subset is shuffled), for the local-PCA centres and the MLE curve at large k. Searching the
/// wide neighbourhoods for a few thousand points instead of all of them is what keeps the
/// neighbour search cheap on large sets.
pub(crate) struct Tables {
    /// Neighbour distances of every point, row-major `n × k`.
    pub dist: Vec<f64>,
    /// Neighbours per row of `idx`.
    pub k: usize,
    /// Wide table of the first rows: indices, row-major `wide_rows × wide_k`.
    pub wide_idx: Vec<usize>,
    /// Their distances.
    pub wide_dist: Vec<f64>,
    /// Neighbours per row of the wide table.
    pub wide_k: usize,
}

/// Rows of the wide table besides the local-PCA centres (the MLE curve's points).
pub const CURVE_ROWS: usize = 2000;

impl Tables {
    /// The tables `methods` need on `sub` (None when no method needs one).
    pub(crate) fn build(
        methods: &[Method],
        p: &SuiteParams,
        sub: &Points,
    ) -> Result<Option<Tables>> {
        Tables::build_rows(methods, p, sub, sub.n)
    }

    /// [`Tables::build`] with the narrow table for the first `rows` points only (their
    /// neighbours among all points): the reference samples of the finite-sample correction need
    /// the statistics of the neighbour distances, not a value for every point.
    pub(crate) fn build_rows(
        methods: &[Method],
        p: &SuiteParams,
        sub: &Points,
        rows: usize,
    ) -> Result<Option<Tables>> {
        let needs = methods.iter().any(|x| {
            matches!(
                x,
                Method::Twonn | Method::Mle | Method::LocalPca | Method::PcaVarianceShare
            )
        });
        if !needs {
            return Ok(None);
        }
        let m = sub.n;
        let k = if methods.contains(&Method::Mle) {
            p.mle_k2.max(2)
        } else {
            2
        }
        .min(m - 1);
        let wide_k = table_size(methods, p, m);
        let (idx, dist) = knn_table_rows(sub, rows.clamp(1, m), k)?;
        let (wide_idx, wide_dist) = if wide_k > k {
            let rows = p.local_pca_centres.max(CURVE_ROWS).min(m);
            knn_table_rows(sub, rows, wide_k)?
        } else {
            (idx, dist.clone())
        };
        Ok(Some(Tables {
            dist,
            k,
            wide_idx,
            wide_dist,
            wide_k: wide_k.max(k),
        }))
    }
}

/// The raw estimate of one neighbour-table method (no interval, no curve), for the reference
/// samples of the finite-sample correction. Same code path as the suite.
pub(crate) fn raw_estimate(
    method: Method,
    sub: &Points,
    table: Option<&Tables>,
    p: &SuiteParams,
) -> Result<f64> {
    let mut rng = rng_for(p.seed, method);
    let q = SuiteParams {
        bootstrap: 0,
        ..p.clone()
    };
    match (method, table) {
        (Method::Correlation, _) => run_correlation(sub, &q, &mut rng).map(|e| e.d),
        (m, Some(t)) => run_neighbour_method(m, sub, t, &q, false, &mut rng).map(|e| e.d),
        _ => Err(Error::Analysis("neighbour table missing".to_string())),
    }
}

/// Widest neighbour count the suite uses for `methods` on `m` points.
pub(crate) fn table_size(methods: &[Method], p: &SuiteParams, m: usize) -> usize {
    let mut table_k = 2usize;
    if methods.contains(&Method::Mle) {
        table_k = table_k
            .max(p.mle_k2)
            .max(p.mle_curve_ks.iter().copied().max().unwrap_or(2));
    }
    if methods.contains(&Method::LocalPca) || methods.contains(&Method::PcaVarianceShare) {
        table_k = table_k.max(p.local_pca_ks.iter().copied().max().unwrap_or(2));
    }
    table_k.min(m - 1)
}

fn run_neighbour_method(
    method: Method,
    sub: &Points,
    t: &Tables,
    p: &SuiteParams,
    with_curve: bool,
    rng: &mut ChaCha8Rng,
) -> Result<MethodEstimate> {
    match method {
        Method::Twonn => run_twonn(sub, &t.dist, t.k, p, with_curve, rng),
        Method::Mle => run_mle(t, p, rng),
        Method::LocalPca => run_local_pca(sub, t, p, PcaRule::EigenRatio(p.local_pca_ratio), rng),
        Method::PcaVarianceShare => {
            run_local_pca(sub, t, p, PcaRule::VarianceShare(p.local_pca_variance), rng)
        }
        _ => Err(Error::Analysis(format!(
            "{} does not use the neighbour table",
            method.name()
        ))),
    }
}

/// A finished estimate with the correction fields equal to the raw ones.
fn estimate(method: Method, d: f64, ci95: [f64; 2], curve: Vec<ScalePoint>) -> MethodEstimate {
    MethodEstimate {
        method,
        d,
        ci95,
        curve,
        corrected_d: d,
        corrected_ci95: ci95,
        correction: Correction::default(),
    }
}

fn run_kmeans(
    points: &Points,
    p: &SuiteParams,
    rng: &mut ChaCha8Rng,
) -> Result<(MethodEstimate, ScalingCurve)> {
    let (c, errors) = kmeans_scaling_errors(points, &p.kmeans)?;
    let n_hold = errors.first().map_or(0, |e| e.len());
    let ci95 = percentile_ci95(rng, n_hold, p.bootstrap, |draw| {
        let dist: Vec<f64> = errors
            .iter()
            .map(|e| draw.iter().map(|&i| e[i]).sum::<f64>() / draw.len() as f64)
            .collect();
        if dist.iter().any(|&d| d <= 0.0) {
            return None;
        }
        Some(curve_from_distortion(&c.ks, &dist).d)
    });
    Ok((estimate(Method::Kmeans, c.d, ci95, c.curve.clone()), c))
}

fn run_twonn(
    sub: &Points,
    dist: &[f64],
    table_k: usize,
    p: &SuiteParams,
    with_curve: bool,
    rng: &mut ChaCha8Rng,
) -> Result<MethodEstimate> {
    let ratios = |d: &[f64], k: usize| -> (Vec<f64>, f64) {
        let rows: Vec<&[f64]> = d.chunks_exact(k).filter(|r| r[0] > 0.0).collect();
        let mut mu: Vec<f64> = rows.iter().map(|r| r[1] / r[0]).collect();
        mu.sort_by(f64::total_cmp);
        let scale = rows.iter().map(|r| r[1]).sum::<f64>() / rows.len().max(1) as f64;
        (mu, scale)
    };
    let (mu, scale) = ratios(dist, table_k);
    let d = twonn_fit(&mu, p.twonn_discard).ok_or_else(|| {
        Error::Analysis(format!(
            "too few usable neighbour ratios ({} after removing duplicates)",
            mu.len()
        ))
    })?;
    let ci95 = percentile_ci95(rng, mu.len(), p.bootstrap, |draw| {
        let mut b: Vec<f64> = draw.iter().map(|&i| mu[i]).collect();
        b.sort_by(f64::total_cmp);
        twonn_fit(&b, p.twonn_discard)
    });
    // Scale analysis: nested halvings of the (already shuffled) subset.
    let mut curve = vec![ScalePoint { scale, d }];
    let mut size = if with_curve { sub.n / 2 } else { 0 };
    while size >= 50 {
        let idx: Vec<usize> = (0..size).collect();
        let half = sub.select(&idx);
        let dd = knn_table(&half, 2)?.1;
        let (mu_h, scale_h) = ratios(&dd, 2);
        if let Some(dh) = twonn_fit(&mu_h, p.twonn_discard) {
            curve.push(ScalePoint {
                scale: scale_h,
                d: dh,
            });
        }
        size /= 2;
    }
    curve.sort_by(|a, b| b.scale.total_cmp(&a.scale));
    Ok(estimate(Method::Twonn, d, ci95, curve))
}

fn run_mle(t: &Tables, p: &SuiteParams, rng: &mut ChaCha8Rng) -> Result<MethodEstimate> {
    let (dist, table_k) = (&t.dist, t.k);
    if p.mle_k2 > table_k {
        return Err(Error::Analysis(format!(
            "{} neighbours asked, only {} other points",
            p.mle_k2, table_k
        )));
    }
    let rows: Vec<&[f64]> = dist.chunks_exact(table_k).filter(|r| r[0] > 0.0).collect();
    if rows.is_empty() {
        return Err(Error::Analysis(
            "every point has a duplicate; no distance ratios".to_string(),
        ));
    }
    let nk = p.mle_k2 - p.mle_k1 + 1;
    // Per point, the inverse local estimates for k1..=k2.
    let inv: Vec<f64> = rows
        .iter()
        .flat_map(|r| (p.mle_k1..=p.mle_k2).map(move |k| mle_inverse(r, k)))
        .collect();
    let estimate = |which: &mut dyn Iterator<Item = usize>| -> Option<f64> {
        let mut sums = vec![0.0; nk];
        let mut cnt = 0usize;
        for i in which {
            sums.iter_mut()
                .zip(&inv[i * nk..(i + 1) * nk])
                .for_each(|(s, v)| *s += v);
            cnt += 1;
        }
        let mut total = 0.0;
        for s in sums {
            let mean = s / cnt as f64;
            if mean <= 0.0 {
                return None;
            }
            total += 1.0 / mean;
        }
        Some(total / nk as f64)
    };
    let d = estimate(&mut (0..rows.len())).ok_or_else(|| {
        Error::Analysis("neighbour distances do not grow with k; too many ties".to_string())
    })?;
    let ci95 = percentile_ci95(rng, rows.len(), p.bootstrap, |draw| {
        estimate(&mut draw.iter().copied())
    });
    // The curve at large k from the wide table's rows (a random subset of the points).
    let wide_rows: Vec<&[f64]> = t
        .wide_dist
        .chunks_exact(t.wide_k)
        .filter(|r| r[0] > 0.0)
        .collect();
    let rows = wide_rows;
    let curve = p
        .mle_curve_ks
        .iter()
        .filter(|&&k| k <= t.wide_k)
        .filter_map(|&k| {
            let mean_inv = rows.iter().map(|r| mle_inverse(r, k)).sum::<f64>() / rows.len() as f64;
            let scale = rows.iter().map(|r| r[k - 1]).sum::<f64>() / rows.len() as f64;
            (mean_inv > 0.0).then(|| ScalePoint {
                scale,
                d: 1.0 / mean_inv,
            })
        })
        .collect();
    Ok(self::estimate(Method::Mle, d, ci95, curve))
}

fn run_correlation(sub: &Points, p: &SuiteParams, rng: &mut ChaCha8Rng) -> Result<MethodEstimate> {
    // The subset is already in random order: its first points are a random reference set.
    let refs: Vec<usize> = (0..p.correlation_refs.min(sub.n)).collect();
    let c = correlation_counts(sub, &refs, p.correlation_radii)?;
    let all: Vec<usize> = (0..refs.len()).collect();
    let (d, curve) = c.fit(&all).ok_or_else(|| {
        Error::Analysis("a radius of the correlation sum holds no pair".to_string())
    })?;
    let ci95 = percentile_ci95(rng, refs.len(), p.bootstrap, |draw| {
        c.fit(draw).map(|f| f.0)
    });
    Ok(estimate(Method::Correlation, d, ci95, curve))
}

fn run_kernel_sum(sub: &Points, p: &SuiteParams) -> Result<MethodEstimate> {
    let k = p.mle_k2.min(sub.n - 1);
    let ks = crate::embed::kernel_sum_dimension(sub, k, p.seed).map_err(|e| match e {
        Error::Analysis(m) => Error::Analysis(m),
        other => Error::Analysis(other.to_string()),
    })?;
    let curve: Vec<ScalePoint> = ks
        .curve
        .iter()
        .filter(|(eps, d)| *eps > 0.0 && eps.is_finite() && d.is_finite())
        .map(|&(eps, d)| ScalePoint {
            scale: eps.sqrt(),
            d,
        })
        .collect();
    let d = ks.dimension();
    if !d.is_finite() {
        return Err(Error::Analysis(
            "the kernel sum has no finite slope".to_string(),
        ));
    }
    Ok(estimate(Method::KernelSum, d, [f64::NAN, f64::NAN], curve))
}

fn run_local_pca(
    sub: &Points,
    t: &Tables,
    p: &SuiteParams,
    rule: PcaRule,
    rng: &mut ChaCha8Rng,
) -> Result<MethodEstimate> {
    let (idx, dist, table_k) = (&t.wide_idx, &t.wide_dist, t.wide_k);
    let ks: Vec<usize> = p
        .local_pca_ks
        .iter()
        .copied()
        .filter(|&k| k <= table_k)
        .collect();
    if ks.is_empty() {
        return Err(Error::Analysis(format!(
            "no neighbourhood size of {:?} fits among {} points",
            p.local_pca_ks, sub.n
        )));
    }
    let centres: Vec<usize> = (0..p.local_pca_centres.min(idx.len() / table_k)).collect();
    let (counts, radii) = local_pca_counts(
        sub,
        &centres,
        idx,
        dist,
        table_k,
        &ks,
        &Checked::part_of_checked(rule),
    )?;
    let nk = ks.len();
    let curve_of = |which: &[usize]| -> Vec<f64> {
        (0..nk)
            .map(|j| which.iter().map(|&c| counts[c * nk + j]).sum::<f64>() / which.len() as f64)
            .collect()
    };
    let all: Vec<usize> = (0..centres.len()).collect();
    let means = curve_of(&all);
    let d = crate::stats::median(means.iter().copied());
    let ci95 = percentile_ci95(rng, centres.len(), p.bootstrap, |draw| {
        Some(crate::stats::median(curve_of(draw)))
    });
    let curve = radii
        .iter()
        .zip(&means)
        .map(|(&scale, &d)| ScalePoint { scale, d })
        .collect();
    let method = match rule {
        PcaRule::EigenRatio(_) => Method::LocalPca,
        PcaRule::VarianceShare(_) => Method::PcaVarianceShare,
    };
    Ok(estimate(method, d, ci95, curve))
}
