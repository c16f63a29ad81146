//! Local principal component analysis: the number of significant directions in neighbourhoods
//! of growing size.
//!
//! Two counting rules ([`PcaRule`]):
//! - [`PcaRule::EigenRatio`]: Fukunaga & Olsen (1971, IEEE Trans. Computers C-20:176): the
//!   number of eigenvalues of the local covariance larger than a fraction α of the largest
//!   (α = 0.1 by default; the published rule with the usual threshold, common practice).
//! - [`PcaRule::VarianceShare`]: the number of leading components whose eigenvalues sum to a
//!   share of the total variance (a cumulative-variance rule, not Fukunaga–Olsen).
//!
//! In: [`Points`], centre points, their nearest-neighbour table, the neighbourhood sizes and the
//! rule. Out: for every centre and size the count, and the mean neighbourhood radius per
//! size (the distance to the k-th neighbour), which is the scale of the curve.
//! The neighbourhood is the centre and its k nearest neighbours; eigenvalues of its covariance
//! come from faer (through the smaller of the covariance and the Gram matrix, which share their
//! non-zero eigenvalues).

use crate::error::{Error, Result};
use crate::params::Checked;
use crate::points::Points;
use faer::{Mat, Side};
use rayon::prelude::*;

/// How significant directions are counted (see the module notes).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PcaRule {
    /// Fukunaga & Olsen (1971): eigenvalues above this fraction of the largest (0 < α < 1).
    EigenRatio(f64),
    /// Leading components up to this share of the total variance (0 < share ≤ 1).
    VarianceShare(f64),
}

impl crate::params::Check for PcaRule {
    fn validate(&self) -> Result<()> {
        self.check().map(|_| ())
    }
}

impl PcaRule {
    fn check(self) -> Result<Self> {
        match self {
            PcaRule::EigenRatio(a) if !(a > 0.0 && a < 1.0) => Err(Error::param(
                "local_pca_ratio",
                format!("{a}; allowed 0 < ratio < 1 of the largest eigenvalue"),
            )),
            PcaRule::VarianceShare(s) if !(s > 0.0 && s <= 1.0) => Err(Error::param(
                "local_pca_variance",
                format!("{s}; allowed 0 < share ≤ 1 of the variance"),
            )),
            r => Ok(r),
        }
    }
}

/// Number of significant directions of the centred rows `x` (r × dim, row-major) under `rule`;
/// 0 for a neighbourhood without spread.
fn components_for(x: &[f64], r: usize, dim: usize, rule: PcaRule) -> Result<usize> {
    let ev = if r <= dim {
        Mat::<f64>::from_fn(r, r, |i, j| {
            x[i * dim..(i + 1) * dim]
                .iter()
                .zip(&x[j * dim..(j + 1) * dim])
                .map(|(a, b)| a * b)
                .sum()
        })
        .self_adjoint_eigenvalues(Side::Lower)
    } else {
        Mat::<f64>::from_fn(dim, dim, |i, j| {
            (0..r).map(|t| x[t * dim + i] * x[t * dim + j]).sum()
        })
        .self_adjoint_eigenvalues(Side::Lower)
    }
    .map_err(|e| Error::Analysis(format!("local PCA: eigenvalues failed: {e:?}")))?;
    crate::cpu::clear_upper_state_here();
    let total: f64 = ev.iter().map(|v| v.max(0.0)).sum();
    if total <= 0.0 {
        return Ok(0);
    }
    let threshold = match rule {
        PcaRule::EigenRatio(a) => {
            let top = ev.iter().fold(0.0f64, |m, &v| m.max(v));
            return Ok(ev.iter().filter(|&&v| v > a * top).count());
        }
        PcaRule::VarianceShare(s) => s,
    };
    let mut acc = 0.0;
    for (c, v) in ev.iter().rev().enumerate() {
        acc += v.max(0.0);
        if acc >= threshold * total * (1.0 - 1e-12) {
            return Ok(c + 1);
        }
    }
    Ok(ev.len())
}

/// Local PCA counts. `table_idx`/`table_dist` are a row-major `points.n × table_k`
/// nearest-neighbour table (ascending); `ks` are neighbourhood sizes (each ≤ `table_k`).
/// Returns (`centres.len() × ks.len()` row-major component counts, mean radius per k).
///
/// Errors: a k of 0 or above `table_k`, a rule threshold out of range, a centre out of range.
pub fn local_pca_counts(
    points: &Points,
    centres: &[usize],
    table_idx: &[usize],
    table_dist: &[f64],
    table_k: usize,
    ks: &[usize],
    rule: &Checked<PcaRule>,
) -> Result<(Vec<f64>, Vec<f64>)> {
    let rule = **rule;
    if ks.is_empty() || ks.iter().any(|&k| k == 0 || k > table_k) {
        return Err(Error::param(
            "local_pca_ks",
            format!("{ks:?} neighbours; each must be 1 to {table_k}"),
        ));
    }
    // The table may cover only the first rows (at least every centre).
    let rows = table_idx.len() / table_k.max(1);
    if centres.iter().any(|&c| c >= points.n || c >= rows)
        || rows > points.n
        || table_idx.len() != rows * table_k
        || table_dist.len() != rows * table_k
    {
        return Err(Error::Analysis(
            "local PCA: neighbour table does not match the points".to_string(),
        ));
    }
    let dim = points.dim;
    let rows: Vec<Vec<f64>> = centres
        .par_iter()
        .map(|&c| {
            ks.iter()
                .map(|&k| {
                    let nb = &table_idx[c * table_k..c * table_k + k];
                    let r = k + 1;
                    let mut x = Vec::with_capacity(r * dim);
                    x.extend_from_slice(points.row(c));
                    for &j in nb {
                        x.extend_from_slice(points.row(j));
                    }
                    let mut mean = vec![0.0; dim];
                    for row in x.chunks_exact(dim) {
                        mean.iter_mut()
                            .zip(row)
                            .for_each(|(m, v)| *m += v / r as f64);
                    }
                    for row in x.chunks_exact_mut(dim) {
                        row.iter_mut().zip(&mean).for_each(|(v, m)| *v -= m);
                    }
                    components_for(&x, r, dim, rule).map(|c| c as f64)
                })
                .collect::<Result<Vec<f64>>>()
        })
        .collect::<Result<Vec<_>>>()?;
    let radii = ks
        .iter()
        .map(|&k| {
            centres
                .iter()
                .map(|&c| table_dist[c * table_k + k - 1])
                .sum::<f64>()
                / centres.len().max(1) as f64
        })
        .collect();
    Ok((rows.concat(), radii))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::neighbours::knn_table;
    use crate::params::{ck, Check};
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    #[test]
    fn plane_in_five_dimensions_needs_two_components() {
        // A flat unit square in the first two of five coordinates: every neighbourhood spans two
        // directions. With a 0.95 share, two equal variances need both (common practice).
        let mut rng = ChaCha8Rng::seed_from_u64(6);
        let data: Vec<f64> = (0..800)
            .flat_map(|_| {
                let (a, b) = (rng.gen::<f64>(), rng.gen::<f64>());
                [a, b, 0.0, 0.0, 0.0]
            })
            .collect();
        let pts = Points::new(800, 5, data).unwrap();
        let (idx, dist) = knn_table(&pts, 20).unwrap();
        let centres: Vec<usize> = (0..50).collect();
        let share = PcaRule::VarianceShare(0.95);
        let (counts, radii) =
            local_pca_counts(&pts, &centres, &idx, &dist, 20, &[3, 10, 20], &ck(share)).unwrap();
        assert_eq!(counts.len(), 150);
        // Never more than the two directions that exist; with 10 or more neighbours the two
        // spreads are comparable, so both are needed (a 4-point neighbourhood may be thin).
        assert!(counts.iter().all(|&c| c == 1.0 || c == 2.0), "{counts:?}");
        assert!(
            counts.chunks(3).all(|r| r[1] == 2.0 && r[2] == 2.0),
            "{counts:?}"
        );
        assert!(radii[0] < radii[1] && radii[1] < radii[2]);
        assert!(local_pca_counts(&pts, &centres, &idx, &dist, 20, &[21], &ck(share)).is_err());
        // Rules out of range have no checked form.
        assert!(Check::check(PcaRule::VarianceShare(0.0)).is_err());
        assert!(Check::check(PcaRule::EigenRatio(1.0)).is_err());
        // Fukunaga & Olsen (1971) on the same plane: two eigenvalues of equal expected size, both
        // far above 0.1 of the largest once the neighbourhood holds 10 or more points.
        let (fo, _) = local_pca_counts(
            &pts,
            &centres,
            &idx,
            &dist,
            20,
            &[10, 20],
            &ck(PcaRule::EigenRatio(0.1)),
        )
        .unwrap();
        assert!(fo.iter().all(|&c| c == 2.0), "{fo:?}");
    }

    #[test]
    fn noisy_circle_fukunaga_olsen_reads_one() {
        // A unit circle in 10 dimensions with isotropic Gaussian noise of SD 0.01 in every
        // coordinate, 2000 points. Fukunaga & Olsen (1971), ratio 0.1: with 80 neighbours the
        // arc spans about 2π·80/2000 = 0.25 in length, variance ≈ 0.25²/12 = 5.2e-3 along the
        // tangent against 1e-4 per noise direction (ratio 0.02 < 0.1), so the count is 1. The
        // cumulative-variance rule at 0.95 must add noise directions to reach the share
        // (nine noise directions hold 9e-4 of 6.1e-3 = 15 % of the variance), so it reads more.
        let mut rng = ChaCha8Rng::seed_from_u64(11);
        let normal = rand_distr::Normal::new(0.0, 0.01).unwrap();
        let data: Vec<f64> = (0..2000)
            .flat_map(|_| {
                let t = rng.gen::<f64>() * std::f64::consts::TAU;
                let mut row = [0.0; 10];
                row[0] = t.cos();
                row[1] = t.sin();
                row.iter_mut()
                    .for_each(|v| *v += rand_distr::Distribution::sample(&normal, &mut rng));
                row
            })
            .collect();
        let pts = Points::new(2000, 10, data).unwrap();
        let (idx, dist) = knn_table(&pts, 80).unwrap();
        let centres: Vec<usize> = (0..100).collect();
        let mean = |rule| {
            let (c, _) =
                local_pca_counts(&pts, &centres, &idx, &dist, 80, &[80], &ck(rule)).unwrap();
            c.iter().sum::<f64>() / c.len() as f64
        };
        let fo = mean(PcaRule::EigenRatio(0.1));
        let share = mean(PcaRule::VarianceShare(0.95));
        assert!((fo - 1.0).abs() < 0.15, "Fukunaga–Olsen {fo}");
        assert!(share > 2.0, "variance share {share}");
    }
}
