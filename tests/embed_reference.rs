//! beatfold's sparse diffusion map against an independent dense numpy/scipy implementation of
//! the same kernel and against scikit-learn's SpectralEmbedding, on the fixture written by
//! scripts/make_embed_fixture.py (versions recorded in the fixture).

use beatfold::embed::{fit, principal_angles, Bandwidth, DiffusionParams};
use beatfold::params::Checked;
use beatfold::points::Points;
use serde_json::Value;

fn fixture() -> Value {
    let text = std::fs::read_to_string("tests/data/embed/trefoil_knn.json").unwrap();
    serde_json::from_str(&text).unwrap()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

#[test]
fn matches_dense_reference_and_scikit_learn() {
    let f = fixture();
    let n = f["n"].as_u64().unwrap() as usize;
    let c = f["components"].as_u64().unwrap() as usize;
    let pts = Points::new(n, 3, floats(&f["points"])).unwrap();
    eprintln!("fixture versions {}", f["versions"]);
    for (alpha, key) in [(1.0, "alpha1"), (0.0, "alpha0")] {
        let p = DiffusionParams {
            components: c,
            alpha,
            bandwidth: Bandwidth::Fixed(f["epsilon"].as_f64().unwrap()),
            neighbors: f["neighbors"].as_u64().unwrap() as usize,
            ..DiffusionParams::default()
        };
        let model = fit(&pts, &Checked::new(p.clone()).unwrap()).unwrap();
        let want = floats(&f[key]["eigenvalues"]);
        eprintln!("alpha {alpha}: {:?} vs {want:?}", model.eigenvalues);
        // Source: dense numpy.linalg.eigh of the same S (scripts/make_embed_fixture.py): the
        // eigenvalues agree to the solver tolerance; 1e-9 allows for rounding in both.
        for (a, b) in model.eigenvalues.iter().zip(&want) {
            assert!((a - b).abs() < 1e-9, "alpha {alpha}: {a} vs {b}");
        }
        // Source: same fixture: principal angles between the spans of ψ_1..ψ_4 < 0.1 rad.
        let ang = principal_angles(&model.psi, &floats(&f[key]["psi"]), n, c, c, false).unwrap();
        eprintln!("alpha {alpha}: principal angles {ang:?}");
        assert!(ang.iter().all(|&a| a < 0.1), "{ang:?}");
        if alpha == 0.0 {
            // Source: scikit-learn SpectralEmbedding (affinity = the same precomputed kernel):
            // Laplacian eigenmaps span ψ_1..ψ_4 of the α = 0 diffusion map; angles < 0.1 rad.
            let sk = floats(&f["sklearn_spectral_alpha0"]);
            let ang = principal_angles(&model.psi, &sk, n, c, c, false).unwrap();
            eprintln!("sklearn principal angles {ang:?}");
            assert!(ang.iter().all(|&a| a < 0.1), "{ang:?}");
        }
    }
}
