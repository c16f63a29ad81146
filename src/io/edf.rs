//! EDF and EDF+ recordings: the European Data Format of Kemp, Värri, Rosa, Nielsen & Gade (1992),
//! Electroencephalogr Clin Neurophysiol 82:391, and its extension EDF+ of Kemp & Olivan (2003),
//! Clin Neurophysiol 114:1755 (continuous `EDF+C` and discontinuous `EDF+D` files, and the
//! `EDF Annotations` signal of time-stamped annotation lists).
//!
//! Reading: the fixed 256-byte header, the per-signal fields, digital-to-physical scaling
//! phys = pmin + (dig − dmin)·(pmax − pmin)/(dmax − dmin), data records of 16-bit little-endian
//! samples. beatfold's `Record` has one rate, so the ordinary signals sharing the rate of the
//! first ordinary signal are read and the others are reported in a warning. In EDF+D files each
//! data record is placed at the onset its first annotation list gives; gaps become missing
//! samples (NaN). Annotations whose text is a one-letter beat code become reference beats, and
//! texts starting with `(` become rhythm changes.
//!
//! Writing: EDF+C with one ordinary signal per lead (16-bit, digital range −32768..32767, the
//! physical range taken from the data) and an annotation signal carrying each record's start.

use super::Loaded;
use crate::error::{Error, Result};
use crate::record::{Annotations, BeatAnnotation, Lead, Record};
use std::path::Path;

/// Upper bound on the samples a header may promise per signal (24 h at 2 kHz); larger values are
/// refused before allocation.
pub const MAX_SAMPLES: usize = 24 * 3600 * 2000;

/// Highest sampling rate a header may give, Hz.
pub const MAX_FS_HZ: f64 = 1.0e6;

struct SigHeader {
    label: String,
    unit: String,
    pmin: f64,
    pmax: f64,
    dmin: i32,
    dmax: i32,
    spr: usize,
}

fn ascii(path: &Path, bytes: &[u8], off: usize, len: usize, what: &str) -> Result<String> {
    let b = bytes.get(off..off + len).ok_or_else(|| {
        Error::input(
            path,
            format!("byte offset {off}, field {what}"),
            "header ends early (file truncated?)",
        )
    })?;
    if let Some(i) = b.iter().position(|&c| !(32..=126).contains(&c)) {
        return Err(Error::input(
            path,
            format!("byte offset {}, field {what}", off + i),
            "header fields must be printable ASCII",
        ));
    }
    Ok(String::from_utf8_lossy(b).trim().to_string())
}

fn num<T: std::str::FromStr>(
    path: &Path,
    bytes: &[u8],
    off: usize,
    len: usize,
    what: &str,
) -> Result<T> {
    let s = ascii(path, bytes, off, len, what)?;
    s.parse::<T>().map_err(|_| {
        Error::input(
            path,
            format!("byte offset {off}, field {what}"),
            format!("`{s}` is not a valid number"),
        )
    })
}

/// Read an EDF or EDF+ file.
pub fn read_record(path: &Path) -> Result<Loaded> {
    let bytes = std::fs::read(path).map_err(|e| Error::io(path, e))?;
    read_record_from_bytes(path, &bytes)
}

/// [`read_record`] on the file's bytes already in memory; `path` gives the record name and the
/// file named in errors.
pub fn read_record_from_bytes(path: &Path, bytes: &[u8]) -> Result<Loaded> {
    let version = ascii(path, bytes, 0, 8, "version")?;
    if version != "0" {
        return Err(Error::input(
            path,
            "byte offset 0, field version",
            format!("`{version}`: an EDF file starts with version \"0\""),
        ));
    }
    let start_date = ascii(path, bytes, 168, 8, "start date")?;
    let start_time = ascii(path, bytes, 176, 8, "start time")?;
    let header_bytes: usize = num(path, bytes, 184, 8, "number of header bytes")?;
    let reserved = ascii(path, bytes, 192, 44, "reserved")?;
    let n_records: i64 = num(path, bytes, 236, 8, "number of data records")?;
    let duration: f64 = num(path, bytes, 244, 8, "duration of a data record")?;
    let ns: usize = num(path, bytes, 252, 4, "number of signals")?;
    if ns == 0 || ns > 4096 {
        return Err(Error::input(
            path,
            "byte offset 252, field number of signals",
            format!("{ns} signals; expected 1..4096"),
        ));
    }
    if header_bytes != 256 * (ns + 1) {
        return Err(Error::input(
            path,
            "byte offset 184, field number of header bytes",
            format!(
                "{header_bytes}, but {ns} signals need 256·(ns+1) = {}",
                256 * (ns + 1)
            ),
        ));
    }
    let edf_plus = reserved.starts_with("EDF+");
    let discontinuous = reserved.starts_with("EDF+D");
    let field_off = |k: usize| -> usize {
        // Offsets of the per-signal field groups, each `ns` fields wide.
        const W: [usize; 10] = [16, 80, 8, 8, 8, 8, 8, 80, 8, 32];
        256 + W[..k].iter().sum::<usize>() * ns
    };
    let mut sigs = Vec::with_capacity(ns);
    for i in 0..ns {
        let label = ascii(
            path,
            bytes,
            field_off(0) + 16 * i,
            16,
            &format!("signal {i} label"),
        )?;
        let unit = ascii(
            path,
            bytes,
            field_off(2) + 8 * i,
            8,
            &format!("signal {i} physical dimension"),
        )?;
        let pmin: f64 = num(
            path,
            bytes,
            field_off(3) + 8 * i,
            8,
            &format!("signal {i} physical minimum"),
        )?;
        let pmax: f64 = num(
            path,
            bytes,
            field_off(4) + 8 * i,
            8,
            &format!("signal {i} physical maximum"),
        )?;
        let dmin: i32 = num(
            path,
            bytes,
            field_off(5) + 8 * i,
            8,
            &format!("signal {i} digital minimum"),
        )?;
        let dmax: i32 = num(
            path,
            bytes,
            field_off(6) + 8 * i,
            8,
            &format!("signal {i} digital maximum"),
        )?;
        let spr: usize = num(
            path,
            bytes,
            field_off(8) + 8 * i,
            8,
            &format!("signal {i} samples per record"),
        )?;
        if dmax <= dmin || !(pmin.is_finite() && pmax.is_finite()) || pmax == pmin {
            return Err(Error::input(
                path,
                format!("signal {i} ({label})"),
                format!("invalid ranges: physical {pmin}..{pmax}, digital {dmin}..{dmax}"),
            ));
        }
        sigs.push(SigHeader {
            label,
            unit,
            pmin,
            pmax,
            dmin,
            dmax,
            spr,
        });
    }
    let rec_bytes: usize = sigs.iter().map(|s| s.spr * 2).sum();
    if rec_bytes == 0 {
        return Err(Error::input(
            path,
            "samples per record",
            "every signal has 0 samples per record",
        ));
    }
    let available = (bytes.len() - header_bytes.min(bytes.len())) / rec_bytes;
    let n_rec = if n_records < 0 {
        available
    } else {
        n_records as usize
    };
    if n_rec > available {
        return Err(Error::input(path, format!("byte offset {}", bytes.len()), format!("file ends early: the header promises {n_rec} data records of {rec_bytes} bytes, the file holds {available}")));
    }
    let ann_idx: Vec<usize> = (0..ns)
        .filter(|&i| edf_plus && sigs[i].label == "EDF Annotations")
        .collect();
    let ordinary: Vec<usize> = (0..ns).filter(|i| !ann_idx.contains(i)).collect();
    let Some(&first) = ordinary.first() else {
        return Err(Error::input(
            path,
            "signals",
            "no ordinary signal (only annotations)",
        ));
    };
    if !(duration > 0.0) {
        return Err(Error::input(
            path,
            "byte offset 244, field duration of a data record",
            format!("{duration} s; must be > 0"),
        ));
    }
    let spr0 = sigs[first].spr;
    let fs = spr0 as f64 / duration;
    if !(fs.is_finite() && fs > 0.0 && fs <= MAX_FS_HZ) {
        return Err(Error::input(
            path,
            format!("signal {first} ({}), samples per record / duration", sigs[first].label),
            format!(
                "{spr0} samples per {duration} s record give {fs} Hz, outside 0 < fs ≤ {MAX_FS_HZ} Hz; check the header fields"
            ),
        ));
    }
    let keep: Vec<usize> = ordinary
        .iter()
        .copied()
        .filter(|&i| sigs[i].spr == spr0)
        .collect();
    let mut warnings = Vec::new();
    let skipped: Vec<&str> = ordinary
        .iter()
        .filter(|i| !keep.contains(i))
        .map(|&i| sigs[i].label.as_str())
        .collect();
    if !skipped.is_empty() {
        warnings.push(format!(
            "{}: signals at other rates not read: {}",
            path.display(),
            skipped.join(", ")
        ));
    }
    // Offsets of each signal within a data record.
    let mut sig_off = vec![0usize; ns];
    for i in 1..ns {
        sig_off[i] = sig_off[i - 1] + sigs[i - 1].spr * 2;
    }
    // Record onsets and annotations.
    let mut onsets: Vec<f64> = (0..n_rec).map(|r| r as f64 * duration).collect();
    let mut tals: Vec<(f64, Option<f64>, String)> = Vec::new();
    for &ai in &ann_idx {
        for (r, onset) in onsets.iter_mut().enumerate() {
            let o = header_bytes + r * rec_bytes + sig_off[ai];
            let raw = &bytes[o..o + sigs[ai].spr * 2];
            let mut first_in_record = true;
            for tal in raw.split(|&b| b == 0).filter(|t| !t.is_empty()) {
                let parts: Vec<&[u8]> = tal.split(|&b| b == 0x14).collect();
                let head = String::from_utf8_lossy(parts[0]).to_string();
                let (on_s, dur_s) = match head.split_once('\u{15}') {
                    Some((a, b)) => (a.to_string(), b.parse::<f64>().ok()),
                    None => (head.clone(), None),
                };
                let t: f64 = on_s
                    .parse()
                    .ok()
                    .filter(|t: &f64| t.is_finite() && t.abs() <= 1.0e9)
                    .ok_or_else(|| {
                        Error::input(
                            path,
                            format!("data record {r}, annotation signal"),
                            format!("onset `{on_s}` is not a time in seconds (±1e9 s at most)"),
                        )
                    })?;
                if first_in_record {
                    if discontinuous {
                        *onset = t;
                    }
                    first_in_record = false;
                }
                for text in parts.iter().skip(1).filter(|p| !p.is_empty()) {
                    tals.push((t, dur_s, String::from_utf8_lossy(text).to_string()));
                }
            }
        }
    }
    let total = if discontinuous {
        let end = onsets.iter().map(|o| o + duration).fold(0.0, f64::max);
        (end * fs).round() as usize
    } else {
        n_rec * spr0
    };
    if total > MAX_SAMPLES {
        return Err(Error::input(
            path,
            "header",
            format!("{total} samples per signal exceed the limit of {MAX_SAMPLES}"),
        ));
    }
    if total < 2 {
        return Err(Error::input(
            path,
            "byte offset 236, field number of data records",
            format!(
                "{n_rec} data record(s) hold {total} sample(s) per signal; at least 2 are needed"
            ),
        ));
    }
    let mut leads: Vec<Lead> = keep
        .iter()
        .map(|&i| Lead {
            name: sigs[i].label.clone(),
            unit: sigs[i].unit.clone(),
            samples: vec![f64::NAN; total],
        })
        .collect();
    let mut filled_to = 0usize;
    for (r, &onset) in onsets.iter().enumerate() {
        let start = (onset * fs).round() as usize;
        if start < filled_to {
            return Err(Error::input(
                path,
                format!("data record {r}"),
                "data records overlap or are out of time order",
            ));
        }
        filled_to = start + spr0;
        for (li, &i) in keep.iter().enumerate() {
            let s = &sigs[i];
            let scale = (s.pmax - s.pmin) / (s.dmax - s.dmin) as f64;
            let o = header_bytes + r * rec_bytes + sig_off[i];
            for k in 0..spr0 {
                let d = i16::from_le_bytes([bytes[o + 2 * k], bytes[o + 2 * k + 1]]) as i32;
                if let Some(v) = leads[li].samples.get_mut(start + k) {
                    *v = s.pmin + (d - s.dmin) as f64 * scale;
                }
            }
        }
    }
    let mut ann = Annotations::default();
    let mut changes: Vec<(f64, String)> = Vec::new();
    for (t, _dur, text) in &tals {
        let tx = text.trim();
        let mut ch = tx.chars();
        match (ch.next(), ch.next()) {
            (Some(c), None) if super::physionet::is_beat(c) => ann.beats.push(BeatAnnotation {
                sample: (t * fs).round().max(0.0) as usize,
                code: c,
            }),
            (Some('('), _) => changes.push((*t, tx[1..].to_string())),
            _ => {}
        }
    }
    ann.rhythms = crate::record::rhythm_intervals(&changes, total as f64 / fs);
    ann.beats.sort_by_key(|b| b.sample);
    let name = super::file_stem(path);
    Ok(Loaded {
        record: Record {
            name,
            fs_hz: fs,
            leads,
            start_time: Some(format!("{start_date} {start_time}")),
            annotations: ann,
        },
        warnings,
    })
}

/// Format a number into at most `w` characters (EDF header fields are fixed-width ASCII).
fn fit(v: f64, w: usize) -> String {
    for prec in (0..=6).rev() {
        let mut s = format!("{v:.prec$}");
        if s.contains('.') {
            s = s.trim_end_matches('0').trim_end_matches('.').to_string();
        }
        if s.len() <= w {
            return s;
        }
    }
    format!("{}", v.round() as i64)
}

fn pad(s: &str, w: usize) -> String {
    let mut t: String = s
        .chars()
        .filter(|c| (' '..='~').contains(c))
        .take(w)
        .collect();
    while t.len() < w {
        t.push(' ');
    }
    t
}

/// Physical range written for a lead: the data range rounded outward to what 8 characters hold.
fn phys_range(samples: &[f64]) -> (f64, f64) {
    let lo = samples
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .fold(f64::INFINITY, f64::min);
    let hi = samples
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .fold(f64::NEG_INFINITY, f64::max);
    if !(lo.is_finite() && hi.is_finite()) {
        return (-1.0, 1.0);
    }
    let (lo, hi) = if hi > lo {
        (lo, hi)
    } else {
        (lo - 1.0, hi + 1.0)
    };
    let m = (hi - lo) * 1e-6;
    let lo_s: f64 = fit(lo - m, 8).parse().unwrap_or(lo - 1.0);
    let hi_s: f64 = fit(hi + m, 8).parse().unwrap_or(hi + 1.0);
    (lo_s.min(lo), hi_s.max(hi))
}

/// Render a record as EDF+C bytes (one-second data records when the rate is a whole number of
/// Hz; otherwise the shortest record holding a whole number of samples up to 10 s).
pub fn to_edf(rec: &Record) -> Result<Vec<u8>> {
    let fs = rec.fs_hz;
    let dur = (1..=10)
        .map(|d| d as f64)
        .find(|d| ((fs * d) - (fs * d).round()).abs() < 1e-9)
        .ok_or_else(|| {
            Error::param(
                "fs_hz",
                format!(
                    "{fs} Hz: EDF needs a whole number of samples per data record of at most 10 s"
                ),
            )
        })?;
    let spr = (fs * dur).round() as usize;
    let n = rec.n_samples();
    let n_rec = n.div_ceil(spr);
    let ns = rec.leads.len() + 1;
    let ann_spr = 30usize; // 60 bytes: room for "+<seconds>\x14\x14\x00"
    let mut h = String::new();
    h.push_str(&pad("0", 8));
    h.push_str(&pad("X X X X", 80));
    h.push_str(&pad(
        &format!("Startdate X X X beatfold {}", rec.name.replace(' ', "_")),
        80,
    ));
    h.push_str(&pad("01.01.00", 8));
    h.push_str(&pad("00.00.00", 8));
    h.push_str(&pad(&(256 * (ns + 1)).to_string(), 8));
    h.push_str(&pad("EDF+C", 44));
    h.push_str(&pad(&n_rec.to_string(), 8));
    h.push_str(&pad(&fit(dur, 8), 8));
    h.push_str(&pad(&ns.to_string(), 4));
    let ranges: Vec<(f64, f64)> = rec.leads.iter().map(|l| phys_range(&l.samples)).collect();
    let mut fields: Vec<Vec<String>> = vec![Vec::new(); 10];
    for (l, &(lo, hi)) in rec.leads.iter().zip(&ranges) {
        let vals = [
            l.name.clone(),
            String::new(),
            l.unit.clone(),
            fit(lo, 8),
            fit(hi, 8),
            "-32768".into(),
            "32767".into(),
            String::new(),
            spr.to_string(),
            String::new(),
        ];
        for (k, v) in vals.into_iter().enumerate() {
            fields[k].push(v);
        }
    }
    let ann_vals = [
        "EDF Annotations",
        "",
        "",
        "-1",
        "1",
        "-32768",
        "32767",
        "",
        &ann_spr.to_string(),
        "",
    ];
    for (k, v) in ann_vals.iter().enumerate() {
        fields[k].push(v.to_string());
    }
    const W: [usize; 10] = [16, 80, 8, 8, 8, 8, 8, 80, 8, 32];
    for (k, f) in fields.iter().enumerate() {
        for v in f {
            h.push_str(&pad(v, W[k]));
        }
    }
    let mut out = h.into_bytes();
    for r in 0..n_rec {
        for (l, &(lo, hi)) in rec.leads.iter().zip(&ranges) {
            let (lo, hi) = (
                fit(lo, 8).parse::<f64>().unwrap_or(lo),
                fit(hi, 8).parse::<f64>().unwrap_or(hi),
            );
            for k in 0..spr {
                let v = l.samples.get(r * spr + k).copied().unwrap_or(f64::NAN);
                let d = if v.is_finite() {
                    ((v - lo) / (hi - lo) * 65535.0 - 32768.0)
                        .round()
                        .clamp(-32768.0, 32767.0) as i16
                } else {
                    -32768
                };
                out.extend_from_slice(&d.to_le_bytes());
            }
        }
        let mut tal = format!("+{}\u{14}\u{14}\0", fit(r as f64 * dur, 12)).into_bytes();
        tal.resize(ann_spr * 2, 0);
        out.extend_from_slice(&tal);
    }
    Ok(out)
}

/// Write a record as EDF+C, atomically.
pub fn write_record(rec: &Record, path: &Path) -> Result<()> {
    super::write_atomic(path, &to_edf(rec)?)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rec() -> Record {
        Record {
            name: "edf test".into(),
            fs_hz: 250.0,
            leads: vec![
                Lead {
                    name: "ecg1".into(),
                    unit: "mV".into(),
                    samples: (0..1100).map(|i| (i as f64 * 0.05).sin() * 1.3).collect(),
                },
                Lead {
                    name: "ecg2".into(),
                    unit: "mV".into(),
                    samples: (0..1100)
                        .map(|i| (i as f64 * 0.02).cos() * 0.4 - 0.1)
                        .collect(),
                },
            ],
            start_time: None,
            annotations: Annotations::default(),
        }
    }

    #[test]
    fn write_then_read_is_bit_exact() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("a.edf");
        let r = rec();
        write_record(&r, &p).unwrap();
        let bytes = std::fs::read(&p).unwrap();
        let back = read_record(&p).unwrap().record;
        assert_eq!(back.fs_hz, 250.0);
        assert_eq!(back.leads.len(), 2);
        assert_eq!(back.n_samples(), 1250, "5 one-second records");
        // Source: EDF (Kemp et al. 1992): phys = pmin + (dig − dmin)·(pmax − pmin)/(dmax − dmin)
        // with the header's fields. Decode the written digital values independently of the
        // reader and require identical f64 values.
        let field = |off: usize| -> f64 {
            std::str::from_utf8(&bytes[off..off + 8])
                .unwrap()
                .trim()
                .parse()
                .unwrap()
        };
        for (li, lead) in back.leads.iter().enumerate() {
            let ns = 3;
            let pmin = field(256 + (16 + 80 + 8) * ns + 8 * li);
            let pmax = field(256 + (16 + 80 + 8 + 8) * ns + 8 * li);
            let scale = (pmax - pmin) / 65535.0;
            for k in 0..1100 {
                let (rec_i, s) = (k / 250, k % 250);
                let o = 1024 + rec_i * 1060 + li * 500 + 2 * s;
                let d = i16::from_le_bytes([bytes[o], bytes[o + 1]]) as i32;
                let expect = pmin + (d + 32768) as f64 * scale;
                assert_eq!(lead.samples[k].to_bits(), expect.to_bits());
                // ...and the written value is the nearest digital step to the original.
                assert!((lead.samples[k] - r.leads[li].samples[k]).abs() <= 0.5 * scale + 1e-12);
            }
        }
        assert_eq!(&bytes[192..197], b"EDF+C");
    }

    #[test]
    fn header_layout_offsets() {
        // Source: Kemp et al. (1992): header bytes = 256·(ns + 1), here ns = 2 leads + 1 annotation
        // signal; the record count sits at byte
        // offset 236, the record duration at 244 and the signal count at 252.
        let b = to_edf(&rec()).unwrap();
        assert_eq!(std::str::from_utf8(&b[184..192]).unwrap().trim(), "1024");
        assert_eq!(std::str::from_utf8(&b[236..244]).unwrap().trim(), "5");
        assert_eq!(std::str::from_utf8(&b[244..252]).unwrap().trim(), "1");
        assert_eq!(std::str::from_utf8(&b[252..256]).unwrap().trim(), "3");
        assert_eq!(b.len(), 1024 + 5 * (250 * 2 * 2 + 60));
    }

    #[test]
    fn malformed_files_give_errors_with_offsets() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("bad.edf");
        let good = to_edf(&rec()).unwrap();
        std::fs::write(&p, &good[..100]).unwrap();
        let e = read_record(&p).unwrap_err().to_string();
        assert!(e.contains("byte offset") && e.contains("bad.edf"), "{e}");
        let mut b = good.clone();
        b[252..256].copy_from_slice(b"x   ");
        std::fs::write(&p, &b).unwrap();
        let e = read_record(&p).unwrap_err().to_string();
        assert!(e.contains("number of signals"), "{e}");
        std::fs::write(&p, &good[..good.len() - 10]).unwrap();
        let e = read_record(&p).unwrap_err().to_string();
        assert!(e.contains("file ends early"), "{e}");
        let mut b = good.clone();
        b[300] = 0xff;
        std::fs::write(&p, &b).unwrap();
        let e = read_record(&p).unwrap_err().to_string();
        assert!(e.contains("printable ASCII"), "{e}");
    }

    #[test]
    fn edf_plus_annotations_become_beats_and_rhythms() {
        let mut b = to_edf(&rec()).unwrap();
        // Put TALs into the first record's annotation signal: a beat and a rhythm change.
        let o = 1024 + 1000;
        let tal = b"+0\x14\x14\x00+0.5\x14N\x14\x00+1.0\x14(AFIB\x14\x00";
        b[o..o + tal.len()].copy_from_slice(tal);
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("ann.edf");
        std::fs::write(&p, &b).unwrap();
        let r = read_record(&p).unwrap().record;
        assert_eq!(
            r.annotations.beats,
            vec![BeatAnnotation {
                sample: 125,
                code: 'N'
            }]
        );
        assert_eq!(r.annotations.rhythms.len(), 1);
        assert_eq!(r.annotations.rhythms[0].label, "AFIB");
        assert_eq!(r.annotations.rhythms[0].start_s, 1.0);
    }
}
