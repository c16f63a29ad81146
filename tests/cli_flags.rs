//! Flags are defined once: a flag that several commands take has the same help, word for word,
//! in each of them (ripgrep-style shared option groups in `src/cli/args.rs`).

mod common;
use common::{beatfold, ok};

/// The help line of `flag` in `beatfold <cmd> --help` (from the flag to the end of its line),
/// with the column padding before the text taken out.
fn help_of(cmd: &str, flag: &str) -> String {
    let dir = std::env::temp_dir();
    let text = ok(&beatfold(&[cmd, "--help"], &dir));
    let line = text
        .lines()
        .find(|l| l.trim_start().starts_with(&format!("{flag} ")))
        .unwrap_or_else(|| panic!("`{cmd} --help` has no {flag}:\n{text}"));
    line.split_whitespace().collect::<Vec<_>>().join(" ")
}

#[test]
fn shared_flags_have_the_same_help_in_every_command() {
    for (flag, cmds) in [
        (
            "--fs",
            &["analyze", "beats", "score", "cohort", "separate"][..],
        ),
        (
            "--config",
            &["analyze", "beats", "score", "cohort", "separate"][..],
        ),
        ("--lead", &["analyze", "beats", "score", "separate"][..]),
        (
            "--reference",
            &["analyze", "beats", "score", "separate"][..],
        ),
        ("--labels", &["score", "cohort"][..]),
        ("--label-map", &["score", "cohort"][..]),
    ] {
        let first = help_of(cmds[0], flag);
        assert!(first.len() > flag.len() + 10, "{flag}: {first}");
        for c in &cmds[1..] {
            assert_eq!(help_of(c, flag), first, "{flag} in {c}");
        }
    }
}

/// `score --labels` scores record verdicts of a folder: the options for reading one record's
/// beats are refused beside it, with a clear error, instead of being ignored.
#[test]
fn score_with_labels_refuses_the_beat_reading_options() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    std::fs::write(d.join("labels.csv"), "r1,N\n").unwrap();
    for extra in [["--fs", "250"], ["--reference", "x.csv"]] {
        let o = beatfold(
            &[&["score", ".", "--labels", "labels.csv"][..], &extra].concat(),
            d,
        );
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{extra:?}: {err}");
        assert!(err.contains("do not apply"), "{extra:?}: {err}");
    }
}
