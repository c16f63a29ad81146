//! Spread of the pointwise local dimension of a point set, against a uniform cube of the same
//! size: the statistic behind the consensus's uniformity guard
//! ([`super::consensus::uniformity_guard`]).
//!
//! Every calibrated estimator of the suite is corrected against uniform reference cubes
//! ([`super::calibrate`]). When the density of the data changes strongly over the span of a
//! neighbourhood (a density piled towards a corner, as in the Mbeta set of Campadelli et al.
//! 2015), or when parts of the set have different dimensions, every estimator is biased the
//! same way and their agreement says nothing about the truth (docs/validation-dimension.md).
//! Both show as local dimensions that vary from point to point more than the sampling of a
//! uniform set explains.
//!
//! Statistic S (ours): the interquartile range of ln d̂(x) over the points, where d̂(x) is the
//! pointwise Levina & Bickel (2004) estimate at k neighbours, 1 / ((k − 1)⁻¹ Σ_{j<k}
//! ln(T_k(x) / T_j(x))) (points with a duplicate neighbour are left out). On a uniform set
//! S reflects the sampling spread of k distances only; the reference is S on m points uniform
//! in [0, 1]^δ at δ = the consensus d rounded (at least 1, at most the ambient dimension),
//! drawn as the correction's reference cubes, with the same k. Reference values are kept in
//! memory for the life of the process.

use super::calibrate::reference_cube;
use super::nn_estimators::mle_inverse;
use crate::error::Result;
use crate::neighbours::knn_distances;
use std::collections::HashMap;
use std::sync::{Mutex, OnceLock};

/// Quantile `q` of sorted values, interpolated linearly between order statistics.
fn quantile(sorted: &[f64], q: f64) -> f64 {
    let h = q * (sorted.len() - 1) as f64;
    let i = h.floor() as usize;
    let j = (i + 1).min(sorted.len() - 1);
    sorted[i] + (h - i as f64) * (sorted[j] - sorted[i])
}

/// S of pointwise local dimensions (NaN, non-positive and infinite values are skipped); None
/// with fewer than 4 usable values.
pub(crate) fn log_iqr(pointwise: &[f64]) -> Option<f64> {
    let mut v: Vec<f64> = pointwise
        .iter()
        .filter(|x| x.is_finite() && **x > 0.0)
        .map(|x| x.ln())
        .collect();
    if v.len() < 4 {
        return None;
    }
    v.sort_by(f64::total_cmp);
    Some(quantile(&v, 0.75) - quantile(&v, 0.25))
}

/// Pointwise local dimensions at k neighbours from a distance table (row-major, `width`
/// ascending distances per row, `width ≥ k ≥ 2`); NaN for rows with a duplicate.
pub(crate) fn pointwise(dist: &[f64], width: usize, k: usize) -> Vec<f64> {
    dist.chunks_exact(width)
        .map(|row| {
            if row[0] > 0.0 && k >= 2 && k <= width {
                let inv = mle_inverse(row, k);
                if inv > 0.0 {
                    return 1.0 / inv;
                }
            }
            f64::NAN
        })
        .collect()
}

/// Reference spreads by (m, δ, k).
type SpreadCache = Mutex<HashMap<(usize, usize, usize), Option<f64>>>;

fn cache() -> &'static SpreadCache {
    static CACHE: OnceLock<SpreadCache> = OnceLock::new();
    CACHE.get_or_init(|| Mutex::new(HashMap::new()))
}

/// S of the uniform reference cube of m points in δ dimensions at k neighbours (cached in
/// memory).
pub(crate) fn cube_spread(m: usize, delta: usize, k: usize) -> Result<Option<f64>> {
    let key = (m, delta.max(1), k);
    if let Some(v) = cache().lock().unwrap_or_else(|e| e.into_inner()).get(&key) {
        return Ok(*v);
    }
    let k = k.min(m.saturating_sub(1));
    let v = if k >= 2 {
        let pts = reference_cube(m, key.1);
        let dist = knn_distances(&pts, k)?;
        log_iqr(&pointwise(&dist, k, k))
    } else {
        None
    };
    cache()
        .lock()
        .unwrap_or_else(|e| e.into_inner())
        .insert(key, v);
    Ok(v)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quartiles_and_piled_density() {
        // Hand values: ln of 1, e, e², e³, e⁴ has quartiles 1 and 3.
        let e = std::f64::consts::E;
        let s = log_iqr(&[1.0, e, e * e, e.powi(3), e.powi(4), f64::NAN]).unwrap();
        assert!((s - 2.0).abs() < 1e-12, "{s}");
        assert_eq!(log_iqr(&[1.0, 2.0, f64::NAN]), None);
        // Construction (common practice): u³ coordinates pile the density towards one corner,
        // so the local dimension varies more from point to point than in a uniform cube.
        let m = 1000;
        let cube = reference_cube(m, 5);
        let piled = crate::points::Points::new(
            m,
            5,
            cube.data.iter().map(|u| u * u * u).collect::<Vec<f64>>(),
        )
        .unwrap();
        let s = |p| log_iqr(&pointwise(&knn_distances(p, 20).unwrap(), 20, 20)).unwrap();
        let (su, sp) = (s(&cube), s(&piled));
        assert!(sp > 1.15 * su, "uniform {su}, piled {sp}");
        assert_eq!(cube_spread(m, 5, 20).unwrap(), Some(su));
    }
}
