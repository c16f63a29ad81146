//! Speed of the neighbour-based dimension estimators next to a reference library (release
//! build): `cargo run --release --example bench_dimension_speed -- DIR [N] [DIM]`, then
//! `/tmp/venv-dim/bin/python scripts/dimension_speed_ratio.py DIR`, which times
//! scikit-dimension on the same points and prints the ratio.
//!
//! With `BEATFOLD_CACHE_DIR` set, the reference values of the finite-sample correction are
//! kept on disk there; the first run fills it ("cold") and later runs read it ("disk cache
//! warm"); `beatfold.json` records which.
//!
//! Points: N (default 20 000) uniform in a 5-cube, linearly embedded in DIM (default 20)
//! coordinates by a seeded orthonormal map. Times, wall clock, in this order (the calibration
//! cache starts cold, so the first run pays for the reference cubes):
//! 1. TwoNN, MLE, correlation and local PCA (Fukunaga–Olsen) with the finite-sample correction
//!    and the consensus, no bootstrap (`one`);
//! 2. the same with 30 bootstrap resamples, calibration cache warm (`boot30`), and once more
//!    without resamples, warm (`one_warm`): boot30 / one_warm is the cost of the intervals.
//!
//! All N points are used by both sides (`max_points` = N). Writes DIR/points.f64,
//! DIR/subset.u32 (the suite's neighbour subset: all points, shuffled) and DIR/beatfold.json.

#[allow(dead_code)]
#[path = "common/dump.rs"]
mod dump;
use beatfold::dimension::{dimension_suite, subset_indices, Method, SuiteParams};
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
    let mut data = Vec::with_capacity(n * ambient);
    for _ in 0..n {
        let z: Vec<f64> = (0..d).map(|_| rng.gen::<f64>()).collect();
        for j in 0..ambient {
            data.push(z.iter().zip(&q).map(|(a, u)| a * u[j]).sum());
        }
    }
    Points::new(n, ambient, data).unwrap()
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let Some(dir) = args.first().map(std::path::PathBuf::from) else {
        eprintln!("usage: bench_dimension_speed DIR [N] [DIM]");
        std::process::exit(2);
    };
    let n: usize = args.get(1).and_then(|a| a.parse().ok()).unwrap_or(20_000);
    let ambient: usize = args.get(2).and_then(|a| a.parse().ok()).unwrap_or(20);
    let pts = cloud(n, ambient, 5, 2026);
    if args.iter().any(|a| a == "--knn") {
        for k in [2usize, 20, 80, 160] {
            let t = Instant::now();
            let _ = beatfold::dimension::knn_table(&pts, k).unwrap();
            println!(
                "neighbour table k = {k}: {:.2} s",
                t.elapsed().as_secs_f64()
            );
        }
        return;
    }
    let base = SuiteParams {
        methods: vec![
            Method::Twonn,
            Method::Mle,
            Method::Correlation,
            Method::LocalPca,
        ],
        bootstrap: 0,
        seed: 1,
        // Every point, as the reference library sees them.
        max_points: n,
        ..SuiteParams::default()
    };
    let time = |p: &Checked<SuiteParams>| {
        let t = Instant::now();
        let s = dimension_suite(&pts, p).unwrap();
        (t.elapsed().as_secs_f64(), s)
    };
    let cache_dir = std::env::var("BEATFOLD_CACHE_DIR").ok();
    let disk_warm = cache_dir.as_ref().is_some_and(|d| {
        std::fs::read_dir(d).is_ok_and(|mut it| {
            it.any(|e| {
                e.is_ok_and(|e| {
                    e.file_name()
                        .to_string_lossy()
                        .starts_with("dimension-ref-")
                })
            })
        })
    });
    let boot = Checked::new(SuiteParams {
        bootstrap: 30,
        ..base.clone()
    })
    .expect("valid parameters");
    let base = Checked::new(base).expect("valid parameters");
    let (one, s) = time(&base);
    let (boot30, sb) = time(&boot);
    let (one_warm, _) = time(&base);
    println!(
        "{n} points in {ambient} dimensions (5-cube); neighbour subset {}",
        s.n_used
    );
    let state = if disk_warm {
        "disk cache warm"
    } else {
        "cold cache"
    };
    println!("four estimators + correction + consensus, no bootstrap, {state}: {one:.2} s");
    println!("same with 30 bootstrap resamples, warm cache: {boot30:.2} s");
    println!("same without resamples, warm cache: {one_warm:.2} s");
    println!(
        "bootstrap cost ratio (30 resamples / none): {:.2} (target < 2)",
        boot30 / one_warm
    );
    for e in &sb.estimates {
        println!(
            "  {:<12} raw {:.2} corrected {:.2} [{:.2}, {:.2}]",
            e.method.name(),
            e.d,
            e.corrected_d,
            e.corrected_ci95[0],
            e.corrected_ci95[1]
        );
    }
    if let Some(c) = &sb.consensus {
        println!("  consensus: {}", c.sentence());
    }
    dump::write_points(&dir, &pts).expect("write points");
    let subset = subset_indices(pts.n, base.max_points, base.seed);
    let bytes: Vec<u8> = subset
        .iter()
        .flat_map(|&i| (i as u32).to_le_bytes())
        .collect();
    std::fs::write(dir.join("subset.u32"), bytes).expect("write subset");
    let meta = serde_json::json!({
        "n": pts.n, "dim": pts.dim, "subset_n": subset.len(),
        "seconds_one_cold": one, "disk_cache_warm": disk_warm, "seconds_boot30_warm": boot30, "seconds_one_warm": one_warm,
        "estimates": sb.estimates.iter().map(|e| (e.method.name().to_string(), e.d))
            .collect::<std::collections::BTreeMap<_, _>>(),
    });
    std::fs::write(dir.join("beatfold.json"), format!("{meta:#}\n")).expect("write json");
}
