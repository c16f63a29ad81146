//! CSV/TSV recording reader on arbitrary bytes: must return a record or an error, never panic.
#![no_main]
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    // The first byte chooses the file kind and whether a rate is given.
    let (kind, body) = data.split_first().unwrap_or((&0, &[]));
    let path = if kind & 1 == 0 {
        "fuzz.csv"
    } else {
        "fuzz.tsv"
    };
    let fs = (kind & 2 != 0).then_some(250.0);
    let _ = beatfold::io::csv::read_record_from_bytes(Path::new(path), body, fs);
});
