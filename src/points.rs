//! A dense row-major matrix of points (one row a point), shared by features, embedding and
//! dimension estimation.

use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};

/// `n` points in `dim` dimensions, row-major.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Points {
    /// Number of points (rows).
    pub n: usize,
    /// Dimension (columns).
    pub dim: usize,
    /// Row-major values, `n * dim` long.
    pub data: Vec<f64>,
}

impl Points {
    /// Wrap row-major data, checking its length and that every value is finite.
    pub fn new(n: usize, dim: usize, data: Vec<f64>) -> Result<Self> {
        if data.len() != n.saturating_mul(dim) {
            return Err(Error::Analysis(format!(
                "point matrix has {} values, expected {n} x {dim}",
                data.len()
            )));
        }
        if let Some(pos) = data.iter().position(|v| !v.is_finite()) {
            return Err(Error::Analysis(format!(
                "point {} coordinate {} is not finite",
                pos / dim.max(1),
                pos % dim.max(1)
            )));
        }
        Ok(Points { n, dim, data })
    }

    /// Build from rows of equal length.
    pub fn from_rows(rows: &[Vec<f64>]) -> Result<Self> {
        let dim = rows.first().map_or(0, |r| r.len());
        if let Some(i) = rows.iter().position(|r| r.len() != dim) {
            return Err(Error::Analysis(format!(
                "row {i} has {} values, expected {dim}",
                rows[i].len()
            )));
        }
        Points::new(rows.len(), dim, rows.concat())
    }

    /// Row `i` as a slice. Panics if `i >= n` (callers index within `0..n`).
    pub fn row(&self, i: usize) -> &[f64] {
        &self.data[i * self.dim..(i + 1) * self.dim]
    }

    /// Iterator over rows.
    pub fn rows(&self) -> impl Iterator<Item = &[f64]> {
        self.data.chunks_exact(self.dim.max(1)).take(self.n)
    }

    /// Squared Euclidean distance between two slices of equal length: the one distance of the
    /// crate (neighbour search, k-means, correlation sums, kernels). Four independent
    /// accumulators over blocks of four coordinates (the compiler keeps them in vector
    /// registers), then the remaining coordinates in order; identical rows give exactly 0.
    #[inline]
    pub fn dist2(a: &[f64], b: &[f64]) -> f64 {
        let mut acc = [0.0f64; 4];
        let ca = a.chunks_exact(4);
        let cb = b.chunks_exact(4);
        let (ra, rb) = (ca.remainder(), cb.remainder());
        for (x, y) in ca.zip(cb) {
            for l in 0..4 {
                let d = x[l] - y[l];
                acc[l] += d * d;
            }
        }
        let mut s = (acc[0] + acc[1]) + (acc[2] + acc[3]);
        for (x, y) in ra.iter().zip(rb) {
            s += (x - y) * (x - y);
        }
        s
    }

    /// The subset of rows at `idx`, in that order.
    pub fn select(&self, idx: &[usize]) -> Points {
        let mut data = Vec::with_capacity(idx.len() * self.dim);
        for &i in idx {
            data.extend_from_slice(self.row(i));
        }
        Points {
            n: idx.len(),
            dim: self.dim,
            data,
        }
    }
}
