//! Local principal component analysis: the number of directions that carry a given share of
//! the variance in neighbourhoods of growing size (Fukunaga & Olsen 1971).
//!
//! In: [`Points`], centre points, their nearest-neighbour table, the neighbourhood sizes and the
//! explained-variance threshold (usually 0.95). Out: for every centre and size the number of
//! principal components needed to reach the threshold, and the mean neighbourhood radius per
//! size (the distance to the k-th neighbour), which is the scale of the curve.
//! The neighbourhood is the centre and its k nearest neighbours; eigenvalues of its covariance
//! come from faer (through the smaller of the covariance and the Gram matrix, which share their
//! non-zero eigenvalues).

use crate::error::{Error, Result};
use crate::points::Points;
use faer::{Mat, Side};
use rayon::prelude::*;

/// Number of leading eigenvalues of the centred rows `x` (r × dim, row-major) whose sum reaches
/// `threshold` of the total; 0 for a neighbourhood without spread.
fn components_for(x: &[f64], r: usize, dim: usize, threshold: f64) -> Result<usize> {
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
    let total: f64 = ev.iter().map(|v| v.max(0.0)).sum();
    if total <= 0.0 {
        return Ok(0);
    }
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
/// Errors: a k of 0 or above `table_k`, a threshold outside (0, 1], a centre out of range.
pub fn local_pca_counts(
    points: &Points,
    centres: &[usize],
    table_idx: &[usize],
    table_dist: &[f64],
    table_k: usize,
    ks: &[usize],
    threshold: f64,
) -> Result<(Vec<f64>, Vec<f64>)> {
    if !(threshold > 0.0 && threshold <= 1.0) {
        return Err(Error::param(
            "local_pca_variance",
            format!("{threshold}; allowed 0 < share ≤ 1 of the variance"),
        ));
    }
    if ks.is_empty() || ks.iter().any(|&k| k == 0 || k > table_k) {
        return Err(Error::param(
            "local_pca_ks",
            format!("{ks:?} neighbours; each must be 1 to {table_k}"),
        ));
    }
    if centres.iter().any(|&c| c >= points.n)
        || table_idx.len() != points.n * table_k
        || table_dist.len() != points.n * table_k
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
                    components_for(&x, r, dim, threshold).map(|c| c as f64)
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
    use crate::dimension::knn::knn_table;
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
        let (counts, radii) =
            local_pca_counts(&pts, &centres, &idx, &dist, 20, &[3, 10, 20], 0.95).unwrap();
        assert_eq!(counts.len(), 150);
        // Never more than the two directions that exist; with 10 or more neighbours the two
        // spreads are comparable, so both are needed (a 4-point neighbourhood may be thin).
        assert!(counts.iter().all(|&c| c == 1.0 || c == 2.0), "{counts:?}");
        assert!(
            counts.chunks(3).all(|r| r[1] == 2.0 && r[2] == 2.0),
            "{counts:?}"
        );
        assert!(radii[0] < radii[1] && radii[1] < radii[2]);
        assert!(local_pca_counts(&pts, &centres, &idx, &dist, 20, &[21], 0.95).is_err());
        assert!(local_pca_counts(&pts, &centres, &idx, &dist, 20, &[5], 0.0).is_err());
    }
}
