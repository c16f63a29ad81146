//! The dimension suite on seeded manifolds of known intrinsic dimension.

use beatfold::dimension::{
    dimension_suite, kmeans_scaling, KmeansScalingParams, Method, SuiteParams,
};
use beatfold::params::Checked;
use beatfold::points::Points;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};
use std::f64::consts::PI;

/// Rows of `z` (low-dimensional) mapped into R^ambient by a seeded random orthonormal map
/// (Gram–Schmidt on Gaussian vectors): a linear, distance-preserving embedding.
fn embed(z: &[Vec<f64>], ambient: usize, seed: u64) -> Points {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let normal = Normal::new(0.0, 1.0).unwrap();
    let d = z[0].len();
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
    let data: Vec<f64> = z
        .iter()
        .flat_map(|r| {
            let q = &q;
            (0..ambient).map(move |j| r.iter().zip(q).map(|(x, u)| x * u[j]).sum::<f64>())
        })
        .collect();
    Points::new(z.len(), ambient, data).unwrap()
}

fn cube(n: usize, d: usize, rng: &mut ChaCha8Rng) -> Vec<Vec<f64>> {
    (0..n)
        .map(|_| (0..d).map(|_| rng.gen::<f64>()).collect())
        .collect()
}

/// Uniform on the unit sphere S^d in R^(d+1) (normalised Gaussian vectors).
fn sphere(n: usize, d: usize, rng: &mut ChaCha8Rng) -> Vec<Vec<f64>> {
    let normal = Normal::new(0.0, 1.0).unwrap();
    (0..n)
        .map(|_| {
            let v: Vec<f64> = (0..=d).map(|_| normal.sample(rng)).collect();
            let r = v.iter().map(|a| a * a).sum::<f64>().sqrt();
            v.into_iter().map(|a| a / r).collect()
        })
        .collect()
}

fn swiss_roll(n: usize, rng: &mut ChaCha8Rng) -> Vec<Vec<f64>> {
    (0..n)
        .map(|_| {
            let t = 1.5 * PI * (1.0 + 2.0 * rng.gen::<f64>());
            vec![t * t.cos(), 21.0 * rng.gen::<f64>(), t * t.sin()]
        })
        .collect()
}

fn helix(n: usize, rng: &mut ChaCha8Rng) -> Vec<Vec<f64>> {
    (0..n)
        .map(|_| {
            let t = 4.0 * PI * rng.gen::<f64>();
            vec![t.cos(), t.sin(), 0.3 * t]
        })
        .collect()
}

fn params(seed: u64) -> SuiteParams {
    SuiteParams {
        methods: vec![Method::Kmeans, Method::Twonn, Method::Mle],
        bootstrap: 20,
        seed,
        kmeans: KmeansScalingParams {
            ks: vec![4, 8, 16, 32, 64, 128, 256],
            restarts: 2,
            seed,
            ..KmeansScalingParams::default()
        },
        ..SuiteParams::default()
    }
}

/// Runs the three estimators and returns (kmeans, twonn, mle).
fn estimates(name: &str, pts: &Points, seed: u64) -> [f64; 3] {
    let s = dimension_suite(pts, &Checked::new(params(seed)).unwrap()).unwrap();
    assert!(s.failures.is_empty(), "{name}: {:?}", s.failures);
    let out = [Method::Kmeans, Method::Twonn, Method::Mle].map(|m| {
        let e = s.get(m).unwrap();
        assert!(
            e.ci95[0] <= e.ci95[1] && e.ci95[0].is_finite(),
            "{name} {m:?}: {:?}",
            e.ci95
        );
        e.d
    });
    eprintln!(
        "{name}: k-means {:.3}, TwoNN {:.3}, MLE {:.3}",
        out[0], out[1], out[2]
    );
    out
}

#[test]
fn cubes_and_spheres_of_known_dimension() {
    let n = 5000;
    for d in [1usize, 2, 3, 5, 8] {
        let mut rng = ChaCha8Rng::seed_from_u64(100 + d as u64);
        let ambient = (2 * d + 2).max(8);
        for (kind, z) in [
            ("cube", cube(n, d, &mut rng)),
            ("sphere", sphere(n, d, &mut rng)),
        ] {
            let pts = embed(&z, ambient, 7 + d as u64);
            let name = format!("{kind} d={d} in R^{ambient}");
            let est = estimates(&name, &pts, d as u64);
            let want = d as f64;
            if d <= 5 {
                for (m, v) in ["k-means", "TwoNN", "MLE"].iter().zip(est) {
                    // Source: the project's target (±10 % for known d ≤ 5) for k-means quantization
                    // (Zador 1982; Graf & Luschgy 2000), TwoNN (Facco et al. 2017) and the
                    // MLE (Levina & Bickel 2004).
                    // k-means measured here: S^5 5.13 and the 5-cube 5.03; over six more seeds
                    // (scratch runs) S^5 4.91–5.14 and the 5-cube 4.64–5.11.
                    assert!((v / want - 1.0).abs() < 0.10, "{name}: {m} {v}");
                }
            } else {
                // d = 8, measured: cube k-means 6.65, TwoNN 7.19, MLE 6.90; sphere k-means 8.00,
                // TwoNN 7.95, MLE 7.59.
                for (m, v) in ["TwoNN", "MLE"].iter().zip(&est[1..]) {
                    // Source: docs/references.md §6 [C] (uniform cubes, N = 4000, d = 10: TwoNN 8.65,
                    // MLE 8.26) and Levina & Bickel (2004): neighbour-based estimates fall below
                    // d as d grows (too few points within the neighbourhood scale, boundary
                    // effects). Known bias: asserted downward and less than 20 %.
                    assert!(*v < want && *v > 0.8 * want, "{name}: {m} {v}");
                }
                if kind == "cube" {
                    // Same source: the cube's boundary lowers the k-means slope at reachable k.
                    assert!(
                        est[0] < want && est[0] > 0.8 * want,
                        "{name}: k-means {}",
                        est[0]
                    );
                } else {
                    // Same source (Zador's law is asymptotic in k, Graf & Luschgy 2000): with
                    // k ≤ 256 = 2^8 no pair reaches the regime k ≥ 2^d, so the estimate rests on
                    // the finest three pairs; no direction of bias is known: bound ±20 %.
                    assert!(
                        (est[0] / want - 1.0).abs() < 0.2,
                        "{name}: k-means {}",
                        est[0]
                    );
                }
            }
        }
    }
}

#[test]
fn swiss_roll_and_helix() {
    let mut rng = ChaCha8Rng::seed_from_u64(55);
    for (name, z, want) in [
        ("swiss roll", swiss_roll(5000, &mut rng), 2.0),
        ("helix", helix(5000, &mut rng), 1.0),
    ] {
        let pts = embed(&z, 10, 56);
        let est = estimates(name, &pts, 3);
        for (m, v) in ["k-means", "TwoNN", "MLE"].iter().zip(est) {
            // Source: DESIGN.md target ±10 % for known d ≤ 5 (Swiss roll d = 2, helix d = 1).
            assert!((v / want - 1.0).abs() < 0.10, "{name}: {m} {v}");
        }
    }
}

#[test]
fn noisy_circle_in_twenty_dimensions() {
    let sigma = 0.01;
    let mut rng = ChaCha8Rng::seed_from_u64(91);
    let noise = Normal::new(0.0, sigma).unwrap();
    let rows: Vec<Vec<f64>> = (0..20_000)
        .map(|_| {
            let t = 2.0 * PI * rng.gen::<f64>();
            let mut v = vec![0.0; 20];
            v[0] = t.cos();
            v[1] = t.sin();
            v.iter_mut().for_each(|x| *x += noise.sample(&mut rng));
            v
        })
        .collect();
    let pts = Points::from_rows(&rows).unwrap();
    let p = SuiteParams {
        methods: vec![Method::Kmeans],
        bootstrap: 20,
        kmeans: KmeansScalingParams {
            ks: (1..=10).map(|e| 1usize << e).collect(),
            max_points: 20_000,
            train_per_centre: Some(12),
            seed: 4,
            ..KmeansScalingParams::default()
        },
        ..SuiteParams::default()
    };
    let s = dimension_suite(&pts, &Checked::new(p.clone()).unwrap()).unwrap();
    let c = s.kmeans.as_ref().unwrap();
    let curve: Vec<String> = c
        .curve
        .iter()
        .map(|q| format!("{:.2}@{:.4}", q.d, q.scale))
        .collect();
    eprintln!(
        "noisy circle: d {:.3} noise {:?} curve {curve:?}",
        c.d, s.noise_scale
    );
    let want = sigma * 20f64.sqrt();
    // Coarse scales (scale > 5 σ√20) see the circle: d near 1. Source: Graf & Luschgy (2000)
    // D(k) ∝ k^(−2/d) with d = 1; the circle's curvature at k ≤ 8 pushes the local slope up to
    // about 1.3 (exact: D = 1 − (sin(π/k)/(π/k))² for the optimal k-gon), so bound 0.8..1.4.
    for q in c.curve.iter().filter(|q| q.scale > 5.0 * want) {
        assert!(q.d > 0.8 && q.d < 1.4, "coarse d {} at {}", q.d, q.scale);
    }
    // Fine scales rise well above 1 where the 20-dimensional noise is resolved.
    assert!(c.curve.last().unwrap().d > 2.0);
    let ns = s.noise_scale.expect("noise scale detected");
    // Source: issue acceptance bound: noise_scale within a factor 2 of σ·√(ambient dim).
    assert!(
        ns > want / 2.0 && ns < 2.0 * want,
        "noise scale {ns}, σ√20 = {want}"
    );
}

#[test]
fn uniform_segment_distortion_is_optimal() {
    let mut rng = ChaCha8Rng::seed_from_u64(8);
    let rows: Vec<Vec<f64>> = (0..100_000).map(|_| vec![rng.gen::<f64>()]).collect();
    let pts = Points::from_rows(&rows).unwrap();
    let p = KmeansScalingParams {
        ks: vec![2, 4, 8, 16],
        restarts: 2,
        max_iter: 2000,
        holdout_fraction: 0.5,
        seed: 3,
        max_points: 100_000,
        train_per_centre: None,
        finite_sample_correction: true,
    };
    let c = kmeans_scaling(&pts, &Checked::new(p.clone()).unwrap()).unwrap();
    for (k, d) in c.ks.iter().zip(&c.distortion) {
        let opt = 1.0 / (12.0 * (*k as f64).powi(2));
        eprintln!("k {k}: held-out D / (1/12k²) = {:.5}", d / opt);
        // Source: Gersho & Gray, Vector Quantization and Signal Compression (1992): the
        // optimal k-level quantizer of U[0,1] has D = 1/(12k²). Issue bound 2 %; the sampling
        // SE of a mean over 50 000 held-out squared errors is 0.894/√50000 = 0.4 %.
        assert!((d / opt - 1.0).abs() < 0.02, "k {k}: {d} vs {opt}");
    }
}
