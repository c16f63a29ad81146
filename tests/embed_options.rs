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
