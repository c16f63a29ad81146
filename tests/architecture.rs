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

/// The library code of `file` before its test module (test files give nothing).
fn code_of(file: &Path) -> String {
    if file.file_name().is_some_and(|n| n == "tests.rs") {
        return String::new();
    }
    let text = std::fs::read_to_string(file).unwrap();
    // Cut at the first `#[cfg(test)]` that opens an inline module (an out-of-line `mod tests;`
    // may come before library code).
    let mut end = text.len();
    let mut from = 0;
    while let Some(k) = text[from..].find("#[cfg(test)]") {
        let at = from + k;
        let next = text[at..].lines().nth(1).unwrap_or("");
        if next.trim_end().ends_with('{') {
            end = at;
            break;
        }
        from = at + 1;
    }
    text[..end].to_string()
}

/// Parameters are checked once, by the caller: no stage (nor an orchestrating module that calls
/// the stages) checks a parameter block it was given. `.check()` and `.validate()` appear only
/// inside the `check`/`validate` functions that make up a block's own check (a block checking
/// its sub-blocks). A block a stage builds itself (e.g. the dense kernel for a record's beats)
/// is new and is checked by `Checked::new`, which this test allows.
#[test]
fn stages_do_not_check_their_parameters_again() {
    let mut files = Vec::new();
    for m in [
        "signal",
        "beats",
        "features",
        "embed",
        "dimension",
        "rhythm",
        "synth",
        "report",
        "cohort",
        "separate",
    ] {
        rust_files(&src().join(m), &mut files);
    }
    files.push(src().join("verdicts.rs"));
    files.push(src().join("record_score.rs"));
    let mut found = Vec::new();
    for f in &files {
        let code = code_of(f);
        let mut current_fn = String::new();
        for (i, line) in code.lines().enumerate() {
            let t = line.trim_start();
            if t.starts_with("//") {
                continue;
            }
            if let Some(k) = t.find("fn ") {
                let name: String = t[k + 3..]
                    .chars()
                    .take_while(|c| c.is_alphanumeric() || *c == '_')
                    .collect();
                if !name.is_empty() && (k == 0 || t[..k].ends_with(' ')) {
                    current_fn = name;
                }
            }
            let calls = [
                ".check()",
                ".validate()",
                "Check::check(",
                "Check::validate(",
            ];
            if calls.iter().any(|c| line.contains(c))
                && current_fn != "check"
                && current_fn != "validate"
            {
                found.push(format!("{}:{}: {}", f.display(), i + 1, t));
            }
        }
    }
    assert!(files.len() > 30);
    assert!(
        found.is_empty(),
        "checks inside stages:\n{}",
        found.join("\n")
    );
}

/// Every stage entry point takes its parameters in the checked form only.
#[test]
fn stage_entry_points_take_checked_parameters() {
    let entries = [
        ("signal/condition.rs", "condition"),
        ("signal/condition.rs", "new"),
        ("features/window.rs", "beat_features"),
        ("features/window.rs", "beat_features_scaled"),
        ("rhythm/screen.rs", "screen"),
        ("rhythm/screen.rs", "screen_beats"),
        ("rhythm/screen.rs", "screen_beats_atrial"),
        ("rhythm/atrial.rs", "p_wave_index_with"),
        ("rhythm/recurrence.rs", "recurrence_matrix"),
        ("rhythm/recurrence.rs", "rqa_timeline"),
        ("beats/pan_tompkins.rs", "new"),
        ("beats/pan_tompkins.rs", "pan_tompkins"),
        ("beats/elgendi.rs", "elgendi"),
        ("beats/fusion.rs", "detect_leads_with"),
        ("embed/diffusion.rs", "fit"),
        ("embed/diffusion.rs", "diffusion_map"),
        ("embed/diffusion.rs", "landmark_error"),
        ("dimension/suite.rs", "dimension_suite"),
        ("dimension/scaling.rs", "kmeans_scaling"),
        ("dimension/local_pca.rs", "local_pca_counts"),
        ("synth/mod.rs", "synthesize"),
        ("report/mod.rs", "write_all"),
        ("cohort/mod.rs", "run"),
        ("cohort/mod.rs", "run_with_progress"),
        ("separate/protocol.rs", "within_record"),
        ("separate/protocol.rs", "inter_patient"),
    ];
    for (file, name) in entries {
        let code = code_of(&src().join(file));
        let start = code
            .find(&format!("pub fn {name}("))
            .unwrap_or_else(|| panic!("{file}: no `pub fn {name}`"));
        let sig = &code[start..start + code[start..].find('{').unwrap()];
        assert!(sig.contains("Checked<"), "{file}: {name} takes {sig}");
    }
}

/// One neighbour search: only `neighbours` defines a k-d tree or a running k-best list, and
/// only `points` a squared distance (`Points::dist2`); `embed`, `dimension` and `separate` use it (ARCHITECTURE.md,
/// "One neighbour search").
#[test]
fn only_the_neighbour_module_defines_a_tree_and_a_distance() {
    let mut files = Vec::new();
    rust_files(&src(), &mut files);
    let neighbours = src().join("neighbours");
    let own = ["struct KdTree", "struct TopK", "fn sqdist(", "fn knn("];
    let mut found = Vec::new();
    let mut trees = 0;
    for f in files {
        let text = std::fs::read_to_string(&f).unwrap();
        for (i, line) in text.lines().enumerate() {
            let t = line.trim_start();
            if t.starts_with("//") {
                continue;
            }
            if t.contains("struct KdTree") && f.starts_with(&neighbours) {
                trees += 1;
            }
            let outside = !f.starts_with(&neighbours) && own.iter().any(|w| t.contains(w));
            let distance = t.contains("fn dist2(") && !f.ends_with("points.rs");
            if outside || distance {
                found.push(format!("{}:{}: {}", f.display(), i + 1, t));
            }
        }
    }
    assert_eq!(trees, 1, "the neighbour module defines one k-d tree");
    assert!(
        found.is_empty(),
        "neighbour search outside src/neighbours:\n{}",
        found.join("\n")
    );
    // The one distance is `Points::dist2`.
    let points = std::fs::read_to_string(src().join("points.rs")).unwrap();
    assert!(points.contains("pub fn dist2("));
}
