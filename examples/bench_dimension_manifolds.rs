//! Accuracy of the dimension suite on the 24 benchmark manifolds (release build):
//! `cargo run --release --example bench_dimension_manifolds -- DIR [--kmeans]`.
//!
//! DIR is written by `scripts/make_dimension_benchmark.py` (scikit-dimension 0.5.0
//! BenchmarkManifolds: Hein & Audibert 2005 M1–M13, Campadelli et al. 2015 Mbeta, Mn1, Mn2,
//! Mp1–Mp3; optional Gaussian noise). For every point set the suite runs with its defaults
//! (30 bootstrap resamples, seed 0; k-means only with `--kmeans`, it is slow on 96 coordinates).
//! Prints one line per set and, per seed and noise level, the mean relative error
//! |d̂ − d| / d of every estimator (raw and corrected) and of the consensus over all sets and
//! over the sets with d ≤ 10, the number of resolved answers, and how many resolved answers are
//! off by more than 25 %. Nothing here is tuned: the suite's defaults are used as they are.

use beatfold::dimension::{dimension_suite, Method, Status, SuiteParams};
use beatfold::params::Checked;
use beatfold::points::Points;
use std::collections::BTreeMap;
use std::time::Instant;

#[derive(Default)]
struct Acc {
    all: Vec<f64>,
    low: Vec<f64>,
}

impl Acc {
    fn push(&mut self, est: f64, d: f64) {
        let e = (est - d).abs() / d;
        self.all.push(e);
        if d <= 10.0 {
            self.low.push(e);
        }
    }
    fn mre(v: &[f64]) -> String {
        if v.is_empty() {
            "-".into()
        } else {
            format!("{:.1} %", 100.0 * v.iter().sum::<f64>() / v.len() as f64)
        }
    }
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let Some(dir) = args.iter().find(|a| !a.starts_with("--")) else {
        eprintln!("usage: bench_dimension_manifolds DIR [--kmeans]");
        std::process::exit(2);
    };
    let with_kmeans = args.iter().any(|a| a == "--kmeans");
    let dir = std::path::Path::new(dir);
    let manifest: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(dir.join("manifest.json")).expect("read manifest.json"),
    )
    .expect("parse manifest.json");
    println!(
        "benchmark sets from {} ({})",
        dir.display(),
        manifest["versions"]
    );
    let mut methods: Vec<Method> = vec![
        Method::Twonn,
        Method::Mle,
        Method::Correlation,
        Method::LocalPca,
    ];
    if with_kmeans {
        methods.insert(0, Method::Kmeans);
    }
    // (seed, noise) → per estimator name → accumulators.
    let mut table: BTreeMap<(u64, String), BTreeMap<String, Acc>> = BTreeMap::new();
    let mut resolved: BTreeMap<(u64, String), (usize, usize, usize)> = BTreeMap::new();
    let t_all = Instant::now();
    for e in manifest["entries"].as_array().expect("entries") {
        let file = e["file"].as_str().unwrap();
        let (n, dim) = (
            e["n"].as_u64().unwrap() as usize,
            e["dim"].as_u64().unwrap() as usize,
        );
        let d = e["d"].as_f64().unwrap();
        let seed = e["seed"].as_u64().unwrap();
        let noise = format!("{}", e["noise"].as_f64().unwrap());
        let bytes = std::fs::read(dir.join(file)).expect("read points");
        let data: Vec<f64> = bytes
            .chunks_exact(8)
            .map(|b| f64::from_le_bytes(b.try_into().unwrap()))
            .collect();
        let pts = Points::new(n, dim, data).expect("points shape");
        let p = SuiteParams {
            methods: methods.clone(),
            ..SuiteParams::default()
        };
        let t = Instant::now();
        let s = dimension_suite(&pts, &Checked::new(p.clone()).expect("valid parameters"))
            .expect("suite");
        let secs = t.elapsed().as_secs_f64();
        let acc = table.entry((seed, noise.clone())).or_default();
        let mut line = format!(
            "{:<18} d {:>2} D {:>3} seed {seed} noise {noise:<5}",
            e["name"].as_str().unwrap(),
            d,
            dim
        );
        for m in &s.estimates {
            acc.entry(format!("{} raw", m.method.name()))
                .or_default()
                .push(m.d, d);
            if m.correction.applied {
                acc.entry(format!("{} corrected", m.method.name()))
                    .or_default()
                    .push(m.corrected_d, d);
            }
            line += &format!(" {} {:.2}/{:.2}", m.method.name(), m.d, m.corrected_d);
        }
        if let Some(c) = &s.consensus {
            acc.entry("consensus".into()).or_default().push(c.d, d);
            let r = resolved.entry((seed, noise.clone())).or_default();
            r.0 += 1;
            if c.status == Status::Resolved {
                r.1 += 1;
                if (c.d - d).abs() / d > 0.25 {
                    r.2 += 1;
                }
            }
            line += &format!(" | consensus {:.2} {:?}", c.d, c.status);
            if let Some([sd, sc]) = c.local_spread {
                line += &format!(" spread/cube {:.2}", sd / sc);
            }
            line += &format!(" ({secs:.1} s)");
        }
        println!("{line}");
    }
    println!("\ntotal {:.1} s", t_all.elapsed().as_secs_f64());
    for ((seed, noise), acc) in &table {
        println!("\nseed {seed}, noise {noise} of the coordinate spread");
        println!("| estimator | MRE, all | MRE, d ≤ 10 |\n| --- | --- | --- |");
        for (name, a) in acc {
            println!("| {name} | {} | {} |", Acc::mre(&a.all), Acc::mre(&a.low));
        }
        if let Some((n, r, bad)) = resolved.get(&(*seed, noise.clone())) {
            println!("consensus resolved on {r} of {n} sets; resolved and off by > 25 %: {bad}");
        }
    }
}
