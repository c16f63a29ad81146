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
    // Only distances up to the largest radius matter. Each row's own q_hi quantile is found by
    // selection; the pooled q_hi quantile is at most the largest of them (M), so keeping every
    // distance ≤ M keeps every radius and every count exact while only those are sorted.
    let row_at = ((q_hi * per as f64) as usize).min(per - 1);
    let fill = |buf: &mut Vec<f64>, i: usize| {
        let xi = points.row(i);
        buf.clear();
        buf.extend(
            points
                .rows()
                .enumerate()
                .filter(|&(j, _)| j != i)
                .map(|(_, xj)| Points::dist2(xi, xj).sqrt()),
        );
    };
    // Two passes over the distances (computed twice rather than stored: n_ref × N values).
    let cut = refs
        .par_iter()
        .map_init(
            || Vec::with_capacity(per),
            |buf, &i| {
                fill(buf, i);
                *buf.select_nth_unstable_by(row_at, f64::total_cmp).1
            },
        )
        .reduce(|| f64::NEG_INFINITY, f64::max);
    let rows: Vec<Vec<f64>> = refs
        .par_iter()
        .map_init(
            || Vec::with_capacity(per),
            |buf, &i| {
                fill(buf, i);
                buf.iter()
                    .copied()
                    .filter(|&v| v <= cut)
                    .collect::<Vec<f64>>()
            },
        )
        .collect();
    let total = refs.len() * per;
    let mut all: Vec<f64> = rows.iter().flatten().copied().collect();
    // Positions among all pairs; every pair up to them is among the kept ones (see above).
    // Largest first, so that each later selection works on the prefix the previous one left.
    let pos: Vec<usize> = (0..n_radii)
        .map(|j| {
            let q = q_lo * (q_hi / q_lo).powf(j as f64 / (n_radii - 1) as f64);
            ((q * total as f64) as usize)
                .min(total - 1)
                .min(all.len() - 1)
        })
        .collect();
    let mut radii = vec![0.0; n_radii];
    let mut end = all.len();
    for j in (0..n_radii).rev() {
        let p = pos[j].min(end - 1);
        let (_, v, _) = all[..end].select_nth_unstable_by(p, f64::total_cmp);
        radii[j] = *v;
        end = p + 1;
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
    // Per row, how many kept distances lie below each radius: a histogram over the radii
    // (bucket = number of radii at or below the distance), summed up.
    let nr = radii.len();
    let counts = rows
        .par_iter()
        .flat_map_iter(|row| {
            let mut hist = vec![0u32; nr + 1];
            for &d in row {
                hist[radii.partition_point(|&r| r <= d)] += 1;
            }
            let mut acc = 0u32;
            hist[..nr]
                .iter()
                .map(|&h| {
                    acc += h;
                    acc
                })
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

    #[test]
    fn kept_distances_give_the_counts_of_all_distances() {
        // Invented: a clumped set (dense blob plus sparse spread), where the rows' quantiles
        // differ a lot; radii and counts must equal those from every distance, sorted.
        let mut rng = ChaCha8Rng::seed_from_u64(9);
        let mut data = Vec::new();
        for i in 0..1500 {
            let s = if i % 3 == 0 { 1.0 } else { 0.01 };
            data.extend((0..3).map(|_| s * rng.gen::<f64>()));
        }
        let pts = Points::new(1500, 3, data).unwrap();
        let refs: Vec<usize> = (0..300).collect();
        let c = correlation_counts(&pts, &refs, 12).unwrap();
        let rows: Vec<Vec<f64>> = refs
            .iter()
            .map(|&i| {
                let mut d: Vec<f64> = (0..pts.n)
                    .filter(|&j| j != i)
                    .map(|j| Points::dist2(pts.row(i), pts.row(j)).sqrt())
                    .collect();
                d.sort_by(f64::total_cmp);
                d
            })
            .collect();
        let mut all: Vec<f64> = rows.iter().flatten().copied().collect();
        all.sort_by(f64::total_cmp);
        let total = all.len();
        let q_lo = (200.0 / total as f64).max(1e-4);
        let q_hi = (10.0 * q_lo).clamp(0.02, 0.5);
        let mut radii: Vec<f64> = (0..12)
            .map(|j| {
                let q = q_lo * (q_hi / q_lo).powf(j as f64 / 11.0);
                all[((q * total as f64) as usize).min(total - 1)]
            })
            .collect();
        radii.dedup();
        assert_eq!(c.radii, radii);
        let counts: Vec<u32> = rows
            .iter()
            .flat_map(|r| radii.iter().map(|&x| r.partition_point(|&d| d < x) as u32))
            .collect();
        assert_eq!(c.counts, counts);
    }
}
