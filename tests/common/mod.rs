//! Helpers shared by the end-to-end tests of the real binary.
#![allow(dead_code)] // each test file uses its own subset

use std::path::Path;
use std::process::{Command, Output};

/// Run the built `beatfold` with `args` in `dir`.
pub fn beatfold(args: &[&str], dir: &Path) -> Output {
    Command::new(env!("CARGO_BIN_EXE_beatfold"))
        .args(args)
        .current_dir(dir)
        .output()
        .expect("binary runs")
}

/// Assert that `o` succeeded and return its standard output.
pub fn ok(o: &Output) -> String {
    let out = String::from_utf8_lossy(&o.stdout).into_owned();
    assert!(
        o.status.success(),
        "exit {:?}\nstdout:\n{out}\nstderr:\n{}",
        o.status.code(),
        String::from_utf8_lossy(&o.stderr)
    );
    out
}
