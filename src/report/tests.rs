//! Tests of the report writers on small hand-made analyses (invented numbers: these tests check
//! the writers, not the science).

use super::*;
use crate::beats::Score;
use crate::dimension::{ScalePoint, ScalingCurve};
use crate::embed::Embedding;
use crate::features::Features;
use crate::points::Points;
use crate::record::{Annotations, BeatAnnotation, Lead, RhythmInterval};
use crate::rhythm::Variability;
use crate::signal::QualitySegment;
use serde_json::json;

const HOSTILE: &str = "<script>alert(1)</script>";

/// A small, consistent analysis: 250 Hz, 20 s, 24 beats, 3 diffusion components.
fn sample_analysis() -> Analysis {
    let fs_hz = 250.0;
    let n = 5000;
    let beat_samples: Vec<usize> = (0..24).map(|i| 100 + 200 * i + (i % 3) * 4).collect();
    let mut conditioned = vec![0.0; n];
    for &b in &beat_samples {
        for k in 0..10usize {
            let v = 1.0 - k as f64 / 10.0;
            conditioned[b + k] = v;
            if b >= k {
                conditioned[b - k] = v;
            }
        }
    }
    let rr_s: Vec<f64> = beat_samples
        .windows(2)
        .map(|w| (w[1] - w[0]) as f64 / fs_hz)
        .collect();
    // Window columns w-0.200s … w+0.400s every 40 ms, then RR context.
    let offsets: Vec<f64> = (0..16).map(|j| -0.2 + 0.04 * j as f64).collect();
    let mut names: Vec<String> = offsets.iter().map(|o| format!("w{o:+.3}s")).collect();
    names.push("rr_prev_s".into());
    names.push("rr_next_s".into());
    let rows: Vec<usize> = (1..23).collect();
    let mut data = Vec::new();
    for &r in &rows {
        let b = beat_samples[r];
        for o in &offsets {
            let s = (b as f64 + o * fs_hz).round() as usize;
            data.push(conditioned[s]);
        }
        data.push(rr_s[r - 1]);
        data.push(rr_s[r]);
    }
    let points = Points::new(rows.len(), names.len(), data).expect("consistent test matrix");
    let m = rows.len();
    let coords: Vec<f64> = (0..m)
        .flat_map(|i| {
            let t = i as f64 / m as f64;
            [t.cos(), t.sin(), 0.1 * t]
        })
        .collect();
    Analysis {
        record_name: "rec-100".into(),
        input_sha256: Some("ab".repeat(32)),
        input_name: "rec-100.csv".into(),
        input_warnings: vec!["rec-100.hea: signal 0 (II), field checksum: header says 0".into()],
        fs_hz,
        duration_s: 20.0,
        raw: Lead {
            name: "II".into(),
            unit: "mV".into(),
            samples: conditioned.clone(),
        },
        conditioned,
        quality: vec![
            QualitySegment {
                start_s: 0.0,
                end_s: 10.0,
                ..Default::default()
            },
            QualitySegment {
                start_s: 10.0,
                end_s: 20.0,
                noisy: true,
                ..Default::default()
            },
        ],
        beat_labels: beat_samples
            .iter()
            .enumerate()
            .map(|(i, _)| if i == 7 { 'V' } else { 'N' })
            .collect(),
        beat_agreement: vec![1.0; beat_samples.len()],
        agreement: Some(0.97),
        rr_s,
        features: Features {
            points,
            names,
            beat_index: rows,
        },
        embedding: Embedding {
            n: m,
            components: 3,
            coords: coords.clone(),
            eigenvalues: vec![0.95, 0.81, 0.6],
            epsilon: 0.25,
            alpha: 1.0,
            t: 1.0,
            ..Embedding::default()
        },
        dimension_suite: None,
        dimension: ScalingCurve {
            ks: vec![2, 4, 8, 16],
            distortion: vec![0.5, 0.25, 0.125, 0.0625],
            curve: vec![
                ScalePoint { scale: 0.5, d: 2.1 },
                ScalePoint { scale: 0.3, d: 2.0 },
                ScalePoint { scale: 0.1, d: 3.5 },
            ],
            d: 2.05,
            fit_slope: -1.0,
            fit_intercept: 0.0,
            noise_scale: Some(0.2),
        },
        variability: Variability {
            n_rr: 23,
            mean_hr_bpm: 74.5,
            mean_rr_ms: 805.0,
            sdnn_ms: 7.5,
            rmssd_ms: 11.2,
            pnn50: 0.0,
        },
        reference: Annotations {
            beats: beat_samples
                .iter()
                .map(|&s| BeatAnnotation {
                    sample: s,
                    code: 'N',
                })
                .collect(),
            rhythms: vec![RhythmInterval {
                start_s: 0.0,
                end_s: 20.0,
                label: "(N".into(),
            }],
        },
        beat_samples,
        separation: None,
        score: Some(Score {
            reference: 24,
            detected: 24,
            tp: 23,
            fp: 1,
            fn_: 1,
            se: 23.0 / 24.0,
            ppv: 23.0 / 24.0,
            match_window_ms: 150.0,
        }),
        parameters: json!({"band_hz": [5.0, 15.0], "note": "a < b & c"}),
        poincare_ms: (20.0, 45.0),
        sample_entropy: 1.2,
        screen: crate::rhythm::screen::Screen {
            short_windows: Vec::new(),
            windows: vec![crate::rhythm::screen::ScreenWindow {
                start: 0,
                end: 16,
                nrmssd: 0.2,
                entropy: 0.8,
                tpr: 0.6,
                irregular: true,
            }],
            irregular: vec![true; 21],
            episodes: vec![crate::rhythm::screen::Episode {
                start_s: 1.0,
                end_s: 9.5,
            }],
        },
        irregular_s: 8.5,
        recurrence: Vec::new(),
        recurrence_trajectory: Points::new(m, 3, coords.clone()).expect("trajectory"),
        recurrence_params: Default::default(),
        recurrence_det_median: f64::NAN,
        verdict: crate::rhythm::verdict::Verdict {
            class: crate::rhythm::verdict::VerdictClass::Regular,
            irregular_fraction: 0.0,
            index: -2.0,
            reasons: vec!["RR regular".to_string()],
        },
        verdict_evidence: crate::rhythm::verdict::evidence(
            &[],
            250.0,
            &[],
            &[],
            &[],
            false,
            f64::NAN,
            &[],
            0.0,
            &crate::rhythm::verdict::VerdictParams::default(),
        ),
        geometry_index: f64::NAN,
        notes: vec!["a note <b>".into()],
        elapsed_s: 1.25,
    }
}

/// An analysis with no beats, a flat lead with a NaN, and nothing downstream.
fn degenerate_analysis() -> Analysis {
    let mut a = sample_analysis();
    a.conditioned = vec![0.0; 5000];
    a.conditioned[10] = f64::NAN;
    a.beat_samples.clear();
    a.beat_labels.clear();
    a.beat_agreement.clear();
    a.agreement = None;
    a.rr_s.clear();
    a.features = Features {
        points: Points {
            n: 0,
            dim: 0,
            data: vec![],
        },
        names: vec![],
        beat_index: vec![],
    };
    a.embedding = Embedding {
        n: 0,
        components: 0,
        coords: vec![],
        eigenvalues: vec![],
        epsilon: f64::NAN,
        alpha: 1.0,
        t: 1.0,
        ..Embedding::default()
    };
    a.dimension = ScalingCurve {
        ks: vec![],
        distortion: vec![],
        curve: vec![],
        d: f64::NAN,
        fit_slope: f64::NAN,
        fit_intercept: f64::NAN,
        noise_scale: None,
    };
    a.variability = Variability {
        n_rr: 0,
        mean_hr_bpm: f64::NAN,
        mean_rr_ms: f64::NAN,
        sdnn_ms: f64::NAN,
        rmssd_ms: f64::NAN,
        pnn50: f64::NAN,
    };
    a.reference = Annotations::default();
    a.score = None;
    a
}

const FIGS: [&str; 8] = [
    "trace",
    "beats",
    "embedding",
    "trajectory",
    "dimension",
    "recurrence",
    "rr",
    "rhythm",
];

fn expected_files(dir: &Path) -> Vec<PathBuf> {
    let mut v = Vec::new();
    for f in FIGS {
        v.push(dir.join("figures").join(format!("{f}.svg")));
        v.push(dir.join("figures").join(format!("{f}.png")));
    }
    for f in ["summary.json", "results.h5", "report.html"] {
        v.push(dir.join(f));
    }
    v
}

/// Width and height from a PNG's IHDR chunk.
fn png_size(bytes: &[u8]) -> (u32, u32) {
    // Source: PNG specification (ISO/IEC 15948), 8-byte signature then IHDR with width, height.
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n");
    assert_eq!(&bytes[12..16], b"IHDR");
    let w = u32::from_be_bytes([bytes[16], bytes[17], bytes[18], bytes[19]]);
    let h = u32::from_be_bytes([bytes[20], bytes[21], bytes[22], bytes[23]]);
    (w, h)
}

fn no_temp_files(dir: &Path) -> bool {
    std::fs::read_dir(dir)
        .unwrap()
        .all(|e| !e.unwrap().file_name().to_string_lossy().contains(".tmp-"))
}

#[test]
fn write_all_creates_every_promised_file() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("out");
    let a = sample_analysis();
    let w = write_all(&a, &out, &crate::params::Checked::default()).unwrap();
    assert_eq!(w.dir, out);
    let expected = expected_files(&out);
    assert_eq!(w.files.len(), expected.len());
    for p in &expected {
        assert!(w.files.contains(p), "{} not listed", p.display());
        let len = std::fs::metadata(p).unwrap().len();
        assert!(len > 100, "{} has only {len} bytes", p.display());
    }
    for f in FIGS {
        let png = std::fs::read(out.join("figures").join(format!("{f}.png"))).unwrap();
        assert_eq!(png_size(&png), figures::SIZE);
    }
    assert!(no_temp_files(&out) && no_temp_files(&out.join("figures")));
}

#[test]
fn options_turn_outputs_off() {
    let tmp = tempfile::tempdir().unwrap();
    let a = sample_analysis();
    let opts = ReportOptions {
        figures: true,
        png: false,
        svg: true,
        ..Default::default()
    };
    let w = write_all(&a, tmp.path(), &crate::params::ck(opts.clone())).unwrap();
    assert_eq!(w.files.len(), FIGS.len() + 3);
    assert!(!tmp.path().join("figures/trace.png").exists());
    let opts = ReportOptions {
        figures: false,
        ..Default::default()
    };
    let tmp2 = tempfile::tempdir().unwrap();
    let w = write_all(&a, tmp2.path(), &crate::params::ck(opts.clone())).unwrap();
    assert_eq!(w.files.len(), 3);
    let page = std::fs::read_to_string(tmp2.path().join("report.html")).unwrap();
    assert!(!page.contains("class=\"bf-figure\""));
    assert!(page.contains("data-figures=\"0\""));
}

#[test]
fn svgs_have_axis_titles_and_notice() {
    let a = sample_analysis();
    let expect: [(figures::Figure, &[&str]); 8] = [
        (
            figures::Figure::Trace,
            &[
                "Time (s)",
                "Amplitude (mV)",
                "detected beat (N)",
                "reference beat",
                "reference rhythm interval",
                "0.0 to 10.0 s",
            ],
        ),
        (
            figures::Figure::Beats,
            &[
                "Time from R peak (s)",
                "median template, class N",
                "22 of 22 shown",
            ],
        ),
        (
            figures::Figure::Embedding,
            &[
                "ψ1 (dimensionless)",
                "ψ2 (dimensionless)",
                "ψ3 (dimensionless)",
                "ψ1–ψ2",
                "ψ1–ψ3",
                "ψ2–ψ3",
                "Time (s)",
            ],
        ),
        (
            figures::Figure::Trajectory,
            &[
                "ψ1 (dimensionless)",
                "Time (s)",
                "successive beats joined",
                "first beat",
            ],
        ),
        (
            figures::Figure::Dimension,
            &[
                "ln k (k = number of centres)",
                "Local dimension d",
                "noise-dominated scales",
            ],
        ),
        (
            figures::Figure::Recurrence,
            &[
                "Beat number i",
                "Beat number j",
                // This analysis has no recurrence timeline: the panel says so.
                "no recurrence windows",
            ],
        ),
        (
            figures::Figure::Rr,
            &["Time (s)", "RR interval (s)", "RR(n) (s)", "RR(n+1) (s)"],
        ),
        (
            figures::Figure::Rhythm,
            &[
                "Time (s)",
                "RR (s)",
                "window nRMSSD",
                "segment COSEn",
                "verdict `regular`",
            ],
        ),
    ];
    for (fig, words) in expect {
        let svg = figures::render_svg(fig, &a).unwrap();
        assert!(svg.contains("<svg"), "{fig:?}");
        assert!(
            svg.contains(crate::NOTICE_SHORT),
            "{fig:?} lacks the notice"
        );
        for w in words {
            assert!(svg.contains(w), "{fig:?} lacks {w:?}");
        }
        assert!(!svg.contains("not enough beats"), "{fig:?}");
    }
    // 22 embedded beats with 3 components: three projections of 22 circles each (the time
    // colouring has a colour bar, no legend circles).
    let svg = figures::render_svg(figures::Figure::Embedding, &a).unwrap();
    assert_eq!(svg.matches("<circle").count(), 3 * 22);
}

#[test]
fn summary_json_has_keys_and_values() {
    let a = sample_analysis();
    let s = summary_json(&a);
    assert_eq!(s["notice"], crate::NOTICE);
    assert_eq!(s["beatfold_version"], env!("CARGO_PKG_VERSION"));
    assert_eq!(s["record"], "rec-100");
    assert_eq!(s["input_name"], "rec-100.csv");
    assert_eq!(s["input_sha256"], "ab".repeat(32));
    assert_eq!(
        s["input_warnings"][0],
        "rec-100.hea: signal 0 (II), field checksum: header says 0"
    );
    assert_eq!(s["fs_hz"], 250.0);
    assert_eq!(s["duration_s"], 20.0);
    assert_eq!(s["beats"]["n_beats"], 24);
    assert_eq!(s["beats"]["mean_hr_bpm"], 74.5);
    assert_eq!(s["beats"]["agreement"], 0.97);
    assert_eq!(s["variability"]["sdnn_ms"], 7.5);
    assert_eq!(s["variability"]["n_rr"], 23);
    for k in [
        "reference",
        "detected",
        "tp",
        "fp",
        "fn",
        "se",
        "ppv",
        "match_window_ms",
    ] {
        assert!(s["score"].get(k).is_some(), "score.{k} missing");
    }
    assert_eq!(s["score"]["fn"], 1);
    assert_eq!(s["embedding"]["eigenvalues"], json!([0.95, 0.81, 0.6]));
    assert_eq!(s["embedding"]["n"], 22);
    assert_eq!(s["embedding"]["components"], 3);
    assert_eq!(s["dimension"]["d"], 2.05);
    assert_eq!(s["dimension"]["noise_scale"], 0.2);
    assert_eq!(s["dimension"]["ks"], json!([2, 4, 8, 16]));
    assert_eq!(
        s["dimension"]["scale_curve"][2],
        json!({"scale": 0.1, "d": 3.5})
    );
    assert_eq!(s["parameters"]["note"], "a < b & c");
    assert!(
        s.get("elapsed_s").is_none(),
        "wall time would break byte-identical reruns"
    );
    assert_eq!(s["notes"][0], "a note <b>");

    // Degenerate: NaN becomes null, missing score is null.
    let d = summary_json(&degenerate_analysis());
    assert!(d["score"].is_null());
    assert!(d["variability"]["sdnn_ms"].is_null());
    assert!(d["dimension"]["noise_scale"].is_null());
    assert_eq!(d["beats"]["n_beats"], 0);
}

#[test]
fn two_runs_give_identical_summary_html_and_svg() {
    let a = sample_analysis();
    let t1 = tempfile::tempdir().unwrap();
    let t2 = tempfile::tempdir().unwrap();
    let opts = ReportOptions {
        png: false,
        ..Default::default()
    };
    write_all(&a, t1.path(), &crate::params::ck(opts.clone())).unwrap();
    write_all(&a, t2.path(), &crate::params::ck(opts.clone())).unwrap();
    for f in [
        "summary.json",
        "report.html",
        "figures/trace.svg",
        "figures/beats.svg",
    ] {
        let b1 = std::fs::read(t1.path().join(f)).unwrap();
        let b2 = std::fs::read(t2.path().join(f)).unwrap();
        assert!(b1 == b2, "{f} differs between runs");
    }
    let text = std::fs::read_to_string(t1.path().join("summary.json")).unwrap();
    let parsed: serde_json::Value = serde_json::from_str(&text).unwrap();
    assert_eq!(parsed, summary_json(&a));
}

fn attr_str(attrs: &std::collections::HashMap<String, hdf5_pure::AttrValue>, k: &str) -> String {
    attrs
        .get(k)
        .and_then(|v| v.as_str())
        .unwrap_or_else(|| panic!("attribute {k} missing or not text"))
        .to_string()
}

fn attr_f64(attrs: &std::collections::HashMap<String, hdf5_pure::AttrValue>, k: &str) -> f64 {
    match attrs.get(k) {
        Some(hdf5_pure::AttrValue::F64(x)) => *x,
        other => panic!("attribute {k}: {other:?}"),
    }
}

#[test]
fn results_h5_reads_back() {
    let a = sample_analysis();
    let tmp = tempfile::tempdir().unwrap();
    let path = tmp.path().join("results.h5");
    write_results_h5(&a, &path).unwrap();
    assert!(no_temp_files(tmp.path()));
    let f = hdf5_pure::File::open(&path).unwrap();
    let root = f.root().attrs().unwrap();
    assert_eq!(attr_str(&root, "notice"), crate::NOTICE);
    assert_eq!(
        attr_str(&root, "beatfold_version"),
        env!("CARGO_PKG_VERSION")
    );
    assert_eq!(attr_str(&root, "input_name"), "rec-100.csv");
    assert_eq!(attr_str(&root, "input_sha256"), "ab".repeat(32));
    assert_eq!(
        attr_str(&root, "input_warnings"),
        "rec-100.hea: signal 0 (II), field checksum: header says 0"
    );
    let params: serde_json::Value = serde_json::from_str(&attr_str(&root, "parameters")).unwrap();
    assert_eq!(params, a.parameters);
    let created = attr_str(&root, "created_utc");
    assert_eq!(created.len(), 20, "{created}");
    assert!(
        created.ends_with('Z') && &created[10..11] == "T",
        "{created}"
    );

    let samples = f.dataset("beats/sample").unwrap().read_u64().unwrap();
    let want: Vec<u64> = a.beat_samples.iter().map(|&s| s as u64).collect();
    assert_eq!(samples, want);
    let labels = f.dataset("beats/label").unwrap().read_u8().unwrap();
    assert_eq!(labels[7], b'V');
    assert_eq!(labels[0], b'N');
    let coords = f.dataset("embedding/coords").unwrap();
    assert_eq!(coords.shape().unwrap(), vec![22, 3]);
    assert_eq!(coords.read_f64().unwrap(), a.embedding.coords);
    let matrix = f.dataset("features/matrix").unwrap();
    assert_eq!(matrix.shape().unwrap(), vec![22, 18]);
    let names = f.dataset("features/names").unwrap().read_string().unwrap();
    assert_eq!(names, a.features.names);
    let curve = f.dataset("dimension/scale_curve").unwrap();
    assert_eq!(curve.shape().unwrap(), vec![3, 2]);
    assert_eq!(
        curve.read_f64().unwrap(),
        vec![0.5, 2.1, 0.3, 2.0, 0.1, 3.5]
    );
    let dim = f.group("dimension").unwrap().attrs().unwrap();
    assert_eq!(attr_f64(&dim, "d"), 2.05);
    assert_eq!(attr_f64(&dim, "noise_scale"), 0.2);
    let emb = f.group("embedding").unwrap().attrs().unwrap();
    assert_eq!(attr_f64(&emb, "epsilon"), 0.25);
    let sig = f.group("signal").unwrap().attrs().unwrap();
    assert_eq!(attr_f64(&sig, "fs_hz"), 250.0);
    let noisy = f
        .dataset("signal/quality/noisy")
        .unwrap()
        .read_u8()
        .unwrap();
    assert_eq!(noisy, vec![0, 1]);
    let rhythm = f.group("rhythm").unwrap().attrs().unwrap();
    assert_eq!(attr_f64(&rhythm, "rmssd_ms"), 11.2);
}

#[test]
fn rfc3339_dates() {
    // Source: Python 3.11 datetime.fromtimestamp(t, timezone.utc).isoformat() for each t.
    assert_eq!(h5::rfc3339_utc(0), "1970-01-01T00:00:00Z");
    assert_eq!(h5::rfc3339_utc(951_782_400), "2000-02-29T00:00:00Z");
    assert_eq!(h5::rfc3339_utc(1_700_000_000), "2023-11-14T22:13:20Z");
    assert_eq!(h5::rfc3339_utc(4_102_444_799), "2099-12-31T23:59:59Z");
}

#[test]
fn html_escapes_user_text() {
    assert_eq!(
        html_escape(HOSTILE),
        "&lt;script&gt;alert(1)&lt;/script&gt;"
    );
    assert_eq!(html_escape("a&b\"c'd"), "a&amp;b&quot;c&#39;d");
    let mut a = sample_analysis();
    a.record_name = HOSTILE.into();
    a.input_name = format!("{HOSTILE}.csv");
    a.reference.rhythms[0].label = HOSTILE.into();
    a.raw.unit = HOSTILE.into();
    a.parameters = json!({ "x": HOSTILE });
    let tmp = tempfile::tempdir().unwrap();
    write_all(
        &a,
        tmp.path(),
        &crate::params::ck(ReportOptions {
            png: false,
            ..Default::default()
        }),
    )
    .unwrap();
    let page = std::fs::read_to_string(tmp.path().join("report.html")).unwrap();
    assert!(!page.contains(HOSTILE), "raw script tag in page");
    // Only the page's own two script elements (data block and view); the hostile text inside
    // the JSON data is written with \u003c escapes and closes nothing.
    assert_eq!(page.matches("<script").count(), 2, "extra script element");
    assert_eq!(page.matches("</script").count(), 2, "extra script end tag");
    assert!(page.contains("\\u003cscript\\u003ealert(1)\\u003c/script\\u003e"));
    assert!(page.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
    // Self-contained: nothing fetched from elsewhere.
    for bad in ["http://", "https://", "src=", "<link"] {
        let hits: Vec<_> = page.match_indices(bad).collect();
        // The SVG namespace URI is an identifier, not a fetch.
        let fetches = hits
            .iter()
            .filter(|(i, _)| !page[*i..].starts_with("http://www.w3.org/"))
            .count();
        assert_eq!(fetches, 0, "page refers to {bad}");
    }
    // The notice comes before any other content.
    let notice_at = page.find("class=\"notice\"").unwrap();
    assert!(notice_at < page.find("<h1>").unwrap());
}

#[test]
fn write_atomic_replaces_or_leaves_intact() {
    let tmp = tempfile::tempdir().unwrap();
    // Missing folder: error, nothing created.
    let missing = tmp.path().join("no-such-dir").join("x.json");
    assert!(write_atomic(&missing, b"new").is_err());
    assert!(!missing.exists());
    // Overwrite: new content, no temporary left.
    let p = tmp.path().join("x.json");
    std::fs::write(&p, b"old").unwrap();
    write_atomic(&p, b"new").unwrap();
    assert_eq!(std::fs::read(&p).unwrap(), b"new");
    assert!(no_temp_files(tmp.path()));
    // Target is a non-empty folder: rename fails, folder and content intact, no temporary left.
    let d = tmp.path().join("busy");
    std::fs::create_dir(&d).unwrap();
    std::fs::write(d.join("keep.txt"), b"keep").unwrap();
    assert!(write_atomic(&d, b"new").is_err());
    assert_eq!(std::fs::read(d.join("keep.txt")).unwrap(), b"keep");
    assert!(no_temp_files(tmp.path()));
    assert_eq!(std::fs::read(&p).unwrap(), b"new");
}

#[test]
fn degenerate_analysis_still_writes_everything() {
    let a = degenerate_analysis();
    let tmp = tempfile::tempdir().unwrap();
    let w = write_all(&a, tmp.path(), &crate::params::Checked::default()).unwrap();
    for p in expected_files(tmp.path()) {
        assert!(w.files.contains(&p));
        assert!(std::fs::metadata(&p).unwrap().len() > 0, "{}", p.display());
    }
    for f in ["beats", "embedding", "rr", "dimension"] {
        let svg = std::fs::read_to_string(tmp.path().join(format!("figures/{f}.svg"))).unwrap();
        assert!(svg.contains("not enough beats"), "{f}.svg");
        assert!(svg.contains(crate::NOTICE_SHORT), "{f}.svg");
    }
    // A flat lead with a NaN still gives an ordinary trace figure.
    let trace = std::fs::read_to_string(tmp.path().join("figures/trace.svg")).unwrap();
    assert!(trace.contains("Time (s)"));
    let f = hdf5_pure::File::open(tmp.path().join("results.h5")).unwrap();
    assert!(f
        .dataset("beats/sample")
        .unwrap()
        .read_u64()
        .unwrap()
        .is_empty());
    assert_eq!(
        f.dataset("embedding/coords").unwrap().shape().unwrap(),
        vec![0, 0]
    );
    // Non-finite samples only, and no rate: still a figure, not a failure.
    let mut b = degenerate_analysis();
    b.conditioned = vec![f64::NAN; 100];
    b.fs_hz = 0.0;
    let svg = figures::render_svg(figures::Figure::Trace, &b).unwrap();
    assert!(svg.contains("no signal to show"));
    b.fs_hz = 250.0;
    let svg = figures::render_svg(figures::Figure::Trace, &b).unwrap();
    assert!(svg.contains("no finite samples"));
}

#[test]
fn inconsistent_matrix_is_an_error_not_a_panic() {
    let mut a = sample_analysis();
    a.embedding.coords.pop();
    let tmp = tempfile::tempdir().unwrap();
    let err = write_results_h5(&a, &tmp.path().join("r.h5")).unwrap_err();
    assert!(err.to_string().contains("embedding coords"), "{err}");
    assert!(!tmp.path().join("r.h5").exists());
    // The figure of the same data says why instead of panicking.
    let svg = figures::render_svg(figures::Figure::Embedding, &a).unwrap();
    assert!(svg.contains("not enough beats"));
}

#[test]
fn line_thinning_keeps_extremes() {
    // A 100 000-point flat series with one spike up and one down: thinned to at most 2 points
    // per bin, and both spikes survive (they are the point of a min/max thinning).
    let mut pts: Vec<(f64, f64)> = (0..100_000).map(|i| (i as f64, 0.0)).collect();
    pts[31_337].1 = 5.0;
    pts[77_777].1 = -3.0;
    pts[500].1 = f64::NAN;
    let thin = figures::minmax_thin(&pts, 1000);
    assert!(thin.len() <= 2000, "{}", thin.len());
    assert!(thin.contains(&(31_337.0, 5.0)));
    assert!(thin.contains(&(77_777.0, -3.0)));
    assert!(thin.iter().all(|p| p.1.is_finite()));
    assert!(thin.windows(2).all(|w| w[0].0 < w[1].0), "order kept");
}
