//! Saved embedding model reader (HDF5, `embed --model`) on arbitrary bytes: must return a value or an
//! error, never panic. The reader takes a path, so the bytes go to a temporary file of this
//! process first.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let p = std::env::temp_dir().join(format!("beatfold-fuzz-{}-model_h5.h5", std::process::id()));
    if std::fs::write(&p, data).is_err() {
        return;
    }
    if let Ok(m) = beatfold::embed::model_io::load_model(&p) {
        let pts = beatfold::points::Points::from_rows(&vec![vec![0.5; m.input_dim()]; 3]);
        if let Ok(pts) = pts {
            let _ = m.extend(&pts);
        }
    }
});
