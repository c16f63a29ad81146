//! Release-build timings and peak memory of the sparse diffusion map (see docs/performance.md,
//! section "Diffusion map").
//!
//! Usage: `cargo run --release --example bench_embed -- [N] [LANDMARKS]` (defaults 100 000 and
//! 0 = fit on every point). The points are synthetic 64-sample beat-like windows: a QRS-like
//! and a T-like Gaussian bump whose amplitude, width and timing vary smoothly with three seeded
//! latent parameters, plus white noise (SD 0.01); k = 15 neighbours, local scaling with 7
//! neighbours, 10 components. Peak resident memory is read from /proc/self/status (VmHWM).
//!
//! With `--stages` the 100 000-point run first times the stages one by one (PCA, projection,
//! k-d tree, a kernel graph with local scaling from the 7th neighbour, normalisation and the
//! eigensolver on it) before the fit with the library's defaults. Each time is printed as wall
//! seconds and the process's CPU seconds (less disturbed by other work on a shared machine).
//!
//! The fit with the library's defaults prints the wall and CPU seconds of each of its phases
//! (`diffusion_map_observed`) and the process's peak resident memory when each phase ends.
//!
//! With `--dump DIR` the windows are also written to `DIR/points.f64` (row-major little-endian
//! float64, N × 64) and the fit's seconds to `DIR/beatfold.json`, for
//! `scripts/time_sklearn_embedding.py DIR` (a reference library on the same points).

#[path = "common/dump.rs"]
mod dump;
use beatfold::embed::{diffusion_map_observed, sparse, DiffusionParams, Pca};
use beatfold::neighbours::{self as knn, Path};
use beatfold::params::Checked;
use beatfold::points::Points;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};
use std::time::Instant;

/// User + system CPU seconds of this process so far (from /proc/self/stat, 100 ticks a second),
/// a measure that a shared machine's load disturbs less than the wall clock.
fn cpu_seconds() -> f64 {
    std::fs::read_to_string("/proc/self/stat")
        .ok()
        .and_then(|s| {
            let rest = s.rsplit_once(')')?.1;
            let f: Vec<&str> = rest.split_whitespace().collect();
            Some((f.get(11)?.parse::<f64>().ok()? + f.get(12)?.parse::<f64>().ok()?) / 100.0)
        })
        .unwrap_or(f64::NAN)
}

fn time<T>(label: &str, f: impl FnOnce() -> T) -> T {
    let (t0, c0) = (Instant::now(), cpu_seconds());
    let v = f();
    println!(
        "{label:<58} {:>8.2} s  (CPU {:.2} s)",
        t0.elapsed().as_secs_f64(),
        cpu_seconds() - c0
    );
    v
}

fn peak_rss_mib() -> f64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("VmHWM:"))
                .and_then(|l| l.split_whitespace().nth(1)?.parse::<f64>().ok())
        })
        .map_or(f64::NAN, |kb| kb / 1024.0)
}

/// `n` beat-like windows of 64 samples.
fn beats(n: usize, seed: u64) -> Points {
    const DIM: usize = 64;
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let noise = Normal::new(0.0, 0.01).unwrap();
    let mut data = Vec::with_capacity(n * DIM);
    for _ in 0..n {
        let (u, v, w): (f64, f64, f64) = (rng.gen(), rng.gen(), rng.gen());
        let (a_qrs, w_qrs, c_qrs) = (0.8 + 0.4 * u, 2.0 + 1.5 * v, 20.0 + 2.0 * (u - 0.5));
        let (a_t, w_t, c_t) = (0.2 + 0.2 * w, 5.0 + 2.0 * u, 44.0 + 6.0 * (v - 0.5));
        for s in 0..DIM {
            let s = s as f64;
            let x = a_qrs * (-(s - c_qrs).powi(2) / (2.0 * w_qrs * w_qrs)).exp()
                + a_t * (-(s - c_t).powi(2) / (2.0 * w_t * w_t)).exp();
            data.push(x + noise.sample(&mut rng));
        }
    }
    Points { n, dim: DIM, data }
}

fn main() -> anyhow::Result<()> {
    let mut args: Vec<String> = std::env::args().collect();
    let dump = dump::take_dump_option(&mut args);
    let stages = args.iter().any(|a| a == "--stages");
    args.retain(|a| a != "--stages");
    let n: usize = args
        .get(1)
        .map(|s| s.parse())
        .transpose()?
        .unwrap_or(100_000);
    let landmarks: usize = args.get(2).map(|s| s.parse()).transpose()?.unwrap_or(0);
    println!("threads: {}", rayon::current_num_threads());
    let pts = time(&format!("synthesise {n} beat windows, 64 samples"), || {
        beats(n, 7)
    });
    // Supporting measurements for the choice of search (PCA + k-d tree vs brute force).
    let sub = pts.select(&(0..n.min(20_000)).collect::<Vec<_>>());
    let pca = time("PCA of up to 20 000 windows", || Pca::fit(&sub))?;
    let keep = pca.components_for(0.99);
    println!("axes for 99 % variance: {keep}");
    time("exact kNN, brute force, 20 000 in 64-D (k = 16)", || {
        knn::knn_path(&sub, &sub, 16, Path::Brute)
    })?;
    let red = pca.project(&sub, keep)?;
    time(
        &format!("exact kNN, k-d tree, 20 000 in {keep}-D (k = 16)"),
        || knn::knn_path(&red, &red, 16, Path::Tree),
    )?;
    drop((sub, red));
    let p = DiffusionParams {
        components: 10,
        neighbors: 15,
        bandwidth_neighbors: 10,
        max_fit_points: if landmarks > 0 { landmarks } else { n },
        landmark_check: if landmarks > 0 { 1000 } else { 0 },
        ..DiffusionParams::default()
    };
    if landmarks == 0 && stages {
        // Stage by stage, as `fit` runs them (PCA to at most 20 axes, kNN, kernel, eigen).
        let pca = time("stage: PCA of all windows", || Pca::fit(&pts))?;
        let keep = pca.components_for(0.99).min(20);
        println!(
            "  axes kept {keep}, variance kept {:.4}",
            pca.explained_ratio()[..keep].iter().sum::<f64>()
        );
        let red = time("stage: projection", || pca.project(&pts, keep))?;
        let nb = time("stage: exact kNN (k-d tree), k = 15 + self", || {
            knn::knn(&red, &red, 16)
        })?;
        let sigma: Vec<f64> = (0..n)
            .map(|i| nb.dist2_of(i)[7].sqrt().max(1e-150))
            .collect();
        let mut s = time("stage: kernel graph", || {
            sparse::kernel_graph(&nb, &|a, b| sigma[a] * sigma[b])
        });
        drop(nb);
        println!("  stored entries of S: {}", s.nnz());
        time("stage: alpha and Markov normalisation", || {
            sparse::normalise(&mut s, 1.0)
        });
        let eig = time("stage: eigensolver, 11 pairs", || {
            sparse::top_eigen_sparse(&s, 11, 0)
        })?;
        println!(
            "  solver {:?}, residual {:.2e}, block products {}, lower spectrum bound {:.3}",
            eig.solver, eig.residual, eig.chebyshev_work.0, eig.chebyshev_work.1
        );
        println!(
            "peak resident memory so far (VmHWM): {:.0} MiB",
            peak_rss_mib()
        );
    }
    let t_fit = std::time::Instant::now();
    // Phases of the fit as the library reports them (wall and CPU seconds of each).
    let mut phases: Vec<(&str, f64, f64, f64)> = Vec::new();
    let (mut t_last, mut c_last) = (Instant::now(), cpu_seconds());
    let mut on_phase = |name: &'static str| {
        let (t, c) = (Instant::now(), cpu_seconds());
        phases.push((name, (t - t_last).as_secs_f64(), c - c_last, peak_rss_mib()));
        (t_last, c_last) = (t, c);
    };
    let e = time(
        &format!(
            "diffusion map, k = 15, 10 components{}",
            if landmarks > 0 {
                format!(", {landmarks} landmarks + Nyström + held-out check")
            } else {
                String::new()
            }
        ),
        || diffusion_map_observed(&pts, &Checked::new(p.clone())?, &mut on_phase),
    )?;
    let fit_s = t_fit.elapsed().as_secs_f64();
    for (name, wall, cpu, peak) in &phases {
        println!("  phase {name:<20} {wall:>8.2} s  (CPU {cpu:.2} s)  peak so far {peak:.0} MiB");
    }
    if let Some(dir) = &dump {
        dump::write_points(dir, &pts)?;
        let meta = serde_json::json!({
            "n": pts.n,
            "dim": pts.dim,
            "neighbors": 15,
            "components": 10,
            "landmarks": landmarks,
            "fit_seconds": fit_s,
            "eigenvalues": e.eigenvalues,
        });
        std::fs::write(dir.join("beatfold.json"), format!("{meta:#}\n"))?;
        println!("points written to {}", dir.display());
    }
    println!("eigenvalues: {:?}", e.eigenvalues);
    println!(
        "residual {:.2e}; fit points {}; landmark error {:?}; PCA axes in model {:?}",
        e.residual,
        e.fit_points,
        e.landmark_error,
        e.model
            .as_ref()
            .and_then(|m| m.reduction.as_ref().map(|r| r.1))
    );
    if let Some((products, bound)) = e.model.as_ref().and_then(|m| m.diagnostics.chebyshev_work) {
        println!(
            "Chebyshev eigensolver: {products} block products, lower spectrum bound {bound:.3}"
        );
    }
    println!("peak resident memory (VmHWM): {:.0} MiB", peak_rss_mib());
    Ok(())
}
