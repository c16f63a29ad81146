//! Property tests for the other files a user hands to beatfold: the point-cloud CSV (`embed`,
//! `dimension`), a saved embedding model (HDF5, `embed --model`), a cohort manifest and a config
//! JSON. Random byte mutations of a valid file never panic the reader; each either reads or
//! returns an error that names the file. (The recording and annotation readers are in
//! `mutation_readers.rs`; the fuzz targets of `fuzz/` run the same readers on arbitrary bytes.)

use beatfold::embed::{self, model_io, DiffusionParams};
use beatfold::io;
use beatfold::params::Checked;
use beatfold::pipeline::AnalyzeParams;
use beatfold::points::Points;
use proptest::prelude::*;
use std::path::Path;
use std::sync::OnceLock;

/// Apply byte mutations: (position fraction, new byte) pairs, plus an optional truncation.
fn mutate(base: &[u8], edits: &[(f64, u8)], cut: Option<f64>) -> Vec<u8> {
    let mut b = base.to_vec();
    for &(pos, v) in edits {
        if !b.is_empty() {
            let i = ((pos * b.len() as f64) as usize).min(b.len() - 1);
            b[i] = v;
        }
    }
    if let Some(c) = cut {
        b.truncate((c * b.len() as f64) as usize);
    }
    b
}

fn edits() -> impl Strategy<Value = Vec<(f64, u8)>> {
    proptest::collection::vec((0.0f64..1.0, any::<u8>()), 0..6)
}

/// The error, if any, names the file.
fn names_file<T>(result: beatfold::Result<T>, path: &Path) {
    if let Err(e) = result {
        let name = path.file_name().unwrap().to_string_lossy().into_owned();
        assert!(
            e.to_string().contains(&name),
            "error does not name {name}: {e}"
        );
    }
}

/// A small point cloud on a noisy circle (deterministic).
fn cloud(n: usize) -> Points {
    let rows: Vec<Vec<f64>> = (0..n)
        .map(|i| {
            let a = i as f64 * 0.37;
            vec![a.cos(), a.sin(), 0.01 * ((i * 7) % 13) as f64]
        })
        .collect();
    Points::from_rows(&rows).unwrap()
}

fn cloud_csv() -> Vec<u8> {
    let p = cloud(40);
    let mut s = String::from("# a point cloud\n");
    for i in 0..p.n {
        let row: Vec<String> = (0..p.dim)
            .map(|j| format!("{:.6}", p.data[i * p.dim + j]))
            .collect();
        s.push_str(&row.join(","));
        s.push('\n');
    }
    s.into_bytes()
}

/// A saved model file's bytes (fitted once for all cases).
fn model_bytes() -> &'static [u8] {
    static BYTES: OnceLock<Vec<u8>> = OnceLock::new();
    BYTES.get_or_init(|| {
        let mut p = DiffusionParams {
            components: 2,
            ..DiffusionParams::default()
        };
        // A small graph: 8 neighbours, the bandwidth rank capped to match as the CLI does.
        p.overlay_kernel(None, Some(8));
        let m = embed::fit(&cloud(60), &Checked::new(p.clone()).unwrap()).unwrap();
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("model.h5");
        model_io::save_model(&m, &path).unwrap();
        std::fs::read(&path).unwrap()
    })
}

#[test]
fn the_unmutated_files_read() {
    let dir = tempfile::tempdir().unwrap();
    let pts = dir.path().join("cloud.csv");
    std::fs::write(&pts, cloud_csv()).unwrap();
    assert_eq!(io::read_points(&pts).unwrap().n, 40);
    let model = dir.path().join("model.h5");
    std::fs::write(&model, model_bytes()).unwrap();
    let m = model_io::load_model(&model).unwrap();
    assert_eq!((m.components(), m.input_dim()), (2, 3));
    let cfg = dir.path().join("config.json");
    std::fs::write(
        &cfg,
        serde_json::to_vec_pretty(&AnalyzeParams::default()).unwrap(),
    )
    .unwrap();
    assert!(AnalyzeParams::from_json_file(&cfg).is_ok());
    // A value out of range in a config file names the file and the key.
    std::fs::write(&cfg, br#"{"diffusion": {"components": 0}}"#).unwrap();
    let e = AnalyzeParams::from_json_file(&cfg).unwrap_err().to_string();
    assert!(e.contains("config.json") && e.contains("components"), "{e}");
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 300, ..ProptestConfig::default() })]

    #[test]
    fn point_cloud_csv_mutations(e in edits(), cut in proptest::option::of(0.0f64..1.0)) {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("cloud.csv");
        std::fs::write(&p, mutate(&cloud_csv(), &e, cut)).unwrap();
        names_file(io::read_points(&p), &p);
    }

    #[test]
    fn embedding_model_mutations(e in edits(), cut in proptest::option::of(0.0f64..1.0)) {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("model.h5");
        std::fs::write(&p, mutate(model_bytes(), &e, cut)).unwrap();
        let loaded = model_io::load_model(&p);
        if let Ok(m) = &loaded {
            // A model that loads can be used on new points without a panic.
            if m.input_dim() == 3 {
                let _ = m.extend(&cloud(5));
            }
        }
        names_file(loaded, &p);
    }

    #[test]
    fn cohort_manifest_mutations(e in edits(), cut in proptest::option::of(0.0f64..1.0)) {
        let base = b"path,lead,reference,group\n\
            a.hea,MLII,a.atr,control\n\
            \"b, c.edf\",,,case\n\
            # a comment\n\
            d.csv,0,d.annotations.csv,case\n";
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("cohort.csv");
        std::fs::write(&p, mutate(base, &e, cut)).unwrap();
        names_file(beatfold::cohort::list_records(&p), &p);
    }

    #[test]
    fn config_json_mutations(e in edits(), cut in proptest::option::of(0.0f64..1.0)) {
        let base = serde_json::to_vec_pretty(&AnalyzeParams::default()).unwrap();
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("config.json");
        std::fs::write(&p, mutate(&base, &e, cut)).unwrap();
        names_file(AnalyzeParams::from_json_file(&p), &p);
    }
}
