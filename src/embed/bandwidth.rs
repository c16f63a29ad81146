//! Automatic kernel bandwidth by the kernel-sum slope rule.
//!
//! In: points and a seed. Out: a bandwidth ε for k(x,y) = exp(−‖x−y‖²/ε).
//! Method (Coifman, Shkolnisky, Sigworth & Singer 2008; Berry & Harlim 2016; recalled from
//! memory): for data on a d-dimensional manifold the kernel sum S(ε) = Σ_ij exp(−‖x_i−x_j‖²/ε)
//! grows like ε^{d/2} between the regime where only self-pairs count (small ε, S → n) and the
//! regime where every pair counts (large ε, S → n²). The bandwidth is taken where the slope
//! d ln S / d ln ε is steepest, on a log-spaced grid of ε.

use crate::error::{Error, Result};
use crate::points::Points;
use rand::seq::index::sample;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

/// Largest number of points used for the kernel sums (a seeded random subset above this).
const MAX_SUBSAMPLE: usize = 1000;
/// Grid points per factor 2 of ε.
const STEPS_PER_OCTAVE: usize = 4;
/// Cap on the number of grid points.
const MAX_STEPS: usize = 400;

/// The kernel-sum curve: `(ε, S(ε))` on a log grid spanning the pairwise squared distances of
/// a seeded subsample (at most 1000 points) of `points`.
pub fn kernel_sum_curve(points: &Points, seed: u64) -> Result<Vec<(f64, f64)>> {
    if points.n < 3 {
        return Err(Error::Analysis(format!(
            "automatic bandwidth needs at least 3 points, got {}",
            points.n
        )));
    }
    let sub = if points.n > MAX_SUBSAMPLE {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let mut idx = sample(&mut rng, points.n, MAX_SUBSAMPLE).into_vec();
        idx.sort_unstable();
        points.select(&idx)
    } else {
        points.clone()
    };
    let n = sub.n;
    // Off-diagonal squared distances, i < j.
    let d2: Vec<f64> = (0..n)
        .into_par_iter()
        .flat_map_iter(|i| {
            let sub = &sub;
            (i + 1..n).map(move |j| Points::dist2(sub.row(i), sub.row(j)))
        })
        .collect();
    let positive = d2.iter().copied().filter(|&v| v > 0.0);
    let lo = positive.clone().fold(f64::INFINITY, f64::min);
    let hi = positive.fold(0.0, f64::max);
    if !(lo.is_finite() && hi > 0.0) {
        return Err(Error::Analysis(
            "automatic bandwidth: all points coincide, no distance scale".to_string(),
        ));
    }
    // From well below the smallest to well above the largest squared distance.
    let e_lo = lo / 16.0;
    let e_hi = hi * 16.0;
    // At most MAX_STEPS grid points: coarser steps when the distances span a huge range.
    let octaves = (e_hi / e_lo).log2();
    let steps = ((octaves * STEPS_PER_OCTAVE as f64).ceil() as usize + 1).min(MAX_STEPS);
    let step = octaves / (steps - 1) as f64;
    let curve = (0..steps)
        .map(|s| {
            let eps = e_lo * 2f64.powf(s as f64 * step);
            let off: f64 = d2.par_iter().map(|&v| (-v / eps).exp()).sum();
            (eps, n as f64 + 2.0 * off)
        })
        .collect();
    Ok(curve)
}

/// Bandwidth ε at the steepest slope of ln S(ε) against ln ε (see the module notes).
///
/// Deterministic for a given `seed` (used only to pick the subsample when `points.n > 1000`).
/// Errors: fewer than 3 points, or all points identical.
pub fn auto_epsilon(points: &Points, seed: u64) -> Result<f64> {
    let curve = kernel_sum_curve(points, seed)?;
    let mut best = (f64::NEG_INFINITY, f64::NAN);
    for w in curve.windows(2) {
        let slope = (w[1].1.ln() - w[0].1.ln()) / (w[1].0.ln() - w[0].0.ln());
        if slope > best.0 {
            best = (slope, (w[0].0 * w[1].0).sqrt());
        }
    }
    if best.1.is_finite() && best.1 > 0.0 {
        Ok(best.1)
    } else {
        Err(Error::Analysis(
            "automatic bandwidth: the kernel-sum curve has no usable slope".to_string(),
        ))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::Rng;

    #[test]
    fn slope_matches_dimension_on_a_square() {
        // S(ε) ∝ ε^{d/2} in the scaling regime, so the steepest slope is about d/2 = 1 for a
        // uniform square; boundary and finite-sample effects lower it somewhat.
        // Source: Coifman et al. (2008), Berry & Harlim (2016), from memory: generous bound.
        let mut rng = ChaCha8Rng::seed_from_u64(3);
        let data: Vec<f64> = (0..1600).map(|_| rng.gen::<f64>()).collect();
        let pts = Points::new(800, 2, data).unwrap();
        let curve = kernel_sum_curve(&pts, 1).unwrap();
        let max_slope = curve
            .windows(2)
            .map(|w| (w[1].1.ln() - w[0].1.ln()) / (w[1].0.ln() - w[0].0.ln()))
            .fold(f64::MIN, f64::max);
        assert!((0.8..1.25).contains(&max_slope), "max slope {max_slope}");
        let eps = auto_epsilon(&pts, 1).unwrap();
        assert!(eps > 1e-5 && eps < 0.5, "eps {eps}");
        assert_eq!(eps, auto_epsilon(&pts, 1).unwrap());
    }

    #[test]
    fn degenerate_inputs() {
        let same = Points::new(5, 2, vec![1.0; 10]).unwrap();
        assert!(auto_epsilon(&same, 0).is_err());
        let two = Points::new(2, 1, vec![0.0, 1.0]).unwrap();
        assert!(auto_epsilon(&two, 0).is_err());
    }
}
