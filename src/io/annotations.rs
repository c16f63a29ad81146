//! beatfold's annotation CSV: reference beats and rhythm intervals of a recording.
//!
//! Layout (our own): header `kind,sample,time_s,end_s,label`; a beat row is
//! `beat,<sample>,<time_s>,,<code>`, a rhythm row is `rhythm,,<start_s>,<end_s>,<label>`.
//! `synth` writes one beside each recording as `<stem>.annotations.csv`. A plain list of beats
//! (one number per line: sample indices, or times in seconds when the header says `time_s`) is
//! also accepted, so beats from any detector can be used as a reference.

use crate::error::{Error, Result};
use crate::record::{Annotations, BeatAnnotation, RhythmInterval};
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// The annotation file that `synth` writes beside `recording`.
pub fn sibling_path(recording: &Path) -> PathBuf {
    let stem = super::file_stem(recording);
    recording.with_file_name(format!("{stem}.annotations.csv"))
}

/// Render annotations as CSV text.
pub fn to_csv(ann: &Annotations, fs_hz: f64) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "# beatfold annotations; fs_hz={fs_hz}");
    s.push_str("kind,sample,time_s,end_s,label\n");
    for b in &ann.beats {
        let _ = writeln!(
            s,
            "beat,{},{:.6},,{}",
            b.sample,
            b.sample as f64 / fs_hz,
            b.code
        );
    }
    for r in &ann.rhythms {
        let _ = writeln!(
            s,
            "rhythm,,{:.6},{:.6},{}",
            r.start_s,
            r.end_s,
            r.label.replace([',', '\n'], "_")
        );
    }
    s
}

/// Write annotations atomically.
pub fn write(ann: &Annotations, fs_hz: f64, path: &Path) -> Result<()> {
    super::write_atomic(path, to_csv(ann, fs_hz).as_bytes())
}

/// Read an annotation CSV (beatfold layout or a plain beat list). `fs_hz` converts times to
/// samples.
pub fn read(path: &Path, fs_hz: f64) -> Result<Annotations> {
    let bytes = std::fs::read(path).map_err(|e| Error::io(path, e))?;
    read_from_bytes(path, &bytes, fs_hz)
}

/// [`read`] on the file's bytes already in memory; `path` names the file in errors.
pub fn read_from_bytes(path: &Path, bytes: &[u8], fs_hz: f64) -> Result<Annotations> {
    let text = super::text_from_bytes(path, bytes)?;
    let mut ann = Annotations::default();
    let mut header: Option<Vec<String>> = None;
    for (i, line) in text.lines().enumerate() {
        let ln = i + 1;
        let t = line.trim();
        if t.is_empty() || t.starts_with('#') {
            continue;
        }
        let fields: Vec<&str> = t.split(',').map(str::trim).collect();
        if header.is_none() && fields.iter().any(|f| f.parse::<f64>().is_err()) {
            header = Some(fields.iter().map(|f| f.to_ascii_lowercase()).collect());
            continue;
        }
        let place = || format!("line {ln}");
        let num = |f: &str, what: &str| -> Result<f64> {
            f.parse::<f64>()
                .ok()
                .filter(|v| v.is_finite() && *v >= 0.0)
                .ok_or_else(|| {
                    Error::input(
                        path,
                        place(),
                        format!("{what} `{f}` is not a non-negative number"),
                    )
                })
        };
        let is_full = header
            .as_ref()
            .is_some_and(|h| h.first().map(String::as_str) == Some("kind"));
        if is_full {
            if fields.len() < 5 {
                return Err(Error::input(
                    path,
                    place(),
                    "expected 5 fields: kind,sample,time_s,end_s,label",
                ));
            }
            match fields[0] {
                "beat" => {
                    let sample = if fields[1].is_empty() {
                        (num(fields[2], "time_s")? * fs_hz).round() as usize
                    } else {
                        num(fields[1], "sample")? as usize
                    };
                    let code = fields[4].chars().next().unwrap_or('Q');
                    ann.beats.push(BeatAnnotation { sample, code });
                }
                "rhythm" => {
                    let start_s = num(fields[2], "time_s")?;
                    let end_s = num(fields[3], "end_s")?;
                    if end_s < start_s {
                        return Err(Error::input(
                            path,
                            place(),
                            "rhythm interval ends before it starts",
                        ));
                    }
                    ann.rhythms.push(RhythmInterval {
                        start_s,
                        end_s,
                        label: fields[4].to_string(),
                    });
                }
                other => {
                    return Err(Error::input(
                        path,
                        place(),
                        format!("unknown kind `{other}` (expected beat or rhythm)"),
                    ))
                }
            }
        } else {
            let in_time = header
                .as_ref()
                .and_then(|h| h.first())
                .is_some_and(|h| h.contains("time") || h == "t" || h.ends_with("_s"));
            let v = num(fields[0], "beat position")?;
            let sample = if in_time {
                (v * fs_hz).round() as usize
            } else {
                v as usize
            };
            ann.beats.push(BeatAnnotation { sample, code: 'Q' });
        }
    }
    ann.beats.sort_by_key(|b| b.sample);
    Ok(ann)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trip_of_beats_and_rhythms() {
        let ann = Annotations {
            beats: vec![
                BeatAnnotation {
                    sample: 10,
                    code: 'N',
                },
                BeatAnnotation {
                    sample: 260,
                    code: 'V',
                },
            ],
            rhythms: vec![RhythmInterval {
                start_s: 0.0,
                end_s: 2.5,
                label: "irregular".into(),
            }],
        };
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("x.annotations.csv");
        write(&ann, 250.0, &p).unwrap();
        assert_eq!(read(&p, 250.0).unwrap(), ann);
    }

    #[test]
    fn plain_lists_in_samples_or_seconds() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("b.csv");
        std::fs::write(&p, "100\n350\n600\n").unwrap();
        let s: Vec<usize> = read(&p, 250.0)
            .unwrap()
            .beats
            .iter()
            .map(|b| b.sample)
            .collect();
        assert_eq!(s, vec![100, 350, 600]);
        std::fs::write(&p, "time_s\n0.4\n1.4\n").unwrap();
        let s: Vec<usize> = read(&p, 250.0)
            .unwrap()
            .beats
            .iter()
            .map(|b| b.sample)
            .collect();
        assert_eq!(s, vec![100, 350]);
        std::fs::write(&p, "time_s\n0.4\n-1\n").unwrap();
        let err = read(&p, 250.0).unwrap_err().to_string();
        assert!(err.contains("line 3"), "{err}");
    }
}
