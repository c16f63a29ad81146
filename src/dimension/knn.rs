//! Brute-force k-nearest-neighbour distances.
//!
//! In: [`Points`] and k. Out: for every point the distances to its k nearest other points,
//! ascending (row-major `n × k`). Exact search, O(N²·dim) time in parallel over points with
//! rayon, O(N·k) memory. Ties are kept; a duplicate point counts as a neighbour at distance 0.

use crate::error::{Error, Result};
use crate::points::Points;
use rayon::prelude::*;

/// `k` neighbours must exist (1 ≤ k < n) and the points must have coordinates.
fn check_k(points: &Points, k: usize) -> Result<()> {
    if k == 0 || k >= points.n {
        return Err(Error::param(
            "k",
            format!(
                "{k} neighbours; allowed 1 to n − 1 = {} for {} points",
                points.n.saturating_sub(1),
                points.n
            ),
        ));
    }
    if points.dim == 0 {
        return Err(Error::Analysis(
            "nearest neighbours need points with at least one coordinate".to_string(),
        ));
    }
    Ok(())
}

/// Distances from each point to its `k` nearest other points, ascending; row-major `n × k`.
///
/// Errors: k = 0, or k ≥ n (not enough other points), or points without coordinates.
pub fn knn_distances(points: &Points, k: usize) -> Result<Vec<f64>> {
    check_k(points, k)?;
    let mut out = vec![0.0; points.n * k];
    out.par_chunks_mut(k).enumerate().for_each(|(i, best)| {
        // `best` holds squared distances, ascending; `filled` of them are valid.
        let xi = points.row(i);
        let mut filled = 0;
        for (j, xj) in points.rows().enumerate() {
            if j == i {
                continue;
            }
            let d = sqdist(xi, xj);
            if filled < k {
                let mut pos = filled;
                while pos > 0 && best[pos - 1] > d {
                    best[pos] = best[pos - 1];
                    pos -= 1;
                }
                best[pos] = d;
                filled += 1;
            } else if d < best[k - 1] {
                let mut pos = k - 1;
                while pos > 0 && best[pos - 1] > d {
                    best[pos] = best[pos - 1];
                    pos -= 1;
                }
                best[pos] = d;
            }
        }
        best.iter_mut().for_each(|v| *v = v.sqrt());
    });
    Ok(out)
}

/// Squared Euclidean distance with four independent accumulators (the compiler can keep them in
/// vector registers); the same value as [`Points::dist2`] up to rounding.
#[inline]
pub(crate) fn sqdist(a: &[f64], b: &[f64]) -> f64 {
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

/// Exact k-nearest-neighbour table: for every point, the indices and distances of its `k`
/// nearest other points, ascending by distance (ties broken by index). Row-major `n × k`.
/// O(N²·dim) time in parallel over points, O(N) scratch per thread and O(N·k) output.
///
/// Errors: as [`knn_distances`].
pub fn knn_table(points: &Points, k: usize) -> Result<(Vec<usize>, Vec<f64>)> {
    check_k(points, k)?;
    let n = points.n;
    let mut idx = vec![0usize; n * k];
    let mut dist = vec![0.0; n * k];
    idx.par_chunks_mut(k)
        .zip(dist.par_chunks_mut(k))
        .enumerate()
        .for_each_init(
            || Vec::with_capacity(n),
            |buf: &mut Vec<(f64, usize)>, (i, (ir, dr))| {
                buf.clear();
                let xi = points.row(i);
                buf.extend(
                    points
                        .rows()
                        .enumerate()
                        .filter(|&(j, _)| j != i)
                        .map(|(j, xj)| (sqdist(xi, xj), j)),
                );
                let cmp =
                    |a: &(f64, usize), b: &(f64, usize)| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1));
                if buf.len() > k {
                    buf.select_nth_unstable_by(k - 1, cmp);
                    buf.truncate(k);
                }
                buf.sort_unstable_by(cmp);
                for (slot, (d2, j)) in buf.iter().enumerate() {
                    ir[slot] = *j;
                    dr[slot] = d2.sqrt();
                }
            },
        );
    Ok((idx, dist))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn table_matches_distances() {
        let pts = Points::new(5, 1, vec![0.0, 1.0, 3.0, 6.0, 10.0]).unwrap();
        let (i, d) = knn_table(&pts, 2).unwrap();
        assert_eq!(i, vec![1, 2, 0, 2, 1, 0, 2, 4, 3, 2]);
        assert_eq!(d, knn_distances(&pts, 2).unwrap());
        assert!((sqdist(&[1.0, 2.0, 3.0, 4.0, 5.0], &[0.0; 5]) - 55.0).abs() < 1e-12);
    }

    #[test]
    fn line_neighbours() {
        // Points 0, 1, 3, 6 on a line.
        let pts = Points::new(4, 1, vec![0.0, 1.0, 3.0, 6.0]).unwrap();
        let d = knn_distances(&pts, 2).unwrap();
        assert_eq!(d, vec![1.0, 3.0, 1.0, 2.0, 2.0, 3.0, 3.0, 5.0]);
        assert!(knn_distances(&pts, 4).is_err());
        assert!(knn_distances(&pts, 0).is_err());
    }
}
