//! Brute-force k-nearest-neighbour distances.
//!
//! In: [`Points`] and k. Out: for every point the distances to its k nearest other points,
//! ascending (row-major `n × k`). Exact search, O(N²·dim) time in parallel over points with
//! rayon, O(N·k) memory. Ties are kept; a duplicate point counts as a neighbour at distance 0.

use crate::error::{Error, Result};
use crate::points::Points;
use rayon::prelude::*;

/// Distances from each point to its `k` nearest other points, ascending; row-major `n × k`.
///
/// Errors: k = 0, or k ≥ n (not enough other points), or points without coordinates.
pub fn knn_distances(points: &Points, k: usize) -> Result<Vec<f64>> {
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
    let mut out = vec![0.0; points.n * k];
    out.par_chunks_mut(k).enumerate().for_each(|(i, best)| {
        // `best` holds squared distances, ascending; `filled` of them are valid.
        let xi = points.row(i);
        let mut filled = 0;
        for (j, xj) in points.rows().enumerate() {
            if j == i {
                continue;
            }
            let d = Points::dist2(xi, xj);
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

#[cfg(test)]
mod tests {
    use super::*;

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
