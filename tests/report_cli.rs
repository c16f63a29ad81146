//! `beatfold analyze --figures LIST --view-start T --view-end T --colour-by WHAT` on the bundled demo
//! recording: only the chosen figures are written, the trace shows the chosen range, and bad
//! choices are refused with exit status 2 before any analysis.

use std::path::Path;

mod common;
use common::beatfold;

fn demo_csv() -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/telemetry-night.csv")
}

#[test]
fn analyze_draws_only_the_chosen_figures_over_the_chosen_range() {
    let tmp = tempfile::tempdir().unwrap();
    let input = demo_csv();
    let o = beatfold(
        &[
            "analyze",
            input.to_str().unwrap(),
            "--out",
            "out",
            "--quiet",
            "--figures",
            "rr,trace,embedding",
            "--view-start",
            "140",
            "--view-end",
            "150",
            "--colour-by",
            "class",
        ],
        tmp.path(),
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let figs = tmp.path().join("out/figures");
    let mut names: Vec<String> = std::fs::read_dir(&figs)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(
        names,
        [
            "embedding.png",
            "embedding.svg",
            "rr.png",
            "rr.svg",
            "trace.png",
            "trace.svg"
        ]
    );
    let trace = std::fs::read_to_string(figs.join("trace.svg")).unwrap();
    assert!(trace.contains("140.0 to 150.0 s"));
    // The reference rhythm changes at 144 s (demo-data/telemetry-night.annotations.csv):
    // both rhythm intervals around it appear in the strip.
    let lines: Vec<&str> = trace.lines().map(str::trim).collect();
    assert!(lines.contains(&"regular") && lines.contains(&"irregular"));
    let emb = std::fs::read_to_string(figs.join("embedding.svg")).unwrap();
    assert!(emb.contains("class N"));
    let page = std::fs::read_to_string(tmp.path().join("out/report.html")).unwrap();
    assert_eq!(page.matches("class=\"bf-figure\"").count(), 3);
}

#[test]
fn bad_figure_names_and_ranges_exit_2() {
    let tmp = tempfile::tempdir().unwrap();
    let input = demo_csv();
    let input = input.to_str().unwrap();
    for (extra, word) in [
        (vec!["--figures", "trace,pie"], "pie"),
        (vec!["--view-start", "30", "--view-end", "20"], "view-end"),
        (vec!["--colour-by", "hue"], "hue"),
    ] {
        let mut args = vec!["analyze", input, "--out", "out", "--quiet"];
        args.extend(extra);
        let o = beatfold(&args, tmp.path());
        assert_eq!(o.status.code(), Some(2), "{args:?}");
        assert!(
            String::from_utf8_lossy(&o.stderr).contains(word),
            "{args:?}"
        );
        assert!(
            !tmp.path().join("out").exists(),
            "output written for {args:?}"
        );
    }
}
