//! `beatfold embed` options: each given by flag and by config file reaches the kernel; dense
//! mode needs no other flag; bad input gets a clear error.

use std::process::Command;

fn run(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_beatfold"))
        .args(args)
        .output()
        .unwrap()
}

fn json_of(args: &[&str]) -> serde_json::Value {
    let out = run(args);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

/// A deterministic curve of `n` points in 3-D (a helix).
fn helix(dir: &std::path::Path, n: usize) -> String {
    let p = dir.join("pts.csv");
    let mut s = String::new();
    for i in 0..n {
        let t = i as f64 * 12.0 / n as f64;
        s.push_str(&format!("{},{},{}\n", t.cos(), t.sin(), 0.1 * t));
    }
    std::fs::write(&p, s).unwrap();
    p.to_str().unwrap().to_string()
}

#[test]
fn bandwidth_and_neighbours_by_flag_and_by_config() {
    let dir = tempfile::tempdir().unwrap();
    let pts = helix(dir.path(), 600);
    let cfg = |body: &str| {
        let p = dir.path().join(format!("c{}.json", body.len()));
        std::fs::write(&p, body).unwrap();
        p.to_str().unwrap().to_string()
    };
    let base = ["embed", pts.as_str(), "--components", "3", "--json"];
    // Default: the variable bandwidth.
    let j = json_of(&base);
    assert_eq!(j["bandwidth"], "local");
    assert_eq!(j["bandwidth_rule"], "kernel-sum, variable");
    assert_eq!(j["neighbors"], 30);
    assert_eq!(j["connected_components"], 1);
    assert!(j["residuals"].as_array().unwrap().len() == 4);
    // A fixed ε, by flag and by config: the kernel uses exactly that ε.
    let f = json_of(&[&base[..], &["--bandwidth", "0.02"]].concat());
    let c = cfg(r#"{"diffusion": {"bandwidth": 0.02}}"#);
    let g = json_of(&[&base[..], &["--config", c.as_str()]].concat());
    for j in [&f, &g] {
        assert_eq!(j["epsilon"], 0.02);
        assert_eq!(j["bandwidth_rule"], "fixed");
    }
    assert_eq!(f["eigenvalues"], g["eigenvalues"]);
    // auto, by flag and by config.
    let f = json_of(&[&base[..], &["--bandwidth", "auto"]].concat());
    let c = cfg(r#"{"diffusion": {"bandwidth": "auto", "neighbors": 12}}"#);
    let g = json_of(&[&base[..], &["--config", c.as_str(), "--k", "12"]].concat());
    let h = json_of(&[&base[..], &["--config", c.as_str()]].concat());
    assert_eq!(f["bandwidth_rule"], "kernel-sum");
    assert_eq!(g["bandwidth_rule"], "kernel-sum");
    assert_eq!(g["neighbors"], 12);
    assert_eq!(g["eigenvalues"], h["eigenvalues"]);
    // The flag overrides the file.
    let o = json_of(&[&base[..], &["--config", c.as_str(), "--bandwidth", "0.5"]].concat());
    assert_eq!(o["epsilon"], 0.5);
    assert_eq!(o["neighbors"], 12);
    // A bad word is refused, naming the option.
    let bad = run(&[&base[..], &["--bandwidth", "wide"]].concat());
    assert_eq!(bad.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&bad.stderr).contains("bandwidth"));
    let c = cfg(r#"{"diffusion": {"bandwidth": "narrow"}}"#);
    let bad = run(&[&base[..], &["--config", c.as_str()]].concat());
    assert_eq!(bad.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&bad.stderr).contains("bandwidth"));
    // The old flag is gone.
    assert_eq!(
        run(&[&base[..], &["--epsilon", "0.1"]].concat())
            .status
            .code(),
        Some(2)
    );
}

#[test]
fn dense_mode_up_to_5000_points_needs_no_other_flag() {
    // Any size up to 5000: before, the dense kernel also needed a landmark setting.
    let dir = tempfile::tempdir().unwrap();
    let pts = helix(dir.path(), 1200);
    let j = json_of(&[
        "embed",
        &pts,
        "--components",
        "2",
        "--neighbors",
        "0",
        "--json",
    ]);
    assert_eq!(j["neighbors"], 0);
    assert_eq!(j["fit_points"], 1200);
    let c = dir.path().join("dense.json");
    std::fs::write(&c, r#"{"diffusion": {"neighbors": 0}}"#).unwrap();
    let g = json_of(&[
        "embed",
        &pts,
        "--components",
        "2",
        "--config",
        c.to_str().unwrap(),
        "--json",
    ]);
    assert_eq!(g["eigenvalues"], j["eigenvalues"]);
}

#[test]
fn nan_and_constant_input_are_clear_errors() {
    let dir = tempfile::tempdir().unwrap();
    let nan = dir.path().join("nan.csv");
    let mut s = String::new();
    for i in 0..50 {
        s.push_str(&format!(
            "{i},{}\n",
            if i == 17 { "NaN".into() } else { i.to_string() }
        ));
    }
    std::fs::write(&nan, s).unwrap();
    let out = run(&["embed", nan.to_str().unwrap(), "--components", "2"]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains("nan.csv") && err.contains("finite"), "{err}");
    let flat = dir.path().join("flat.csv");
    std::fs::write(&flat, "1,2\n".repeat(60)).unwrap();
    let out = run(&["embed", flat.to_str().unwrap(), "--components", "2"]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(1), "{err}");
    assert!(err.contains("coincide"), "{err}");
}

/// The n × c coordinates a run wrote with `--out`.
fn coords(path: &std::path::Path) -> Vec<Vec<f64>> {
    std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .map(|l| l.split(',').map(|v| v.parse().unwrap()).collect())
        .collect()
}

#[test]
fn components_alpha_t_and_seed_by_flag_and_by_config() {
    let dir = tempfile::tempdir().unwrap();
    let pts = helix(dir.path(), 600);
    let mut n_cfg = 0;
    let mut cfg = |body: &str| {
        n_cfg += 1;
        let p = dir.path().join(format!("o{n_cfg}.json"));
        std::fs::write(&p, body).unwrap();
        p.to_str().unwrap().to_string()
    };
    let out = |name: &str| dir.path().join(name).to_str().unwrap().to_string();
    let base = ["embed", pts.as_str(), "--json"];
    let with = |extra: &[&str]| json_of(&[&base[..], extra].concat());

    // Components: the number of coordinates and eigenvalues.
    let f = with(&["--components", "2"]);
    let g = with(&["--config", &cfg(r#"{"diffusion": {"components": 2}}"#)]);
    for j in [&f, &g] {
        assert_eq!(j["components"], 2);
        assert_eq!(j["eigenvalues"].as_array().unwrap().len(), 2);
    }
    assert_eq!(f["eigenvalues"], g["eigenvalues"]);

    // Alpha: reaches the normalisation (other eigenvalues than α = 1), the same by both routes.
    let a1 = with(&["--components", "3"]);
    let f = with(&["--components", "3", "--alpha", "0.5"]);
    let g = with(&[
        "--components",
        "3",
        "--config",
        &cfg(r#"{"diffusion": {"alpha": 0.5}}"#),
    ]);
    for j in [&f, &g] {
        assert_eq!(j["alpha"], 0.5);
    }
    assert_eq!(f["eigenvalues"], g["eigenvalues"]);
    assert_ne!(f["eigenvalues"], a1["eigenvalues"]);

    // t: the coordinates are ψ_j·λ_j^t (Coifman & Lafon 2006), so those at t = 3 are those at
    // t = 1 times λ_j², whichever route gave t.
    let o1 = out("t1.csv");
    let o3f = out("t3f.csv");
    let o3g = out("t3g.csv");
    let one = with(&["--components", "3", "--out", &o1]);
    let f = with(&["--components", "3", "--t", "3", "--out", &o3f]);
    let g = with(&[
        "--components",
        "3",
        "--config",
        &cfg(r#"{"diffusion": {"t": 3}}"#),
        "--out",
        &o3g,
    ]);
    assert_eq!(f["t"], 3.0);
    assert_eq!(g["t"], 3.0);
    let lam: Vec<f64> = one["eigenvalues"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    let (c1, c3f, c3g) = (
        coords(std::path::Path::new(&o1)),
        coords(std::path::Path::new(&o3f)),
        coords(std::path::Path::new(&o3g)),
    );
    assert_eq!(c3f, c3g);
    for (r1, r3) in c1.iter().zip(&c3f) {
        for j in 0..3 {
            let want = r1[j] * lam[j] * lam[j];
            // The CSV keeps 9 significant digits.
            assert!(
                (r3[j] - want).abs() <= 1e-8 * want.abs().max(1e-3),
                "{r3:?} {r1:?}"
            );
        }
    }

    // Seed: picks the landmarks in landmark mode; same seed by both routes, same fit.
    let f = with(&["--components", "3", "--landmarks", "300", "--seed", "5"]);
    let g = with(&[
        "--components",
        "3",
        "--config",
        &cfg(r#"{"diffusion": {"max_fit_points": 300, "seed": 5}}"#),
    ]);
    let h = with(&["--components", "3", "--landmarks", "300", "--seed", "6"]);
    assert_eq!(f["fit_points"], 300);
    assert_eq!(f["eigenvalues"], g["eigenvalues"]);
    assert_ne!(f["eigenvalues"], h["eigenvalues"]);
}
