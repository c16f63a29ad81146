//! Analysis config JSON reader on arbitrary bytes: must return a value or an
//! error, never panic. The reader takes a path, so the bytes go to a temporary file of this
//! process first.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let p = std::env::temp_dir().join(format!(
        "beatfold-fuzz-{}-config_json.json",
        std::process::id()
    ));
    if std::fs::write(&p, data).is_err() {
        return;
    }
    let _ = beatfold::pipeline::AnalyzeParams::from_json_file(&p);
});
