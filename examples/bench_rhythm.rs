//! Release-build timing of the rhythm stage on a day of beats (the rhythm issue's target:
//! windowed recurrence measures over 100 000 beats, window 256, step 64, in under 10 s).
//!
//! Usage: `cargo run --release --example bench_rhythm -- [BEATS]` (default 100 000). The beat
//! trajectory is a seeded noisy loop in 3 diffusion-like coordinates (one point per beat) and the
//! RR series a seeded random walk; times are best of three.

use beatfold::params::Checked;
use beatfold::points::Points;
use beatfold::rhythm::recurrence::{rqa_timeline, RqaParams};
use beatfold::rhythm::windowed::{windowed_variability, Span};
use rand::{Rng, SeedableRng};

#[path = "common/timing.rs"]
mod timing;
use timing::best_of_3;

fn main() -> anyhow::Result<()> {
    let n: usize = std::env::args()
        .nth(1)
        .map(|s| s.parse())
        .transpose()?
        .unwrap_or(100_000);
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(3);
    let mut data = Vec::with_capacity(3 * n);
    for i in 0..n {
        let th = 0.37 * i as f64;
        data.extend([
            th.cos() + 0.05 * rng.gen::<f64>(),
            th.sin() + 0.05 * rng.gen::<f64>(),
            0.3 * (2.0 * th).sin() + 0.05 * rng.gen::<f64>(),
        ]);
    }
    let pts = Points { n, dim: 3, data };
    let p = RqaParams::default();
    let w = best_of_3(
        &format!(
            "RQA timeline, {n} beats, window {} step {}",
            p.window, p.step
        ),
        || rqa_timeline(&pts, &Checked::new(p.clone())?),
    )?;
    println!(
        "{} windows; first DET {:.3}, LAM {:.3}; {} threads",
        w.len(),
        w[0].rqa.det,
        w[0].rqa.lam,
        rayon::current_num_threads()
    );
    let mut rr = Vec::with_capacity(n);
    let mut t = Vec::with_capacity(n);
    let (mut x, mut acc) = (0.8f64, 0.0f64);
    for _ in 0..n {
        x = (x + 0.02 * (rng.gen::<f64>() - 0.5)).clamp(0.5, 1.2);
        acc += x;
        rr.push(x);
        t.push(acc);
    }
    let v = best_of_3("windowed variability, 5 min windows, 2.5 min step", || {
        windowed_variability(&rr, &t, &[], Span::Seconds(300.0), Span::Seconds(150.0))
    })?;
    println!("{} variability windows", v.len());
    Ok(())
}
