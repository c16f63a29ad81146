//! PhysioNet signal files (formats 16 and 212) on arbitrary bytes, behind a header chosen by the
//! first bytes: must return a record or an error, never panic.
#![no_main]
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let (&sel, rest) = data.split_first().unwrap_or((&0, &[]));
    let format = if sel & 1 == 0 { 16 } else { 212 };
    let nsig = 1 + ((sel >> 1) & 3) as usize;
    // Bit 3: promise a sample count (taken from the next byte) instead of reading to the end.
    let (n_field, dat) = if sel & 8 != 0 {
        let (&n, d) = rest.split_first().unwrap_or((&0, &[]));
        (format!(" {}", n as usize * 7), d)
    } else {
        (String::new(), rest)
    };
    let mut header = format!("f {nsig} 250{n_field}\n");
    for i in 0..nsig {
        header.push_str(&format!("f.dat {format} 200/mV 12 0 0 0 0 s{i}\n"));
    }
    let hea = Path::new("fuzz/f.hea");
    // Without init value and checksum the decoded samples themselves are checked; with the
    // fixed zeros above most inputs end in a clear checksum error, so try both.
    let _ = beatfold::io::physionet::decode(Path::new("fuzz/f.dat"), dat, format, nsig);
    let _ =
        beatfold::io::physionet::record_from_bytes(hea, header.as_bytes(), &[("f.dat", dat)], None);
    let plain: String = header
        .lines()
        .enumerate()
        .map(|(k, l)| {
            if k == 0 {
                format!("{l}\n")
            } else {
                format!("f.dat {format} 200/mV\n")
            }
        })
        .collect();
    let _ =
        beatfold::io::physionet::record_from_bytes(hea, plain.as_bytes(), &[("f.dat", dat)], None);
});
