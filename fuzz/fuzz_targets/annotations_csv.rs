//! beatfold annotation CSV reader on arbitrary bytes: must return annotations or an error,
//! never panic.
#![no_main]
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let _ =
        beatfold::io::annotations::read_from_bytes(Path::new("fuzz.annotations.csv"), data, 250.0);
});
