//! PhysioNet-format header parser on arbitrary bytes, then the whole record with a small
//! signal file: must return a record or an error, never panic.
#![no_main]
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let hea = Path::new("fuzz/f.hea");
    if let Ok(text) = std::str::from_utf8(data) {
        let _ = beatfold::io::physionet::parse_header(hea, text);
    }
    // Whatever files the header names, offer 600 bytes of a slow ramp under the usual names.
    let dat: Vec<u8> = (0..600u32).map(|i| (i / 3) as u8).collect();
    let files = [
        "f.dat", "s.dat", "100x.dat", "208x.dat", "105d.dat", "108d.dat", "203d.dat",
    ]
    .map(|n| (n, dat.as_slice()));
    let _ = beatfold::io::physionet::record_from_bytes(hea, data, &files, None);
});
