//! Correlation dimension with its local-slope curve (Grassberger & Procaccia 1983).
//!
//! In: [`Points`], a set of reference points (indices) and the number of radii. Out: per
//! reference point the number of other points within each radius, the radii, and from their
//! sums the correlation sum C(r) = (pairs closer than r) / (all pairs counted).
//! For a d-dimensional set C(r) ∝ r^d at small r (Grassberger & Procaccia 1983, Phys. Rev. Lett.
//! 50:346). Only pairs that involve a reference point are counted (n_ref·(N − 1) pairs), so the
//! cost is O(n_ref·N·dim) instead of O(N²·dim).
//!
//! Radii (our rule): the pair-distance quantiles q_j spaced geometrically from
//! q_lo = max(10⁻⁴, 200 / pairs) (at most 0.05, so at least 4000 pairs) to q_hi = min(0.5, max(0.02, 10·q_lo)), so the smallest radius
//! still holds at least 200 pairs. The local slope between neighbouring radii,
//! Δln C / Δln r, is the curve value at scale √(r_j·r_{j+1}); the estimate is the least-squares
//! slope of ln C on ln r over all radii.

use super::knn::sqdist;
use super::ScalePoint;
use crate::error::{Error, Result};
use crate::points::Points;
use rayon::prelude::*;

/// Pair counts of reference points within a ladder of radii.
#[derive(Debug, Clone, PartialEq)]
pub struct CorrelationCounts {
    /// Radii, ascending, in the points' units.
    pub radii: Vec<f64>,
    /// Row-major `n_ref × radii.len()`: other points strictly closer than each radius.
    pub counts: Vec<u32>,
    /// Pairs counted per reference point (N − 1).
    pub pairs_per_ref: usize,
}

/// Count, for each reference point in `refs`, the other points closer than each of `n_radii`
/// radii chosen as in the module notes.
///
/// Errors: `n_radii` outside 3..=100; fewer than 2 reference points or 3 points; all
/// distances zero.
pub fn correlation_counts(
    points: &Points,
    refs: &[usize],
    n_radii: usize,
) -> Result<CorrelationCounts> {
    if !(3..=100).contains(&n_radii) {
        return Err(Error::param(
            "correlation_radii",
            format!("{n_radii} radii; allowed 3 to 100"),
        ));
    }
    if refs.len() < 2 || points.n < 3 || refs.iter().any(|&r| r >= points.n) {
        return Err(Error::Analysis(format!(
            "correlation dimension needs at least 2 reference points among at least 3 points, \
             got {} of {}",
            refs.len(),
            points.n
        )));
    }
    let per = points.n - 1;
    let rows: Vec<Vec<f64>> = refs
        .par_iter()
        .map(|&i| {
            let xi = points.row(i);
            let mut d: Vec<f64> = points
                .rows()
                .enumerate()
                .filter(|&(j, _)| j != i)
                .map(|(_, xj)| sqdist(xi, xj).sqrt())
                .collect();
            d.sort_unstable_by(f64::total_cmp);
            d
        })
        .collect();
    let pairs = (refs.len() * per) as f64;
    let q_lo = (200.0 / pairs).max(1e-4);
    if q_lo > 0.05 {
        return Err(Error::Analysis(format!(
            "correlation dimension needs at least 4000 pairs, got {pairs} ({} reference points \
             × {per} others)",
            refs.len()
        )));
    }
    let q_hi = (10.0 * q_lo).clamp(0.02, 0.5);
    let mut all: Vec<f64> = rows.iter().flatten().copied().collect();
    let mut radii = Vec::with_capacity(n_radii);
    for j in 0..n_radii {
        let q = q_lo * (q_hi / q_lo).powf(j as f64 / (n_radii - 1) as f64);
        let pos = ((q * all.len() as f64) as usize).min(all.len() - 1);
        let (_, v, _) = all.select_nth_unstable_by(pos, f64::total_cmp);
        radii.push(*v);
    }
    radii.dedup();
    radii.retain(|&r| r > 0.0);
    if radii.len() < 3 {
        return Err(Error::Analysis(
            "correlation dimension: fewer than 3 distinct positive radii (too many duplicate \
             points)"
                .to_string(),
        ));
    }
    let counts = rows
        .iter()
        .flat_map(|row| {
            radii
                .iter()
                .map(|&r| row.partition_point(|&d| d < r) as u32)
                .collect::<Vec<_>>()
        })
        .collect();
    Ok(CorrelationCounts {
        radii,
        counts,
        pairs_per_ref: per,
    })
}

impl CorrelationCounts {
    /// Correlation dimension (least-squares slope of ln C on ln r) and the local-slope curve,
    /// using the reference points `which` (indices into the reference list, repeats allowed).
    /// None when a radius holds no pair.
    pub fn fit(&self, which: &[usize]) -> Option<(f64, Vec<ScalePoint>)> {
        let nr = self.radii.len();
        let mut tot = vec![0.0f64; nr];
        for &w in which {
            for (t, &c) in tot.iter_mut().zip(self.counts.get(w * nr..(w + 1) * nr)?) {
                *t += c as f64;
            }
        }
        if tot.iter().any(|&t| t <= 0.0) {
            return None;
        }
        let denom = (which.len() * self.pairs_per_ref) as f64;
        let lc: Vec<f64> = tot.iter().map(|t| (t / denom).ln()).collect();
        let lr: Vec<f64> = self.radii.iter().map(|r| r.ln()).collect();
        let curve = (0..nr - 1)
            .map(|j| ScalePoint {
                scale: (self.radii[j] * self.radii[j + 1]).sqrt(),
                d: (lc[j + 1] - lc[j]) / (lr[j + 1] - lr[j]),
            })
            .collect();
        let m = nr as f64;
        let mx = lr.iter().sum::<f64>() / m;
        let my = lc.iter().sum::<f64>() / m;
        let sxx: f64 = lr.iter().map(|x| (x - mx) * (x - mx)).sum();
        let sxy: f64 = lr.iter().zip(&lc).map(|(x, y)| (x - mx) * (y - my)).sum();
        (sxx > 0.0).then(|| (sxy / sxx, curve))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    #[test]
    fn square_has_correlation_dimension_two() {
        let mut rng = ChaCha8Rng::seed_from_u64(4);
        let data: Vec<f64> = (0..3000 * 2).map(|_| rng.gen::<f64>()).collect();
        let pts = Points::new(3000, 2, data).unwrap();
        let refs: Vec<usize> = (0..500).collect();
        let c = correlation_counts(&pts, &refs, 8).unwrap();
        let (d, curve) = c.fit(&refs).unwrap();
        // Source: Grassberger & Procaccia (1983): C(r) ∝ r^d. For the unit square the exact
        // small-r correlation sum is πr² − (8/3)r³ + r⁴/2 (boundary loss, exact arithmetic),
        // whose log-slope at the largest radius used here (C = 0.02, r ≈ 0.08) is ≈ 1.91; so
        // the fit lies between 1.85 and 2.05 (allowing for sampling of 500 references).
        assert!(d > 1.85 && d < 2.05, "d {d}");
        assert_eq!(curve.len(), c.radii.len() - 1);
        assert!(correlation_counts(&pts, &refs, 2).is_err());
        assert!(correlation_counts(&pts, &[1], 5).is_err());
    }
}
