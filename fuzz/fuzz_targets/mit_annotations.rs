//! MIT-format annotation parser on arbitrary bytes, then conversion to beatfold annotations:
//! must return annotations or an error, never panic.
#![no_main]
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    if let Ok(anns) = beatfold::io::physionet::parse_annotations(Path::new("fuzz.atr"), data) {
        let _ = beatfold::io::physionet::to_annotations(&anns, 360.0, 10_000);
    }
});
