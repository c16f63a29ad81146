//! TwoNN and MLE against scikit-dimension on the same points (fixture made by
//! scripts/make_dimension_fixture.py, versions recorded in the fixture).

use beatfold::dimension::{dimension_suite, mle, twonn, Method, SuiteParams};
use beatfold::params::Checked;
use beatfold::points::Points;

fn fixture() -> serde_json::Value {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/dimension/skdim_fixture.json"
    ))
    .unwrap();
    serde_json::from_str(&text).unwrap()
}

fn points(c: &serde_json::Value) -> Points {
    let rows: Vec<Vec<f64>> = c["points"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| {
            r.as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_f64().unwrap())
                .collect()
        })
        .collect();
    Points::from_rows(&rows).unwrap()
}

#[test]
fn twonn_and_mle_match_scikit_dimension() {
    let f = fixture();
    let clouds = f["clouds"].as_array().unwrap();
    assert_eq!(clouds.len(), 4);
    for c in clouds {
        let name = c["name"].as_str().unwrap();
        let pts = points(c);
        assert_eq!(pts.n, c["n"].as_u64().unwrap() as usize);
        let t = twonn(&pts, 0.1).unwrap();
        let t_ref = c["twonn_discard_0_1"].as_f64().unwrap();
        let m = mle(&pts, 10, 20).unwrap();
        let m_ref = c["mle_mean_k10_20"].as_f64().unwrap();
        eprintln!("{name}: TwoNN {t:.6} (skdim {t_ref:.6}), MLE {m:.6} (skdim {m_ref:.6})");
        // Source: scikit-dimension 0.5.0 TwoNN(discard_fraction=0.1) and
        // MLE().fit(n_neighbors=k, comb="mle") averaged over k = 10..20, on the same points
        // (fixture by scripts/make_dimension_fixture.py). 5 % would be close enough; the
        // definitions are the same (see src/dimension/nn_estimators.rs), so only rounding
        // differs and we hold them to 1e-6 relative.
        assert!(
            (t / t_ref - 1.0).abs() < 1e-6,
            "{name}: TwoNN {t} vs {t_ref}"
        );
        assert!((m / m_ref - 1.0).abs() < 1e-6, "{name}: MLE {m} vs {m_ref}");
        for (k, v) in c["mle_by_k"].as_object().unwrap() {
            let k: usize = k.parse().unwrap();
            let mk = mle(&pts, k, k).unwrap();
            // Source: as above, one k at a time.
            assert!(
                (mk / v.as_f64().unwrap() - 1.0).abs() < 1e-6,
                "{name} k {k}"
            );
        }
        // The suite, with every point used, gives the same TwoNN and MLE values.
        let p = SuiteParams {
            methods: vec![Method::Twonn, Method::Mle],
            bootstrap: 10,
            ..SuiteParams::default()
        };
        let s = dimension_suite(&pts, &Checked::new(p.clone()).unwrap()).unwrap();
        let st = s.get(Method::Twonn).unwrap();
        let sm = s.get(Method::Mle).unwrap();
        // Source: as above (same definitions, held to 5 % through the whole suite).
        assert!(
            (st.d / t_ref - 1.0).abs() < 0.05,
            "{name}: suite TwoNN {}",
            st.d
        );
        assert!(
            (sm.d / m_ref - 1.0).abs() < 0.05,
            "{name}: suite MLE {}",
            sm.d
        );
        assert!(st.ci95[0] <= st.d && st.d <= st.ci95[1], "{:?}", st.ci95);
        assert!(sm.ci95[0] <= sm.d && sm.d <= sm.ci95[1], "{:?}", sm.ci95);
    }
}
