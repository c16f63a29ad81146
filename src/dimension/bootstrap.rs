//! Percentile bootstrap intervals (Efron & Tibshirani 1993, ch. 13).
//!
//! In: a seeded generator, the number of resampled units, the number of resamples and a
//! statistic of a resample (given as the list of drawn unit indices). Out: the 2.5 % and 97.5 %
//! percentiles of the finite replicate values (linear interpolation between order statistics).
//! Which units are resampled is the caller's choice and is documented with each estimator.

use rand::Rng;
use rand_chacha::ChaCha8Rng;

/// Percentile 95 % interval of `stat` over `resamples` draws of `n_units` indices with
/// replacement. `[NaN, NaN]` when `resamples` is 0, `n_units` is 0 or no replicate is finite.
pub(crate) fn percentile_ci95(
    rng: &mut ChaCha8Rng,
    n_units: usize,
    resamples: usize,
    mut stat: impl FnMut(&[usize]) -> Option<f64>,
) -> [f64; 2] {
    if resamples == 0 || n_units == 0 {
        return [f64::NAN, f64::NAN];
    }
    let mut draw = vec![0usize; n_units];
    let mut reps = Vec::with_capacity(resamples);
    for _ in 0..resamples {
        draw.iter_mut().for_each(|d| *d = rng.gen_range(0..n_units));
        if let Some(v) = stat(&draw).filter(|v| v.is_finite()) {
            reps.push(v);
        }
    }
    if reps.is_empty() {
        return [f64::NAN, f64::NAN];
    }
    reps.sort_by(f64::total_cmp);
    [quantile_sorted(&reps, 0.025), quantile_sorted(&reps, 0.975)]
}

/// Quantile `q` of ascending finite values (linear interpolation, the "type 7" rule of
/// Hyndman & Fan 1996). `sorted` must not be empty.
pub(crate) fn quantile_sorted(sorted: &[f64], q: f64) -> f64 {
    let n = sorted.len();
    if n == 1 {
        return sorted[0];
    }
    let h = q.clamp(0.0, 1.0) * (n - 1) as f64;
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(n - 1);
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;

    #[test]
    fn quantiles_and_mean_interval() {
        assert_eq!(quantile_sorted(&[1.0, 2.0, 3.0, 4.0, 5.0], 0.5), 3.0);
        assert!((quantile_sorted(&[0.0, 10.0], 0.025) - 0.25).abs() < 1e-12);
        // Mean of 400 standard-uniform values: SE = √(1/12)/20 = 0.0144; the 95 % interval is
        // about ±1.96 SE = ±0.028 (common practice: normal approximation of the mean).
        let mut rng = ChaCha8Rng::seed_from_u64(3);
        let x: Vec<f64> = (0..400).map(|_| rng.gen::<f64>()).collect();
        let mean = x.iter().sum::<f64>() / 400.0;
        let ci = percentile_ci95(&mut rng, 400, 400, |d| {
            Some(d.iter().map(|&i| x[i]).sum::<f64>() / d.len() as f64)
        });
        assert!(ci[0] < mean && mean < ci[1], "{ci:?} {mean}");
        let half = (ci[1] - ci[0]) / 2.0;
        assert!(half > 0.02 && half < 0.036, "half width {half}");
        assert!(percentile_ci95(&mut rng, 400, 0, |_| Some(1.0))[0].is_nan());
    }
}
