//! `beatfold cohort` on the command line: shards plus `cohort merge` against a single run from a
//! manifest with groups, and usage errors with exit status 2.

use std::path::Path;
use std::process::Command;

fn beatfold(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_beatfold"))
        .args(args)
        .output()
        .expect("beatfold runs")
}

fn ok(args: &[&str]) -> String {
    let o = beatfold(args);
    assert!(
        o.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

#[test]
fn manifest_shards_and_merge_match_single_run() {
    let t = tempfile::tempdir().unwrap();
    let d = t.path();
    std::fs::create_dir_all(d.join("db")).unwrap();
    for k in 1..=2 {
        let f = d.join(format!("db/r{k}.csv"));
        ok(&[
            "synth",
            "--out",
            s(&f),
            "--minutes",
            "1",
            "--seed",
            &k.to_string(),
            "-q",
        ]);
    }
    let list = d.join("list.csv");
    std::fs::write(&list, "path,group\ndb/r2.csv,case\ndb/r1.csv,control\n").unwrap();

    let single = d.join("single");
    let text = ok(&["cohort", s(&list), "--out", s(&single), "--jobs", "1"]);
    assert!(text.contains("Research use only"), "{text}");
    assert!(text.contains("2 records, 2 ok, 0 with errors"), "{text}");
    let csv = std::fs::read_to_string(single.join("cohort.csv")).unwrap();
    let lines: Vec<&str> = csv.lines().collect();
    for (line, name, group) in [(lines[1], "r1", "control"), (lines[2], "r2", "case")] {
        let f: Vec<&str> = line.split(',').collect();
        assert_eq!(
            (f[0], f[1], f[3], f[5]),
            (name, group, "ok", "60.000"),
            "{csv}"
        );
    }

    let sharded = d.join("sharded");
    for sh in ["0/2", "1/2"] {
        let text = ok(&[
            "cohort",
            s(&list),
            "--out",
            s(&sharded),
            "--shard",
            sh,
            "-q",
        ]);
        assert!(text.is_empty(), "{text}");
        assert!(
            !sharded.join("cohort.csv").exists(),
            "a shard does not merge"
        );
    }
    let text = ok(&["cohort", "merge", s(&sharded)]);
    assert!(text.contains("shared embedding:"), "{text}");
    assert_eq!(
        std::fs::read(single.join("cohort.csv")).unwrap(),
        std::fs::read(sharded.join("cohort.csv")).unwrap()
    );
}

#[test]
fn usage_errors_exit_with_status_2() {
    let t = tempfile::tempdir().unwrap();
    let d = t.path();
    for args in [
        vec!["cohort", s(d), "--out", "x", "--shard", "3/3"],
        vec!["cohort", s(d)],
        vec!["cohort", s(d), "--out", "x", "--jobs", "0"],
        vec!["cohort", "merge", s(d)],
    ] {
        let o = beatfold(&args);
        assert_eq!(o.status.code(), Some(2), "{args:?}");
        assert!(!o.stderr.is_empty());
    }
    // An empty folder has no records.
    let o = beatfold(&["cohort", s(d), "--out", s(&d.join("o"))]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("no recordings"));
}
