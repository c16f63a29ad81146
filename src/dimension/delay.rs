//! Delay embedding of a scalar series and the choice of its delay.
//!
//! In: a scalar series (RR intervals or a conditioned signal), an embedding dimension and a
//! delay. Out: [`Points`] whose row t is (x_t, x_{t+τ}, …, x_{t+(m−1)τ}) — the delay
//! reconstruction of Takens (1981). The default delay is the first minimum of the average
//! mutual information between x_t and x_{t+τ} (Fraser & Swinney 1986), estimated here from a
//! joint histogram with equal-width bins over the series' range (natural logarithms, nats).

use crate::error::{Error, Result};
use crate::points::Points;

/// Average mutual information I(τ) between x_t and x_{t+τ}, nats, for τ = 0..=`max_lag`, from
/// a `bins × bins` equal-width joint histogram (Fraser & Swinney 1986; histogram estimate).
///
/// Errors: `bins` outside 2..=1024; `max_lag` not below the series length − 1; non-finite
/// values; a constant series.
pub fn average_mutual_information(x: &[f64], max_lag: usize, bins: usize) -> Result<Vec<f64>> {
    if !(2..=1024).contains(&bins) {
        return Err(Error::param(
            "bins",
            format!("{bins} histogram bins; allowed 2 to 1024"),
        ));
    }
    if x.len() < 4 || max_lag + 2 > x.len() {
        return Err(Error::param(
            "max_lag",
            format!(
                "{max_lag} samples for a series of {} values; allowed 0 to length − 2",
                x.len()
            ),
        ));
    }
    if x.iter().any(|v| !v.is_finite()) {
        return Err(Error::Analysis(
            "mutual information: the series has non-finite values".to_string(),
        ));
    }
    let (lo, hi) = x
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    if hi <= lo {
        return Err(Error::Analysis(
            "mutual information: the series is constant".to_string(),
        ));
    }
    let w = (hi - lo) / bins as f64;
    let bin: Vec<usize> = x
        .iter()
        .map(|&v| (((v - lo) / w) as usize).min(bins - 1))
        .collect();
    let mut out = Vec::with_capacity(max_lag + 1);
    let mut joint = vec![0usize; bins * bins];
    let mut pa = vec![0usize; bins];
    let mut pb = vec![0usize; bins];
    for lag in 0..=max_lag {
        joint.iter_mut().for_each(|c| *c = 0);
        pa.iter_mut().for_each(|c| *c = 0);
        pb.iter_mut().for_each(|c| *c = 0);
        let m = x.len() - lag;
        for (a, b) in bin[..m].iter().zip(&bin[lag..]) {
            joint[a * bins + b] += 1;
            pa[*a] += 1;
            pb[*b] += 1;
        }
        let mf = m as f64;
        let mut info = 0.0;
        for a in 0..bins {
            for b in 0..bins {
                let c = joint[a * bins + b];
                if c > 0 {
                    let pab = c as f64 / mf;
                    info += pab * (pab * mf * mf / (pa[a] as f64 * pb[b] as f64)).ln();
                }
            }
        }
        out.push(info);
    }
    Ok(out)
}

/// The first local minimum of an AMI curve: the smallest τ ≥ 1 with I(τ) < I(τ − 1) and
/// I(τ) ≤ I(τ + 1). None when the curve has no interior minimum.
pub fn first_ami_minimum(ami: &[f64]) -> Option<usize> {
    (1..ami.len().saturating_sub(1)).find(|&t| ami[t] < ami[t - 1] && ami[t] <= ami[t + 1])
}

/// Delay by the first AMI minimum over lags 1..=`max_lag` (Fraser & Swinney 1986); when the
/// curve has no interior minimum, the lag of its smallest value.
///
/// Errors: as [`average_mutual_information`]; `max_lag` = 0.
pub fn ami_delay(x: &[f64], max_lag: usize, bins: usize) -> Result<usize> {
    if max_lag == 0 {
        return Err(Error::param("max_lag", "0 samples; must be at least 1"));
    }
    let ami = average_mutual_information(x, max_lag, bins)?;
    Ok(first_ami_minimum(&ami).unwrap_or_else(|| {
        (1..ami.len())
            .min_by(|&a, &b| ami[a].total_cmp(&ami[b]))
            .unwrap_or(1)
    }))
}

/// Delay embedding (Takens 1981): row t = (x_t, x_{t+τ}, …, x_{t+(m−1)τ}) for
/// t = 0..len − (m−1)τ.
///
/// Errors: `embed_dim` outside 1..=100, `delay` = 0, fewer than 2 rows, non-finite values.
pub fn delay_embed(x: &[f64], embed_dim: usize, delay: usize) -> Result<Points> {
    if !(1..=100).contains(&embed_dim) {
        return Err(Error::param(
            "embed_dim",
            format!("{embed_dim} coordinates; allowed 1 to 100"),
        ));
    }
    if delay == 0 {
        return Err(Error::param("delay", "0 samples; must be at least 1"));
    }
    let span = (embed_dim - 1).saturating_mul(delay);
    if x.len() < span + 2 {
        return Err(Error::Analysis(format!(
            "delay embedding in {embed_dim} dimensions with delay {delay} needs more than {} \
             values, got {}",
            span + 1,
            x.len()
        )));
    }
    let rows = x.len() - span;
    let mut data = Vec::with_capacity(rows * embed_dim);
    for t in 0..rows {
        data.extend((0..embed_dim).map(|j| x[t + j * delay]));
    }
    Points::new(rows, embed_dim, data)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;
    use rand_distr::{Distribution, Normal};
    use std::f64::consts::PI;

    #[test]
    fn sine_delay_is_a_quarter_period() {
        // x_t = sin(2πt/P) + noise (σ = 0.3, seeded) with P = 40 samples. I(τ) is symmetric
        // about P/4 on [0, P/2] (x_{t+P/2−τ} = −x_{t−τ} up to noise, and a sign change keeps
        // the information), largest at 0 and P/2, so its first minimum is the quarter period,
        // τ = 10 (exact arithmetic; the quarter-period rule for a sinusoid is common practice).
        // The noise smooths the histogram estimate (a noiseless sine gives a flat stretch).
        let mut rng = ChaCha8Rng::seed_from_u64(12);
        let noise = Normal::new(0.0, 0.3).unwrap();
        let x: Vec<f64> = (0..4000)
            .map(|t| (2.0 * PI * t as f64 / 40.0).sin() + noise.sample(&mut rng))
            .collect();
        let ami = average_mutual_information(&x, 30, 16).unwrap();
        assert!(ami[0] > ami[5] && ami[20] > ami[10]);
        let tau = ami_delay(&x, 30, 16).unwrap();
        assert!((9..=11).contains(&tau), "delay {tau}");
        let pts = delay_embed(&x, 3, tau).unwrap();
        assert_eq!(pts.n, 4000 - 2 * tau);
        assert_eq!(pts.row(1), &[x[1], x[1 + tau], x[1 + 2 * tau]]);
        assert!(delay_embed(&x, 0, 1).is_err());
        assert!(delay_embed(&x, 2, 0).is_err());
        assert!(delay_embed(&x[..3], 3, 2).is_err());
        assert!(average_mutual_information(&[1.0; 10], 2, 4).is_err());
        assert!(average_mutual_information(&x, 30, 1).is_err());
        assert_eq!(first_ami_minimum(&[3.0, 2.0, 1.0]), None);
    }
}
