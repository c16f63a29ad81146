//! The README's example is the real program's output: every line the README shows under
//! `$ beatfold demo` must be printed by a run of the demo (the timing line aside, and with the
//! output folder the README names).

use std::path::Path;
use std::process::Command;

/// The lines of the README's text block that follow `$ beatfold demo`, up to the next prompt or
/// the end of the block.
fn readme_demo_lines() -> Vec<String> {
    let readme = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md"))
        .expect("README.md");
    let mut lines = readme.lines().skip_while(|l| l.trim() != "$ beatfold demo");
    assert!(
        lines.next().is_some(),
        "README shows no `$ beatfold demo` example"
    );
    lines
        .take_while(|l| !l.starts_with('$') && !l.starts_with("```"))
        .filter(|l| !l.trim().is_empty())
        .map(str::to_string)
        .collect()
}

#[test]
fn the_readme_demo_output_is_what_the_demo_prints() {
    let shown = readme_demo_lines();
    assert!(shown.len() >= 6, "README demo block too short: {shown:?}");
    let tmp = tempfile::tempdir().unwrap();
    // Run in a temporary folder so the default output folder `beatfold-demo` matches the README.
    let o = Command::new(env!("CARGO_BIN_EXE_beatfold"))
        .arg("demo")
        .current_dir(tmp.path())
        .output()
        .expect("binary runs");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let printed = String::from_utf8_lossy(&o.stdout);
    let printed: Vec<&str> = printed.lines().collect();
    for line in &shown {
        if line.starts_with("demo finished in") {
            continue;
        }
        assert!(
            printed.contains(&line.as_str()),
            "README line not printed by the demo:\n  {line}\nthe demo printed:\n{}",
            printed.join("\n")
        );
    }
    // And the README leaves out no result line of the demo.
    for line in &printed {
        if !line.starts_with("demo finished in") {
            assert!(
                shown.iter().any(|s| s == line),
                "demo line missing from the README:\n  {line}"
            );
        }
    }
}
