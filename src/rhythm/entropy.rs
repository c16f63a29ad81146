//! Irregularity statistics of a series: sample entropy (Richman & Moorman 2000), Shannon entropy
//! of the RR histogram and the turning-point ratio (as used by Dash et al. 2009), and Poincaré
//! SD1/SD2 (Brennan, Palaniswami & Kamen 2001).

/// Sample entropy SampEn(m, r) of Richman & Moorman (2000), Am J Physiol Heart 278:H2039:
/// −ln(A/B), where B counts pairs of templates of length `m` within Chebyshev distance `r` and A
/// the pairs that still match at length m + 1; the same N − m templates are used for both
/// lengths and self-matches are excluded. Returns NaN when B or A is zero (undefined), or when
/// the series is shorter than m + 2. Time O(N²), memory O(1).
pub fn sample_entropy(x: &[f64], m: usize, r: f64) -> f64 {
    let n = x.len();
    if m == 0 || n < m + 2 || !(r >= 0.0) {
        return f64::NAN;
    }
    let nt = n - m;
    let (mut b, mut a) = (0u64, 0u64);
    for i in 0..nt {
        for j in (i + 1)..nt {
            let mut ok = true;
            for k in 0..m {
                if (x[i + k] - x[j + k]).abs() > r {
                    ok = false;
                    break;
                }
            }
            if ok {
                b += 1;
                if (x[i + m] - x[j + m]).abs() <= r {
                    a += 1;
                }
            }
        }
    }
    if a == 0 || b == 0 {
        return f64::NAN;
    }
    -((a as f64) / (b as f64)).ln()
}

/// Standard deviation with n − 1 in the denominator (NaN for fewer than two values).
pub fn std_dev(x: &[f64]) -> f64 {
    let n = x.len();
    if n < 2 {
        return f64::NAN;
    }
    let m = x.iter().sum::<f64>() / n as f64;
    (x.iter().map(|v| (v - m).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt()
}

/// Shannon entropy of the values' histogram in `bins` equal-width bins between their minimum and
/// maximum, divided by ln(bins) so that it lies in 0..1 (Dash et al. 2009 use 16 bins). A
/// constant series gives 0.
pub fn shannon_entropy(x: &[f64], bins: usize) -> f64 {
    if x.is_empty() || bins < 2 {
        return f64::NAN;
    }
    let lo = x.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = x.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !(hi > lo) {
        return 0.0;
    }
    let mut counts = vec![0usize; bins];
    for &v in x {
        let b = (((v - lo) / (hi - lo)) * bins as f64).floor() as usize;
        counts[b.min(bins - 1)] += 1;
    }
    let n = x.len() as f64;
    let h: f64 = counts
        .iter()
        .filter(|&&c| c > 0)
        .map(|&c| {
            let p = c as f64 / n;
            -p * p.ln()
        })
        .sum();
    h / (bins as f64).ln()
}

/// Turning-point ratio: the number of strict local extrema among the inner points divided by
/// N − 2. For an i.i.d. series its expectation is 2/3 (the expected count is (2N − 4)/3;
/// Kendall's randomness test).
pub fn turning_point_ratio(x: &[f64]) -> f64 {
    if x.len() < 3 {
        return f64::NAN;
    }
    let tp = x
        .windows(3)
        .filter(|w| (w[1] > w[0] && w[1] > w[2]) || (w[1] < w[0] && w[1] < w[2]))
        .count();
    tp as f64 / (x.len() - 2) as f64
}

/// Poincaré descriptors (SD1, SD2) of an RR series, in the series' unit, after Brennan,
/// Palaniswami & Kamen (2001), IEEE TBME 48:1342: SD1² = ½·Var(ΔRR), SD2² = 2·Var(RR) −
/// ½·Var(ΔRR), with sample variances (n − 1).
pub fn poincare(rr: &[f64]) -> (f64, f64) {
    if rr.len() < 3 {
        return (f64::NAN, f64::NAN);
    }
    let d: Vec<f64> = rr.windows(2).map(|w| w[1] - w[0]).collect();
    let var_d = std_dev(&d).powi(2);
    let var = std_dev(rr).powi(2);
    let sd1 = (0.5 * var_d).sqrt();
    let sd2 = (2.0 * var - 0.5 * var_d).max(0.0).sqrt();
    (sd1, sd2)
}

/// Poincaré SD1 and SD2 in milliseconds and the sample entropy (m = 2, r = 0.2·SD) of an NN
/// series in seconds; the entropy uses at most the first 5000 intervals, since its cost grows
/// with the square of the length.
pub fn nn_descriptors(nn_s: &[f64]) -> (f64, f64, f64) {
    let (sd1, sd2) = poincare(nn_s);
    let head = &nn_s[..nn_s.len().min(5000)];
    let sampen = sample_entropy(head, 2, 0.2 * std_dev(head));
    (sd1 * 1000.0, sd2 * 1000.0, sampen)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};

    #[test]
    fn sample_entropy_of_the_worked_example() {
        // Source: docs/references.md §3 [C], counted by hand under the Richman & Moorman (2000)
        // definition: x below, m = 2, r = 0.5 gives B = 9, A = 7, SampEn = ln(9/7) = 0.251314.
        let x = [1., 2., 3., 4., 5., 1., 2., 3., 4., 6., 1., 2., 3., 4., 5.];
        assert!((sample_entropy(&x, 2, 0.5) - (9.0f64 / 7.0).ln()).abs() < 1e-12);
    }

    #[test]
    fn sample_entropy_of_a_periodic_sequence_is_zero() {
        // Source: Richman & Moorman (2000): every template that matches at m also matches at
        // m + 1 in a strictly periodic sequence, so A = B and SampEn = 0.
        let x: Vec<f64> = (0..10).map(|i| (i % 2 + 1) as f64).collect();
        assert_eq!(sample_entropy(&x, 2, 0.2), 0.0);
    }

    #[test]
    fn sample_entropy_of_white_noise() {
        // Source: docs/references.md §3 [C]: for i.i.d. Gaussian data, m = 2, r = 0.2·SD, SampEn
        // tends to −ln P(|X−Y| ≤ r) = −ln erf(0.1) = 2.18513 as N grows. With N = 3000 the
        // match count A is about 3000²/2 · 0.1125³ ≈ 6400, so the relative error of A/B is
        // about 1/√6400 ≈ 1.3 %; allow ±0.08 (six such errors).
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(5);
        let nd = Normal::new(0.0, 1.0).unwrap();
        let x: Vec<f64> = (0..3000).map(|_| nd.sample(&mut rng)).collect();
        let r = 0.2 * std_dev(&x);
        let s = sample_entropy(&x, 2, r);
        assert!((s - 2.18513).abs() < 0.08, "SampEn {s}");
    }

    #[test]
    fn shannon_and_turning_points() {
        // A constant series has zero entropy; uniform spread over 16 bins has entropy 1
        // (definition, normalised by ln 16).
        assert_eq!(shannon_entropy(&[0.8; 20], 16), 0.0);
        let u: Vec<f64> = (0..160).map(|i| (i / 10) as f64).collect();
        assert!((shannon_entropy(&u, 16) - 1.0).abs() < 1e-12);
        // Alternating series: every inner point is a turning point; a monotone one has none.
        assert_eq!(turning_point_ratio(&[1., 2., 1., 2., 1., 2.]), 1.0);
        assert_eq!(turning_point_ratio(&[1., 2., 3., 4.]), 0.0);
        // Source: Kendall's turning-point test: for i.i.d. data the expected count is
        // (2N − 4)/3 with variance (16N − 29)/90 (docs/references.md §4 [C]). N = 5000: SD of the
        // ratio ≈ √(16·5000/90)/4998 ≈ 0.006; allow ±0.03.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(1);
        let nd = Normal::new(0.0, 1.0).unwrap();
        let x: Vec<f64> = (0..5000).map(|_| nd.sample(&mut rng)).collect();
        assert!((turning_point_ratio(&x) - 2.0 / 3.0).abs() < 0.03);
    }

    #[test]
    fn poincare_identity() {
        // Source: Brennan, Palaniswami & Kamen (2001): SD1² = ½·SDSD², where SDSD is the SD of
        // successive differences; and SD1² + SD2² = 2·SDNN².
        let rr = [0.80, 0.81, 0.79, 0.82, 0.80, 0.83, 0.78, 0.805];
        let (sd1, sd2) = poincare(&rr);
        let d: Vec<f64> = rr.windows(2).map(|w| w[1] - w[0]).collect();
        let sdsd = std_dev(&d);
        assert!((sd1 * sd1 - 0.5 * sdsd * sdsd).abs() < 1e-15);
        assert!((sd1 * sd1 + sd2 * sd2 - 2.0 * std_dev(&rr).powi(2)).abs() < 1e-15);
    }
}
