//! The geometry a diffusion map recovers with its default settings and with each bandwidth
//! rule: density-free eigenfunctions on a non-uniformly sampled segment and arc, the Swiss roll
//! unrolled by one automatic ε, and a kernel graph that falls apart.

use beatfold::embed::{diffusion_map, Bandwidth, DiffusionParams, Embedding};
use beatfold::params::Checked;
use beatfold::points::Points;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::f64::consts::PI;

/// `n` seeded points on [0, 1] with density 0.25 + 1.5x (inverse of F(x) = 0.25x + 0.75x²).
fn density_segment(n: usize, seed: u64) -> Vec<f64> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    (0..n)
        .map(|_| {
            let u: f64 = rng.gen();
            (-0.25 + (0.0625 + 3.0 * u).sqrt()) / 1.5
        })
        .collect()
}

/// The segment bent into a 3-D arc of constant speed (x is proportional to arc length):
/// (R cos(a x), R sin(a x), h x), R = 0.25, a = 1.5π, h = 0.3.
fn arc(x: &[f64]) -> Points {
    let data = x
        .iter()
        .flat_map(|&s| {
            let a = 1.5 * PI * s;
            [0.25 * a.cos(), 0.25 * a.sin(), 0.3 * s]
        })
        .collect();
    Points::new(x.len(), 3, data).unwrap()
}

fn col(e: &Embedding, j: usize) -> Vec<f64> {
    e.coords.chunks_exact(e.components).map(|r| r[j]).collect()
}

/// Squared correlation (R² of a straight-line fit).
fn r2(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len() as f64;
    let (ma, mb) = (a.iter().sum::<f64>() / n, b.iter().sum::<f64>() / n);
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for (x, y) in a.iter().zip(b) {
        sab += (x - ma) * (y - mb);
        saa += (x - ma) * (x - ma);
        sbb += (y - mb) * (y - mb);
    }
    sab * sab / (saa * sbb)
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
    let r = r2(&ranks(a), &ranks(b)).sqrt();
    let sign = {
        let (ra, rb) = (ranks(a), ranks(b));
        let m = (a.len() as f64 - 1.0) / 2.0;
        ra.iter()
            .zip(&rb)
            .map(|(x, y)| (x - m) * (y - m))
            .sum::<f64>()
    };
    r.copysign(sign)
}

/// R² of ψ1..ψ3 against cos(kπx).
fn neumann_r2(e: &Embedding, x: &[f64]) -> [f64; 3] {
    let mut out = [0.0; 3];
    for (k, o) in out.iter_mut().enumerate() {
        let want: Vec<f64> = x.iter().map(|&s| ((k + 1) as f64 * PI * s).cos()).collect();
        *o = r2(&col(e, k), &want);
    }
    out
}

#[test]
fn default_map_is_density_free_on_a_segment_and_an_arc() {
    let x = density_segment(3000, 1);
    let seg = Points::new(x.len(), 1, x.clone()).unwrap();
    let p = DiffusionParams::default();
    let e = diffusion_map(&seg, &Checked::new(p.clone()).unwrap()).unwrap();
    let r_seg = neumann_r2(&e, &x);
    let e_arc = diffusion_map(&arc(&x), &Checked::new(p.clone()).unwrap()).unwrap();
    let r_arc = neumann_r2(&e_arc, &x);
    eprintln!(
        "segment R2 {r_seg:?} (eps {}, {:?}); arc R2 {r_arc:?} (eps {}, {:?})",
        e.epsilon, e.diagnostics, e_arc.epsilon, e_arc.diagnostics
    );
    // Source: the Neumann eigenfunctions of d²/dx² on [0, 1] are cos(kπx), exactly; with α = 1
    // the limit operator is the Laplace–Beltrami operator whatever the sampling density
    // (Coifman & Lafon 2006; Berry & Harlim 2016 for a variable bandwidth). 0.99 leaves room
    // for the finite-sample error at N = 3000.
    for r in r_seg.iter().chain(&r_arc) {
        assert!(*r >= 0.99, "segment {r_seg:?} arc {r_arc:?}");
    }
    assert_eq!(e.diagnostics.connected_components, 1);
    assert_eq!(e.diagnostics.bandwidth_rule, "kernel-sum, variable");
    // The kernel-sum slope of a curve implies d ≈ 1 (Berry, Giannakis & Harlim 2015).
    let d = e.diagnostics.kernel_sum_dimension.unwrap();
    assert!((0.7..1.3).contains(&d), "kernel-sum dimension {d}");
    assert!(e.diagnostics.residuals.iter().all(|&r| r < 1e-8));
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

#[test]
fn one_automatic_epsilon_unrolls_the_swiss_roll_dense_and_sparse() {
    let (th, pts) = swiss_roll(3000, 5);
    for neighbors in [30, 0] {
        let p = DiffusionParams {
            bandwidth: Bandwidth::Auto,
            neighbors,
            components: 2,
            ..DiffusionParams::default()
        };
        let e = diffusion_map(&pts, &Checked::new(p.clone()).unwrap()).unwrap();
        let rho = spearman(&col(&e, 0), &th);
        eprintln!(
            "neighbors {neighbors}: eps {} spearman {rho} {:?}",
            e.epsilon, e.diagnostics
        );
        // Source: Coifman & Lafon (2006); the Swiss roll is the common-practice benchmark: the
        // slowest diffusion mode runs along the roll, so ψ1 is monotone in the roll angle.
        assert!(rho.abs() >= 0.95, "neighbors {neighbors}: spearman {rho}");
        assert_eq!(e.diagnostics.bandwidth_rule, "kernel-sum");
        // The gap between turns is 2π, so a kernel that does not short-cut them has √ε ≪ 2π.
        assert!(e.epsilon.sqrt() < 2.0, "eps {}", e.epsilon);
    }
}

#[test]
fn two_separate_clusters_are_two_components_with_a_note() {
    // Two uniform blobs of 300 points, 100 apart: no 30-NN edge joins them.
    let mut rng = ChaCha8Rng::seed_from_u64(4);
    let mut data = Vec::new();
    for b in 0..2 {
        for _ in 0..300 {
            let g: f64 = rng.gen::<f64>() - 0.5;
            let h: f64 = rng.gen::<f64>() - 0.5;
            data.extend_from_slice(&[100.0 * b as f64 + 3.0 * g, 3.0 * h]);
        }
    }
    let pts = Points::new(600, 2, data).unwrap();
    for neighbors in [30, 0] {
        let p = DiffusionParams {
            components: 3,
            neighbors,
            ..DiffusionParams::default()
        };
        let e = diffusion_map(&pts, &Checked::new(p.clone()).unwrap()).unwrap();
        let dg = &e.diagnostics;
        eprintln!("{neighbors}: {:?} {:?}", e.eigenvalues, dg);
        // A Markov chain's eigenvalue 1 has the multiplicity of its closed classes (common
        // practice): one trivial, one that marks the blob.
        assert_eq!(dg.connected_components, 2);
        assert_eq!(dg.component_sizes, vec![300, 300]);
        assert!(dg
            .note
            .as_deref()
            .unwrap()
            .contains("2 connected components"));
        assert!((e.eigenvalues[0] - 1.0).abs() < 1e-12 && e.eigenvalues[1] < 1.0 - 1e-6);
        // ψ1 is constant on each blob and differs between them.
        let p1 = col(&e, 0);
        let (a, b) = (&p1[..300], &p1[300..]);
        assert!(a.iter().all(|v| (v - a[0]).abs() < 1e-9));
        assert!(b.iter().all(|v| (v - b[0]).abs() < 1e-9));
        assert!((a[0] - b[0]).abs() > 0.5);
    }
}

#[test]
fn constant_input_is_a_clear_error() {
    let pts = Points::new(50, 2, vec![3.0; 100]).unwrap();
    for bandwidth in [Bandwidth::Local, Bandwidth::Auto] {
        let p = DiffusionParams {
            bandwidth,
            components: 2,
            ..DiffusionParams::default()
        };
        let err = diffusion_map(&pts, &Checked::new(p.clone()).unwrap())
            .unwrap_err()
            .to_string();
        assert!(err.contains("coincide"), "{err}");
    }
}

#[test]
fn circle_spectrum_with_the_default_kernel_is_the_laplacian_one() {
    // N seeded uniform angles on the unit circle, every setting at its default (variable
    // bandwidth, automatic ε, α = 1, sparse kernel).
    let n = 2000;
    let mut rng = ChaCha8Rng::seed_from_u64(12);
    let th: Vec<f64> = (0..n).map(|_| 2.0 * PI * rng.gen::<f64>()).collect();
    let data: Vec<f64> = th.iter().flat_map(|t| [t.cos(), t.sin()]).collect();
    let pts = Points::new(n, 2, data).unwrap();
    let p = DiffusionParams {
        components: 6,
        ..DiffusionParams::default()
    };
    let e = diffusion_map(&pts, &Checked::new(p.clone()).unwrap()).unwrap();
    let l = &e.eigenvalues;
    // Source: Coifman & Lafon (2006), docs/references.md §5: with α = 1 the generator is the
    // Laplace–Beltrami operator, whose spectrum on the unit circle is m² (cos mθ, sin mθ, each
    // m ≥ 1 twice); on the fixed-bandwidth kernel λ_m = I_m(2/ε)/I_0(2/ε) ≈ exp(−εm²/4), so
    // log λ_m / log λ_1 → m² as ε → 0 (Berry & Harlim 2016, §5, for the variable bandwidth,
    // whose limit is the same operator). Tolerance ±10 % of each ratio: the finite-sample error
    // of a graph-Laplacian eigenvalue at N = 2000 random points is a few per cent (the members
    // of each pair differ by that much); a missed or duplicated eigenvalue breaks the sequence
    // 1, 1, 4, 4, 9, 9 by far more.
    let base = (l[0].ln() + l[1].ln()) / 2.0;
    let ratios: Vec<f64> = l.iter().map(|v| v.ln() / base).collect();
    eprintln!("circle, default kernel: eigenvalues {l:?} log ratios {ratios:?}");
    for (r, want) in ratios.iter().zip([1.0, 1.0, 4.0, 4.0, 9.0, 9.0]) {
        assert!((r / want - 1.0).abs() < 0.10, "log ratios {ratios:?}");
    }
    // The members of each pair are a rotation of cos mθ, sin mθ: ψ1, ψ2 fit cos θ and sin θ.
    let c1 = col(&e, 0);
    let c2 = col(&e, 1);
    let cos: Vec<f64> = th.iter().map(|t| t.cos()).collect();
    let sin: Vec<f64> = th.iter().map(|t| t.sin()).collect();
    let fit = |y: &[f64]| {
        // R² of y on (1, ψ1, ψ2) by the normal equations of the two centred regressors.
        let m = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
        let (ma, mb, my) = (m(&c1), m(&c2), m(y));
        let (mut aa, mut bb, mut ab, mut ay, mut by, mut yy) = (0.0, 0.0, 0.0, 0.0, 0.0, 0.0);
        for i in 0..y.len() {
            let (a, b, v) = (c1[i] - ma, c2[i] - mb, y[i] - my);
            aa += a * a;
            bb += b * b;
            ab += a * b;
            ay += a * v;
            by += b * v;
            yy += v * v;
        }
        let det = aa * bb - ab * ab;
        let (ca, cb) = ((bb * ay - ab * by) / det, (aa * by - ab * ay) / det);
        (ca * ay + cb * by) / yy
    };
    let (rc, rs) = (fit(&cos), fit(&sin));
    assert!(rc > 0.99 && rs > 0.99, "R² cos {rc} sin {rs}");
    assert_eq!(e.diagnostics.connected_components, 1);
}
