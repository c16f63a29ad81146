//! Sparse-kernel diffusion maps (kNN graph, shift-invert eigensolver, Nyström extension,
//! landmark mode, saved models) checked against known spectra, a benchmark manifold and a
//! dense reference computed by scripts/make_embed_fixture.py.

use beatfold::embed::{
    aligned_relative_error, diffusion_map, fit, model_io, principal_angles, Bandwidth,
    DiffusionParams,
};
use beatfold::params::Checked;
use beatfold::points::Points;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::f64::consts::PI;

/// `n` seeded uniform angles and the points (cos θ, sin θ) on the unit circle.
fn circle(n: usize, seed: u64) -> (Vec<f64>, Points) {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let th: Vec<f64> = (0..n).map(|_| rng.gen::<f64>() * 2.0 * PI).collect();
    let data = th.iter().flat_map(|t| [t.cos(), t.sin()]).collect();
    (th, Points::new(n, 2, data).unwrap())
}

/// Swiss roll: angle θ = 1.5π(1 + 2u), height h ∈ [0, 21]; (θ cos θ, h, θ sin θ).
fn swiss_roll(n: usize, seed: u64) -> (Vec<f64>, Points) {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut th = Vec::with_capacity(n);
    let mut data = Vec::with_capacity(3 * n);
    for _ in 0..n {
        let t = 1.5 * PI * (1.0 + 2.0 * rng.gen::<f64>());
        let h = 21.0 * rng.gen::<f64>();
        th.push(t);
        data.extend_from_slice(&[t * t.cos(), h, t * t.sin()]);
    }
    (th, Points::new(n, 3, data).unwrap())
}

fn col(m: &[f64], c: usize, j: usize) -> Vec<f64> {
    m.chunks_exact(c).map(|r| r[j]).collect()
}

fn ranks(v: &[f64]) -> Vec<f64> {
    let mut idx: Vec<usize> = (0..v.len()).collect();
    idx.sort_by(|&a, &b| v[a].total_cmp(&v[b]));
    let mut r = vec![0.0; v.len()];
    for (k, &i) in idx.iter().enumerate() {
        r[i] = k as f64;
    }
    r
}

fn spearman(a: &[f64], b: &[f64]) -> f64 {
    let (ra, rb) = (ranks(a), ranks(b));
    let m = (a.len() as f64 - 1.0) / 2.0;
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for i in 0..a.len() {
        sab += (ra[i] - m) * (rb[i] - m);
        saa += (ra[i] - m) * (ra[i] - m);
        sbb += (rb[i] - m) * (rb[i] - m);
    }
    sab / (saa * sbb).sqrt()
}

/// Sparse parameters with a fixed ε.
fn sparse(eps: f64, k: usize, components: usize) -> DiffusionParams {
    DiffusionParams {
        components,
        bandwidth: Bandwidth::Fixed(eps),
        neighbors: k,
        seed: 3,
        ..DiffusionParams::default()
    }
}

#[test]
fn circle_spectrum_pairs_and_eigenfunctions() {
    let (th, pts) = circle(2000, 21);
    // k = 40 neighbours reach an arc of about 40·π/2000 ≈ 0.063; with ε = 4e-4 the kernel there
    // is exp(−0.063²/4e-4) ≈ 5e-5, so the truncation to the kNN graph is negligible.
    let emb = diffusion_map(&pts, &Checked::new(sparse(4e-4, 40, 6)).unwrap()).unwrap();
    let e = &emb.eigenvalues;
    eprintln!("circle eigenvalues {e:?} residual {}", emb.residual);
    // Source: Coifman & Lafon (2006): with α = 1 the generator is the Laplace–Beltrami operator;
    // on the circle its spectrum is m² with eigenfunctions cos mθ, sin mθ (each m ≥ 1 twice).
    // docs/references.md §5 [C]: λ_m = I_m(2/ε)/I_0(2/ε) ≈ exp(−εm²/4), so (1 − λ_m)/(1 − λ_1) = m²
    // up to O(ε m²) = 1e-3 here. Tolerance ±8 % of each ratio: the sampling error of a
    // graph-Laplacian eigenvalue with N = 2000 random points and a kernel 6 spacings wide is a
    // few per cent (measured spread of the pair members below 3 %); a missed or duplicated
    // eigenvalue shifts the sequence 1, 1, 4, 4, 9, 9 and fails by far more.
    let base = ((1.0 - e[0]) + (1.0 - e[1])) / 2.0;
    let want = [1.0, 1.0, 4.0, 4.0, 9.0, 9.0];
    let ratios: Vec<f64> = e.iter().map(|l| (1.0 - l) / base).collect();
    eprintln!("circle ratios {ratios:?}");
    for (r, w) in ratios.iter().zip(want) {
        assert!((r / w - 1.0).abs() < 0.08, "ratios {ratios:?}");
    }
    // Source: docs/references.md §5 [C], 1 − λ_1 = 1 − I_1(5000)/I_0(5000) ≈ ε/4 = 1e-4 (asymptotic
    // I_1/I_0 ≈ 1 − 1/(2x)) for the kernel without its diagonal; the self-weight k(x,x) = 1
    // makes the walk lazy by w = 1/Σ_j K_ij ≈ 2π/(N√(πε)) = 0.0886, so 1 − λ_1 ≈ (1 − w)·ε/4
    // = 9.11e-5. Tolerance 5 %: the pair members themselves differ by ±1.5 % here.
    assert!((base / 9.11e-5 - 1.0).abs() < 0.05, "1 - λ1 = {base}");
    // Source: Coifman & Lafon (2006): ψ1, ψ2 span cos θ, sin θ up to rotation: both canonical
    // correlations > 0.99 (largest principal angle < acos 0.99).
    let cs: Vec<f64> = th.iter().flat_map(|t| [t.cos(), t.sin()]).collect();
    let first2: Vec<f64> = emb.coords.chunks(6).flat_map(|r| [r[0], r[1]]).collect();
    let ang = principal_angles(&first2, &cs, 2000, 2, 2, true).unwrap();
    eprintln!("circle angles {ang:?}");
    assert!(ang[1].cos() > 0.99, "{ang:?}");
    // Shift-invert solver accuracy: residual ‖Sv − λv‖ (unit v) far below the gaps (~1e-4).
    assert!(emb.residual < 1e-8, "residual {}", emb.residual);
}

#[test]
fn swiss_roll_first_coordinate_follows_the_roll() {
    let (th, pts) = swiss_roll(2000, 5);
    let p = DiffusionParams {
        components: 2,
        ..DiffusionParams::default()
    };
    let emb = diffusion_map(&pts, &Checked::new(p.clone()).unwrap()).unwrap();
    let rho = spearman(&col(&emb.coords, 2, 0), &th);
    eprintln!("swiss roll {:?} spearman {rho}", emb.eigenvalues);
    // Source: Coifman & Lafon (2006); the Swiss roll is the common-practice benchmark: the
    // slowest diffusion mode runs along the roll, so ψ1 is monotone in the roll angle.
    assert!(rho.abs() > 0.95, "spearman {rho}");
    // PCA baseline present: 2 axes, variance shares non-increasing.
    assert_eq!(emb.pca_components, 2);
    assert_eq!(emb.pca_coords.len(), 4000);
    assert!(emb.pca_explained[0] >= emb.pca_explained[1]);
}

#[test]
fn nystrom_held_out_half_matches_full_fit() {
    let (_, pts) = circle(2000, 8);
    // Both fits must use the same kernel, so the kNN truncation must be negligible in the
    // denser full fit too: k = 200 of 2000 points reach an arc of about 100·2π/2000 ≈ 0.31,
    // where exp(−0.31²/0.01) ≈ 5e-5. The kernel (√ε = 0.1) then spans about 16 spacings of
    // the 1000-point half.
    let p = sparse(0.01, 200, 2);
    let full = diffusion_map(&pts, &Checked::new(p.clone()).unwrap()).unwrap();
    let half: Vec<usize> = (0..1000).collect();
    let rest: Vec<usize> = (1000..2000).collect();
    let model = fit(&pts.select(&half), &Checked::new(p.clone()).unwrap()).unwrap();
    let ext = model.extend(&pts.select(&rest)).unwrap();
    let own = model.coords_of_fit();
    // The circle's (ψ1, ψ2) pair is degenerate, so fits may differ by a rotation within it:
    // the least-squares 2×2 map is fitted on the fitted half only and applied to the extension.
    let err = aligned_relative_error(&own, &full.coords[..2000], &ext, &full.coords[2000..], 2);
    let again0 = model.extend(&model.landmarks).unwrap();
    eprintln!(
        "nystrom relative RMS error {err}; self {}; eig half {:?} full {:?}",
        aligned_relative_error(&own, &own, &again0, &own, 2),
        model.eigenvalues,
        full.eigenvalues
    );
    // Source: issue criterion, Coifman & Lafon (2006) Nyström extension: relative RMS error of
    // the held-out half's coordinates < 2 %.
    assert!(err < 0.02, "relative error {err}");
    // A fit point extended lands near its own fitted coordinate (kNN row vs symmetrised row).
    let again = model.extend(&model.landmarks).unwrap();
    let self_err = aligned_relative_error(&own, &own, &again, &own, 2);
    assert!(self_err < 0.02, "self error {self_err}");
}

#[test]
fn landmark_mode_reports_error_and_places_every_point() {
    let (th, pts) = circle(3000, 12);
    // 1500 random landmarks; the same kernel as the Nyström check (ε = 0.01, k = 200: the kNN
    // truncation is negligible in the 1800-point refit, exp(−0.35²/0.01) ≈ 5e-6).
    let p = DiffusionParams {
        max_fit_points: 1500,
        landmark_check: 300,
        ..sparse(0.01, 200, 2)
    };
    let emb = diffusion_map(&pts, &Checked::new(p.clone()).unwrap()).unwrap();
    assert_eq!((emb.n, emb.fit_points), (3000, 1500));
    let err = emb.landmark_error.unwrap();
    eprintln!("landmark error {err}");
    // Same 2 % criterion as the Nyström check (issue criterion, Coifman & Lafon 2006).
    assert!(err < 0.02, "landmark error {err}");
    // Every point, landmark or extended, follows (cos θ, sin θ): canonical correlations > 0.99
    // (Coifman & Lafon 2006: the circle's first eigenfunctions).
    let cs: Vec<f64> = th.iter().flat_map(|t| [t.cos(), t.sin()]).collect();
    let ang = principal_angles(&emb.coords, &cs, 3000, 2, 2, true).unwrap();
    eprintln!("landmark mode angles {ang:?}");
    assert!(ang[1].cos() > 0.99, "{ang:?}");
}

#[test]
fn pca_reduction_and_saved_model_round_trip() {
    // A circle embedded in 40 dimensions by a fixed random orthonormal pair plus tiny noise:
    // 2 axes hold > 99 % of the variance, so the model works in PCA space.
    let (_, c) = circle(800, 2);
    let mut rng = ChaCha8Rng::seed_from_u64(9);
    let u: Vec<f64> = (0..80).map(|_| rng.gen::<f64>() - 0.5).collect();
    let mut data = Vec::new();
    for r in c.rows() {
        for d in 0..40 {
            data.push(r[0] * u[d] + r[1] * u[40 + d] + 1e-4 * (rng.gen::<f64>() - 0.5));
        }
    }
    let pts = Points::new(800, 40, data).unwrap();
    let p = DiffusionParams {
        components: 3,
        ..DiffusionParams::default()
    };
    let emb = diffusion_map(&pts, &Checked::new(p.clone()).unwrap()).unwrap();
    let model = emb.model.as_ref().unwrap();
    assert!(matches!(&model.reduction, Some((_, k)) if *k <= 3));
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("model.h5");
    model_io::save_model(model, &path).unwrap();
    let back = model_io::load_model(&path).unwrap();
    // The fit's diagnostics describe the fit and are not saved with the model.
    let mut want = model.as_ref().clone();
    want.diagnostics = Default::default();
    assert_eq!(back, want);
    let a = model.extend(&pts).unwrap();
    let b = back.extend(&pts).unwrap();
    assert_eq!(a, b);
}

#[test]
fn small_graphs_are_solved_densely_with_the_same_spectrum() {
    // A 65-point graph (a one-minute record): the Krylov space would be as large as the matrix
    // (this once panicked inside the solver); the dense path must give the circle's paired
    // spectrum just as the iterative path does for large graphs. Source: Coifman & Lafon
    // (2006), circle Laplace–Beltrami eigenvalues m² in pairs; evenly spaced points, so the
    // pairs are exact and the ratios within ±25 % (ε m² corrections at these small N).
    for n in [30usize, 65, 400] {
        let data: Vec<f64> = (0..n)
            .flat_map(|i| {
                let t = 2.0 * PI * i as f64 / n as f64;
                [t.cos(), t.sin()]
            })
            .collect();
        let pts = Points { n, dim: 2, data };
        let eps = (2.0 * PI / n as f64).powi(2) * 4.0;
        let emb = diffusion_map(&pts, &Checked::new(sparse(eps, 12, 4)).unwrap()).unwrap();
        assert!(emb.coords.iter().all(|v| v.is_finite()));
        let e = &emb.eigenvalues;
        let base = ((1.0 - e[0]) + (1.0 - e[1])) / 2.0;
        let r: Vec<f64> = e.iter().map(|l| (1.0 - l) / base).collect();
        for (x, w) in r.iter().zip([1.0, 1.0, 4.0, 4.0]) {
            assert!((x / w - 1.0).abs() < 0.25, "n {n}: ratios {r:?}");
        }
        assert!(emb.residual < 1e-8, "n {n}: residual {}", emb.residual);
    }
}

#[test]
fn same_embedding_for_one_and_two_threads() {
    // Every random step is seeded and every parallel sum runs over fixed chunks in order, so
    // the fit has the same bits in a pool of 1 and of 2 threads (common practice for a
    // reproducible analysis). Default settings: sparse kernel, variable bandwidth.
    let (_, pts) = swiss_roll(3000, 8);
    let p = DiffusionParams {
        components: 4,
        ..DiffusionParams::default()
    };
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| diffusion_map(&pts, &Checked::new(p.clone()).unwrap()).unwrap())
    };
    let (a, b) = (run(1), run(2));
    assert_eq!(a.eigenvalues, b.eigenvalues);
    assert_eq!(a.epsilon, b.epsilon);
    assert!(a
        .coords
        .iter()
        .zip(&b.coords)
        .all(|(x, y)| x.to_bits() == y.to_bits()));
}
