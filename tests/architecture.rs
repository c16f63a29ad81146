//! The invariants ARCHITECTURE.md states, checked on the source tree.

use std::path::{Path, PathBuf};

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

fn src() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("src")
}

/// The command line stays thin: every file under src/cli/ is under 250 lines.
#[test]
fn every_cli_file_is_under_250_lines() {
    let mut files = Vec::new();
    rust_files(&src().join("cli"), &mut files);
    assert!(files.len() > 5);
    for f in files {
        let n = std::fs::read_to_string(&f).unwrap().lines().count();
        assert!(n < 250, "{}: {n} lines", f.display());
    }
}

/// Files are written only by `io` (which holds the atomic temp-file-and-rename writer): no
/// other library file opens a file for writing. Test modules are left out.
#[test]
fn only_io_writes_files() {
    let mut files = Vec::new();
    rust_files(&src(), &mut files);
    let io_dir = src().join("io");
    let writes = ["fs::write(", "File::create(", "OpenOptions", "fs::rename("];
    let mut found = Vec::new();
    for f in files {
        if f.starts_with(&io_dir) || f.file_name().is_some_and(|n| n == "tests.rs") {
            continue;
        }
        let text = std::fs::read_to_string(&f).unwrap();
        // Code before the file's test module.
        let code = text.split("#[cfg(test)]").next().unwrap_or("");
        for (i, line) in code.lines().enumerate() {
            if line.trim_start().starts_with("//") {
                continue;
            }
            if writes.iter().any(|w| line.contains(w)) {
                found.push(format!("{}:{}: {}", f.display(), i + 1, line.trim()));
            }
        }
    }
    assert!(found.is_empty(), "writes outside io:\n{}", found.join("\n"));
}

/// The saved embedding model is read and written by `io`, not by `embed`.
#[test]
fn the_embedding_model_file_lives_in_io() {
    let text = std::fs::read_to_string(src().join("embed").join("model_io.rs")).unwrap();
    assert!(
        !text.contains("FileBuilder"),
        "embed::model_io builds files"
    );
    assert!(!text.contains("read_text") && !text.contains("std::fs"));
}
