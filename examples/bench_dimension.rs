//! Benchmark of the dimension suite (release build): `cargo run --release --example
//! bench_dimension [N] [DIM]`.
//!
//! Points: a 5-dimensional uniform cube linearly embedded in 50 dimensions (seeded random
//! orthonormal map) plus isotropic noise of SD 0.001, N = 100 000 by default. Times (wall clock)
//! 1. the k-means quantization ladder k = 2, 4, …, 1024 on held-out points (2 restarts,
//!    16 training points per centre, 30 % held out), and
//! 2. all five estimates with bootstrap intervals (30 resamples) via `dimension_suite`, using the
//!    same k-means settings and 5000 points for the neighbour-based estimators.
//!
//! Targets (DESIGN.md): ladder < 5 s; all five < 10 s.
//!
//! With `--dump DIR`, also writes the points for a reference library to time on the same
//! numbers (`scripts/time_skdim_same_points.py DIR`): `points.f64` (row-major little-endian
//! float64, N × DIM), `subset.u32` (the indices of the suite's neighbour-estimator subset,
//! little-endian uint32) and `beatfold.json` (shape, our estimates and seconds per estimator).

#[path = "common/dump.rs"]
mod dump;
use beatfold::dimension::{dimension_suite, kmeans_scaling, KmeansScalingParams, SuiteParams};
use beatfold::params::Checked;
use beatfold::points::Points;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};
use std::time::Instant;

fn cloud(n: usize, ambient: usize, d: usize, seed: u64) -> Points {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let normal = Normal::new(0.0, 1.0).unwrap();
    let mut q: Vec<Vec<f64>> = Vec::new();
    while q.len() < d {
        let mut v: Vec<f64> = (0..ambient).map(|_| normal.sample(&mut rng)).collect();
        for u in &q {
            let dot: f64 = v.iter().zip(u).map(|(a, b)| a * b).sum();
            v.iter_mut().zip(u).for_each(|(a, b)| *a -= dot * b);
        }
        let norm = v.iter().map(|a| a * a).sum::<f64>().sqrt();
        q.push(v.into_iter().map(|a| a / norm).collect());
    }
    let noise = Normal::new(0.0, 0.001).unwrap();
    let mut data = Vec::with_capacity(n * ambient);
    for _ in 0..n {
        let z: Vec<f64> = (0..d).map(|_| rng.gen::<f64>()).collect();
        for j in 0..ambient {
            let x: f64 = z.iter().zip(&q).map(|(a, u)| a * u[j]).sum();
            data.push(x + noise.sample(&mut rng));
        }
    }
    Points::new(n, ambient, data).unwrap()
}

fn main() {
    let mut args: Vec<String> = std::env::args().skip(1).collect();
    let dump = dump::take_dump_option(&mut args);
    let n: usize = args.first().and_then(|a| a.parse().ok()).unwrap_or(100_000);
    let ambient: usize = args.get(1).and_then(|a| a.parse().ok()).unwrap_or(50);
    let t = Instant::now();
    let pts = cloud(n, ambient, 5, 2026);
    println!(
        "points: {n} in {ambient} dimensions (5-d cube + noise), made in {:.2} s",
        t.elapsed().as_secs_f64()
    );
    let kp = KmeansScalingParams {
        ks: (1..=10).map(|e| 1usize << e).collect(),
        restarts: 2,
        max_iter: 100,
        holdout_fraction: 0.3,
        seed: 1,
        max_points: n,
        train_per_centre: Some(16),
        finite_sample_correction: true,
    };
    let t = Instant::now();
    let c = kmeans_scaling(&pts, &Checked::new(kp.clone()).expect("valid parameters")).unwrap();
    let ladder_s = t.elapsed().as_secs_f64();
    println!(
        "k-means ladder k = 2..1024: {ladder_s:.2} s (target < 5 s); plateau d {:.2}",
        c.d
    );
    for (k, d) in c.ks.iter().zip(&c.distortion) {
        println!("  k {k:>5}  held-out D {d:.5e}");
    }
    let curve: Vec<String> = c
        .curve
        .iter()
        .map(|q| format!("{:.2}@{:.4}", q.d, q.scale))
        .collect();
    println!("  local d@scale: {}", curve.join(" "));

    let sp = SuiteParams {
        bootstrap: 30,
        seed: 1,
        kmeans: kp,
        ..SuiteParams::default()
    };
    let t = Instant::now();
    let s = dimension_suite(&pts, &Checked::new(sp.clone()).expect("valid parameters")).unwrap();
    let suite_s = t.elapsed().as_secs_f64();
    println!("all five estimates with 30 bootstrap resamples: {suite_s:.2} s (target < 10 s)");
    for e in &s.estimates {
        println!(
            "  {:<12} d {:6.2}  95 % [{:.2}, {:.2}]",
            e.method.name(),
            e.d,
            e.ci95[0],
            e.ci95[1]
        );
    }
    if !s.failures.is_empty() {
        println!("  failures: {:?}", s.failures);
    }
    // Each estimator alone, for the table in docs/performance.md.
    let mut alone = Vec::new();
    for m in beatfold::dimension::Method::ALL {
        let p = SuiteParams {
            methods: vec![m],
            ..sp.clone()
        };
        let t = Instant::now();
        let _ = dimension_suite(&pts, &Checked::new(p.clone()).expect("valid parameters")).unwrap();
        let secs = t.elapsed().as_secs_f64();
        println!("  {:<12} alone: {secs:.2} s", m.name());
        alone.push((m, secs));
    }
    if let Some(dir) = dump {
        write_dump(&dir, &pts, &sp, &s, &alone).expect("write the dump folder");
        println!("points written to {}", dir.display());
    }
}

/// The `--dump` files (see the module notes).
fn write_dump(
    dir: &std::path::Path,
    pts: &Points,
    sp: &SuiteParams,
    s: &beatfold::dimension::DimensionSuite,
    alone: &[(beatfold::dimension::Method, f64)],
) -> std::io::Result<()> {
    dump::write_points(dir, pts)?;
    let subset = beatfold::dimension::subset_indices(pts.n, sp.max_points, sp.seed);
    let bytes: Vec<u8> = subset
        .iter()
        .flat_map(|&i| (i as u32).to_le_bytes())
        .collect();
    std::fs::write(dir.join("subset.u32"), bytes)?;
    let estimates: serde_json::Map<String, serde_json::Value> = s
        .estimates
        .iter()
        .map(|e| (e.method.name().to_string(), serde_json::json!(e.d)))
        .collect();
    let seconds: serde_json::Map<String, serde_json::Value> = alone
        .iter()
        .map(|(m, t)| (m.name().to_string(), serde_json::json!(t)))
        .collect();
    let meta = serde_json::json!({
        "n": pts.n,
        "dim": pts.dim,
        "subset_n": subset.len(),
        "estimates": estimates,
        "seconds_alone": seconds,
    });
    std::fs::write(dir.join("beatfold.json"), format!("{meta:#}\n"))
}
