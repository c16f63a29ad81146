//! HDF5 signal reading on arbitrary bytes (the one dataset, or `/ecg`): must return a record or
//! an error, never panic.
#![no_main]
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let p = Path::new("fuzz.h5");
    let _ = beatfold::io::hdf5::read_record_from_bytes(p, data, None, Some(250.0));
    let _ = beatfold::io::hdf5::read_record_from_bytes(p, data, Some("/ecg"), None);
});
