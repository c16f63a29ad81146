//! **Kurtosis signal-quality index (kSQI)** of a lead, one number per record, used by the
//! readability rule of the record verdict ([`super::verdict::VerdictParams::min_kurtosis_plausible`]).
//!
//! In: the conditioned samples of one lead. Out: the (Pearson, not excess) kurtosis of its
//! finite samples, E[(x − μ)⁴] / σ⁴ (NaN when it cannot be computed).
//!
//! Method. A clean ECG is a train of sharp QRS complexes over a quiet baseline: its amplitude
//! distribution is peaked with heavy tails and its kurtosis is high; Gaussian noise has
//! kurtosis 3, and muscle or motion noise that buries the QRS pulls an ECG towards it. Li, Mark
//! & Clifford (2008, Physiol. Meas. 29:15) and Clifford, Behar, Li & Rezek (2012, Physiol. Meas.
//! 33:1419) use it as kSQI, with a clean ECG above 5 (`from memory`). Here it decides whether a
//! record whose two beat detectors disagree may still be read (see
//! [`super::verdict::unreadable_reason`]). Research use only.

/// Kurtosis E[(x − μ)⁴] / σ⁴ of the finite values of `x`. NaN with fewer than 4 finite values
/// or zero variance (a flat line). Never panics.
pub fn kurtosis(x: &[f64]) -> f64 {
    let v: Vec<f64> = x.iter().copied().filter(|v| v.is_finite()).collect();
    if v.len() < 4 {
        return f64::NAN;
    }
    let n = v.len() as f64;
    let mean = v.iter().sum::<f64>() / n;
    let (mut m2, mut m4) = (0.0, 0.0);
    for d in v.iter().map(|x| x - mean) {
        let d2 = d * d;
        m2 += d2;
        m4 += d2 * d2;
    }
    m2 /= n;
    m4 /= n;
    if !(m2 > 0.0) {
        return f64::NAN;
    }
    m4 / (m2 * m2)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kurtosis_of_known_distributions() {
        // Two values ±1 in equal numbers: kurtosis exactly 1.
        let two: Vec<f64> = (0..1000)
            .map(|i| if i % 2 == 0 { 1.0 } else { -1.0 })
            .collect();
        assert!((kurtosis(&two) - 1.0).abs() < 1e-12);
        // Uniform on an even grid: 9/5 in the limit (1.8).
        let uni: Vec<f64> = (0..100_000).map(|i| i as f64 / 100_000.0).collect();
        assert!((kurtosis(&uni) - 1.8).abs() < 1e-3);
        // Gaussian (Box-Muller from a fixed generator): 3.
        use rand::{Rng, SeedableRng};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(3);
        let g: Vec<f64> = (0..200_000)
            .map(|_| {
                let (u, v): (f64, f64) = (rng.gen_range(1e-12..1.0), rng.gen());
                (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
            })
            .collect();
        assert!((kurtosis(&g) - 3.0).abs() < 0.05, "{}", kurtosis(&g));
        // A pulse train (one sample in 100 at 1): peaked, far above 5.
        let pulses: Vec<f64> = (0..10_000).map(|i| (i % 100 == 0) as u8 as f64).collect();
        assert!(kurtosis(&pulses) > 50.0);
    }

    #[test]
    fn flat_short_and_missing_give_nan() {
        assert!(kurtosis(&[]).is_nan());
        assert!(kurtosis(&[1.0, 2.0, 3.0]).is_nan());
        assert!(kurtosis(&[2.0; 100]).is_nan());
        assert!(kurtosis(&[f64::NAN; 100]).is_nan());
        let mut x: Vec<f64> = (0..1000).map(|i| (i % 2) as f64).collect();
        x[5] = f64::NAN;
        assert!(kurtosis(&x).is_finite());
    }
}
