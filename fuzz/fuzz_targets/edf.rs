//! EDF/EDF+ reader on arbitrary bytes: must return a record or an error, never panic.
#![no_main]
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let _ = beatfold::io::edf::read_record_from_bytes(Path::new("fuzz.edf"), data);
});
