//! Principal component analysis (Pearson 1901; Hotelling 1933): the linear baseline shown next
//! to the diffusion map, and the optional reduction before the neighbour search.
//!
//! In: [`Points`]. Out: a [`Pca`]: the mean, the principal axes (eigenvectors of the sample
//! covariance, largest variance first), every eigenvalue, and the share of variance each keeps.
//! The covariance is accumulated over blocks of rows (dense products with faer, blocks in
//! parallel), so memory is O(dim²) beyond the input.

use crate::error::{Error, Result};
use crate::points::Points;
use faer::{Mat, Par};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

/// Rows per covariance block.
const BLOCK: usize = 4096;

/// A fitted PCA.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Pca {
    /// Input dimension.
    pub dim: usize,
    /// Mean of each input coordinate.
    pub mean: Vec<f64>,
    /// Row-major `dim × dim` principal axes: row l is axis l (unit length), largest variance
    /// first. The sign of each axis makes its entry of largest magnitude positive.
    pub axes: Vec<f64>,
    /// Sample variances along the axes (covariance eigenvalues, divisor n − 1), non-increasing.
    pub variance: Vec<f64>,
}

impl Pca {
    /// Fit on `points` (at least 2 points and 1 coordinate).
    pub fn fit(points: &Points) -> Result<Pca> {
        let (n, dim) = (points.n, points.dim);
        if n < 2 || dim == 0 {
            return Err(Error::Analysis(format!(
                "PCA needs at least 2 points with at least 1 coordinate, got {n} in {dim}"
            )));
        }
        let mut mean = vec![0.0; dim];
        for r in points.rows() {
            for (m, v) in mean.iter_mut().zip(r) {
                *m += v;
            }
        }
        mean.iter_mut().for_each(|m| *m /= n as f64);
        let cov = (0..n.div_ceil(BLOCK))
            .into_par_iter()
            .map(|b| {
                let r0 = b * BLOCK;
                let nb = BLOCK.min(n - r0);
                let x =
                    Mat::<f64>::from_fn(nb, dim, |i, d| points.data[(r0 + i) * dim + d] - mean[d]);
                let mut c = Mat::<f64>::zeros(dim, dim);
                faer::linalg::matmul::matmul(
                    c.as_mut(),
                    faer::Accum::Replace,
                    x.transpose(),
                    x.as_ref(),
                    1.0,
                    Par::Seq,
                );
                crate::cpu::clear_upper_state_here();
                c
            })
            // Block products are summed in block order, not in rayon's reduction tree, whose
            // shape (and so the float rounding) depends on the number of threads.
            .collect::<Vec<_>>()
            .into_iter()
            .fold(Mat::<f64>::zeros(dim, dim), |a, b| a + b);
        let cov = cov * faer::Scale(1.0 / (n - 1) as f64);
        // Sequential decomposition: the same bits for any thread count.
        let mut s = faer::diag::Diag::<f64>::zeros(dim);
        let mut u = Mat::<f64>::zeros(dim, dim);
        let mut mem =
            faer::dyn_stack::MemBuffer::new(faer::linalg::evd::self_adjoint_evd_scratch::<f64>(
                dim,
                faer::linalg::evd::ComputeEigenvectors::Yes,
                Par::Seq,
                Default::default(),
            ));
        faer::linalg::evd::self_adjoint_evd(
            cov.as_ref(),
            s.as_mut(),
            Some(u.as_mut()),
            Par::Seq,
            faer::dyn_stack::MemStack::new(&mut mem),
            Default::default(),
        )
        .map_err(|e| Error::Analysis(format!("PCA eigendecomposition failed: {e:?}")))?;
        let s = s.column_vector();
        let mut axes = vec![0.0; dim * dim];
        let mut variance = vec![0.0; dim];
        for l in 0..dim {
            // Ascending from faer: take from the end.
            let c = dim - 1 - l;
            variance[l] = s[c].max(0.0);
            let mut big = 0.0f64;
            for d in 0..dim {
                if u[(d, c)].abs() > big.abs() {
                    big = u[(d, c)];
                }
            }
            let sign = if big < 0.0 { -1.0 } else { 1.0 };
            for d in 0..dim {
                axes[l * dim + d] = sign * u[(d, c)];
            }
        }
        Ok(Pca {
            dim,
            mean,
            axes,
            variance,
        })
    }

    /// Share of the total variance on each axis (sums to 1; all 0 for constant data).
    pub fn explained_ratio(&self) -> Vec<f64> {
        let total: f64 = self.variance.iter().sum();
        if total > 0.0 {
            self.variance.iter().map(|v| v / total).collect()
        } else {
            vec![0.0; self.variance.len()]
        }
    }

    /// Fewest axes whose cumulative share of variance reaches `share` (in (0, 1]).
    pub fn components_for(&self, share: f64) -> usize {
        let mut acc = 0.0;
        for (l, r) in self.explained_ratio().into_iter().enumerate() {
            acc += r;
            if acc >= share - 1e-12 {
                return l + 1;
            }
        }
        self.dim
    }

    /// Row-major `points.n × c` scores on the first `c` axes (c ≤ dim).
    ///
    /// Errors: `points` has a different dimension, or `c` exceeds it.
    pub fn project(&self, points: &Points, c: usize) -> Result<Points> {
        if points.dim != self.dim || c > self.dim {
            return Err(Error::Analysis(format!(
                "PCA projection: {} coordinates onto {c} of {} axes",
                points.dim, self.dim
            )));
        }
        let mut out = vec![0.0; points.n * c];
        out.par_chunks_mut(c.max(1))
            .zip(points.data.par_chunks(self.dim.max(1)))
            .for_each(|(o, x)| {
                for (l, ol) in o.iter_mut().enumerate() {
                    let a = &self.axes[l * self.dim..(l + 1) * self.dim];
                    *ol = a
                        .iter()
                        .zip(x)
                        .zip(&self.mean)
                        .map(|((a, x), m)| a * (x - m))
                        .sum();
                }
            });
        Ok(Points {
            n: points.n,
            dim: c,
            data: out,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;
    use rand_distr::{Distribution, Normal};

    #[test]
    fn recovers_axis_variances_of_a_gaussian() {
        // Independent N(0, s²) coordinates with s = 3, 2, 1 after a fixed rotation in the
        // (x, y) plane: the covariance eigenvalues are 9, 4, 1 (definition of PCA, common
        // practice). Sampling error of a variance is s²·√(2/n) ≈ 2 % at n = 20 000: allow 5 %.
        let mut rng = ChaCha8Rng::seed_from_u64(4);
        let z = Normal::new(0.0, 1.0).unwrap();
        let (c, s) = (0.6f64, 0.8f64);
        let mut data = Vec::new();
        for _ in 0..20_000 {
            let (a, b, e) = (
                3.0 * z.sample(&mut rng),
                2.0 * z.sample(&mut rng),
                z.sample(&mut rng),
            );
            data.extend_from_slice(&[c * a - s * b + 5.0, s * a + c * b, e]);
        }
        let pts = Points::new(20_000, 3, data).unwrap();
        let p = Pca::fit(&pts).unwrap();
        for (v, w) in p.variance.iter().zip([9.0, 4.0, 1.0]) {
            assert!((v / w - 1.0).abs() < 0.05, "{:?}", p.variance);
        }
        assert!((p.axes[0] - 0.6).abs() < 0.02 && (p.axes[1] - 0.8).abs() < 0.02);
        assert_eq!(p.components_for(0.9), 2);
        let sc = p.project(&pts, 2).unwrap();
        let m: f64 = sc.data.chunks(2).map(|r| r[0]).sum::<f64>() / 20_000.0;
        assert!(m.abs() < 1e-9);
        assert!(Pca::fit(&Points::new(1, 2, vec![0.0, 1.0]).unwrap()).is_err());
    }
}
