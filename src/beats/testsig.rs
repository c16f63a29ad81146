//! Test signals for the detectors (test builds only): simple pulse shapes at known positions.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};

/// Unit-height Gaussian bump centred at `centre` with width `sigma` (seconds).
pub(crate) fn gauss(t: f64, centre: f64, sigma: f64) -> f64 {
    let u = (t - centre) / sigma;
    if u.abs() > 8.0 {
        0.0
    } else {
        (-0.5 * u * u).exp()
    }
}

/// A test signal built from simple pulse shapes: per beat a small P wave, a narrow QRS
/// (Gaussian R of height 1 mV, sigma 10 ms, with small Q and S dips) and a broad T wave,
/// RR jittered ±3 % around 60/bpm, plus 0.25 Hz baseline wander, 50 Hz hum and white noise.
/// Returns the signal and the R-peak samples.
pub(crate) fn synth(
    bpm: f64,
    n_beats: usize,
    fs: f64,
    noise_mv: f64,
    seed: u64,
) -> (Vec<f64>, Vec<usize>) {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let rr0 = 60.0 / bpm;
    let mut times = Vec::with_capacity(n_beats);
    let mut t = 1.0;
    for _ in 0..n_beats {
        times.push(t);
        t += rr0 * (1.0 + rng.gen_range(-0.03..0.03));
    }
    let dur = t + 0.5;
    let n = (dur * fs) as usize;
    let mut x = vec![0.0; n];
    let qt = 0.25 * rr0.sqrt();
    for &tb in &times {
        let lo = ((tb - 0.4) * fs).max(0.0) as usize;
        let hi = (((tb + 0.6) * fs) as usize).min(n);
        for (i, v) in x.iter_mut().enumerate().take(hi).skip(lo) {
            let ti = i as f64 / fs;
            *v += 0.1 * gauss(ti, tb - 0.16 * rr0.sqrt(), 0.025)
                - 0.15 * gauss(ti, tb - 0.025, 0.008)
                + gauss(ti, tb, 0.010)
                - 0.2 * gauss(ti, tb + 0.025, 0.008)
                + 0.3 * gauss(ti, tb + qt, 0.045);
        }
    }
    let noise = Normal::new(0.0, noise_mv).unwrap();
    for (i, v) in x.iter_mut().enumerate() {
        let ti = i as f64 / fs;
        *v += 0.3 * (2.0 * std::f64::consts::PI * 0.25 * ti).sin()
            + 0.05 * (2.0 * std::f64::consts::PI * 50.0 * ti).sin()
            + noise.sample(&mut rng);
    }
    let r = times.iter().map(|&tb| (tb * fs).round() as usize).collect();
    (x, r)
}
