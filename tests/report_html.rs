//! The self-contained report page: escaping of user text (also inside the embedded JSON), the
//! interactive view's data (subsample, waveforms), and the page size of a 24 h record.

mod report_fake;

use beatfold::params::Checked;
use beatfold::report::{write_all, ReportOptions};
use report_fake::{fake, label, FS_HZ};
use std::path::Path;

const HOSTILE: &str = "<script>alert(1)</script>";

fn page(a: &beatfold::pipeline::Analysis, dir: &Path, opts: ReportOptions) -> String {
    write_all(
        a,
        dir,
        &Checked::new(ReportOptions { png: false, ..opts }).unwrap(),
    )
    .unwrap();
    std::fs::read_to_string(dir.join("report.html")).unwrap()
}

/// The JSON of the interactive view, parsed back.
fn view_data(page: &str) -> serde_json::Value {
    let open = "<script type=\"application/json\" id=\"bf-data\">";
    let start = page.find(open).expect("data block") + open.len();
    let len = page[start..].find("</script>").expect("data block end");
    serde_json::from_str(&page[start..start + len]).expect("data block is JSON")
}

/// Standard base64 decoding (RFC 4648), for the test only.
fn unbase64(s: &str) -> Vec<u8> {
    let val = |c: u8| match c {
        b'A'..=b'Z' => c - b'A',
        b'a'..=b'z' => c - b'a' + 26,
        b'0'..=b'9' => c - b'0' + 52,
        b'+' => 62,
        b'/' => 63,
        _ => panic!("not base64: {c}"),
    };
    let mut out = Vec::new();
    for chunk in s.as_bytes().chunks(4) {
        let pad = chunk.iter().filter(|&&c| c == b'=').count();
        let n = chunk
            .iter()
            .take(4 - pad)
            .enumerate()
            .fold(0u32, |n, (k, &c)| n | (u32::from(val(c)) << (18 - 6 * k)));
        for k in 0..(3 - pad) {
            out.push((n >> (16 - 8 * k)) as u8);
        }
    }
    out
}

#[test]
fn hostile_names_are_escaped_everywhere() {
    // Record, lead, input and reference rhythm label all carry markup.
    let mut a = fake(120, HOSTILE, HOSTILE);
    a.notes.push(format!("note {HOSTILE}"));
    let tmp = tempfile::tempdir().unwrap();
    let p = page(&a, tmp.path(), ReportOptions::default());
    assert!(!p.contains(HOSTILE), "raw markup in the page");
    assert!(p.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
    // Exactly the page's own script elements: the JSON data block and the view's script.
    assert_eq!(p.matches("<script").count(), 2);
    assert_eq!(p.matches("</script").count(), 2);
    // Inside the JSON the markup is \u003c-escaped, and it reads back unchanged.
    assert!(p.contains("\\u003cscript\\u003ealert(1)\\u003c/script\\u003e"));
    let d = view_data(&p);
    assert_eq!(d["record"], HOSTILE);
    assert_eq!(d["lead"], HOSTILE);
    // The figures (inline SVG) carry the rhythm label escaped by the SVG writer.
    assert!(p.contains("reference rhythm interval"));
    // Nothing is fetched from elsewhere (the SVG namespace URI is an identifier, not a fetch).
    for bad in ["src=", "<link", "@import", "https://"] {
        assert!(!p.contains(bad), "page contains {bad}");
    }
}

#[test]
fn interactive_view_holds_every_beat_with_its_waveform() {
    let a = fake(300, "rec", "(N");
    let tmp = tempfile::tempdir().unwrap();
    let p = page(&a, tmp.path(), ReportOptions::default());
    assert!(p.contains(&format!("All {} embedded beats are shown.", a.embedding.n)));
    assert!(p.contains("id=\"selftest-result\""));
    let d = view_data(&p);
    let m = a.embedding.n;
    assert_eq!(d["n_shown"], m);
    assert_eq!(d["dims"], 3);
    assert_eq!(d["coords"][0].as_array().unwrap().len(), m);
    assert_eq!(d["cls"].as_str().unwrap().len(), m);
    // Point k is feature row k: its time and class are those of its beat.
    let b = a.features.beat_index[7];
    assert_eq!(d["cls"].as_str().unwrap().as_bytes()[7] as char, label(b));
    let t = d["t"][7].as_f64().unwrap();
    assert!((t - a.beat_samples[b] as f64 / FS_HZ).abs() <= 0.005);
    // Waveforms: 250 Hz thinned by 3 (about 83 Hz); 0.25 s before the peak is 63 samples,
    // i.e. index 21 in the thinned window, where the R wave of an N beat peaks. The largest
    // amplitude in the view is a V beat (1.5 mV), so an N peak (1.0 mV) is 127·1/1.5 ≈ 85.
    assert_eq!(d["wave"]["len"], (63 + 113) / 3 + 1);
    assert!((d["wave"]["amp"].as_f64().unwrap() - 1.5).abs() < 1e-3);
    let k_n = (0..m)
        .find(|&k| label(a.features.beat_index[k]) == 'N')
        .unwrap();
    let bytes = unbase64(d["wave"]["b64"][k_n].as_str().unwrap());
    assert_eq!(bytes.len(), 59);
    let vals: Vec<i8> = bytes.iter().map(|&x| x as i8).collect();
    let (imax, vmax) = vals.iter().enumerate().max_by_key(|p| *p.1).unwrap();
    assert_eq!(imax, 21);
    assert!((i32::from(*vmax) - 85).abs() <= 1, "{vmax}");
}

#[test]
fn a_day_long_record_gives_a_page_under_5_mb() {
    // 24 h at about 72 beats/min: 104 000 beats, 21.6 M samples at 250 Hz.
    let n_beats = (86_400.0 / 0.83) as usize;
    let a = fake(n_beats, "day", "(N");
    assert!(a.duration_s > 86_400.0);
    let tmp = tempfile::tempdir().unwrap();
    let t0 = std::time::Instant::now();
    let p = page(&a, tmp.path(), ReportOptions::default());
    let mb = p.len() as f64 / 1e6;
    eprintln!(
        "24 h page: {mb:.2} MB for {} beats, written in {:.1} s",
        a.embedding.n,
        t0.elapsed().as_secs_f64()
    );
    // The limit the page promises (docs/report.md): 5 MB for a 24 h record.
    assert!(p.len() < 5_000_000, "page is {mb:.2} MB");
    let d = view_data(&p);
    assert_eq!(d["n_shown"], 4000);
    assert!(p.contains(&format!(
        "4000 of {} beats are shown, a random subsample drawn with the fixed seed",
        a.embedding.n
    )));
    // The subsample spreads over the whole day (seeded draw, not the first 4000 beats).
    let t: Vec<f64> = d["t"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    assert!(t.windows(2).all(|w| w[0] < w[1]), "points in time order");
    assert!(t[0] < 3600.0 && *t.last().unwrap() > 82_800.0);
}
