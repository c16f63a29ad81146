//! Delimited-text recordings (CSV/TSV).
//!
//! Accepted layout: optional `#` comment lines (a `fs_hz=…` or `unit=…` pair in a comment is
//! used), an optional header line, then one row per sample with one column per lead. A column
//! named `time`, `time_s`, `t` or `seconds` holds sample times in seconds; the sampling rate is
//! derived from it and must be uniform. Without a time column or a `fs_hz=` comment, the rate
//! must be given. Decimal commas are refused with a clear message; empty, `NA` and `NaN` fields are
//! kept as missing samples (NaN) and reported.

use super::Loaded;
use crate::error::{Error, Result};
use crate::record::{Annotations, Lead, Record};
use std::fmt::Write as _;
use std::path::Path;

/// Most columns a recording may have (leads plus a time column); wider files are refused before
/// any column is allocated.
pub const MAX_COLUMNS: usize = 4096;

const TIME_NAMES: [&str; 5] = ["time", "time_s", "t", "seconds", "time (s)"];

fn split_fields(line: &str, delim: char) -> Vec<&str> {
    line.split(delim).map(str::trim).collect()
}

fn looks_like_decimal_comma(field: &str) -> bool {
    let f = field.trim_start_matches(['-', '+']);
    let mut parts = f.split(',');
    matches!(
        (parts.next(), parts.next(), parts.next()),
        (Some(a), Some(b), None)
            if !a.is_empty() && !b.is_empty()
                && a.bytes().all(|c| c.is_ascii_digit())
                && b.bytes().all(|c| c.is_ascii_digit())
    )
}

fn parse_field(field: &str) -> Option<Option<f64>> {
    // Some(None) = missing value, None = not a number.
    let f = field.trim().trim_matches('"');
    if f.is_empty() || f.eq_ignore_ascii_case("na") || f.eq_ignore_ascii_case("nan") {
        return Some(None);
    }
    f.parse::<f64>().ok().map(Some)
}

/// Read a CSV/TSV recording. `fs_hz` is used when the file has no time column and no `fs_hz=`
/// comment; if both a time column and `fs_hz` are given they must agree within 1 %.
pub fn read_record(path: &Path, fs_hz: Option<f64>) -> Result<Loaded> {
    let bytes = std::fs::read(path).map_err(|e| Error::io(path, e))?;
    read_record_from_bytes(path, &bytes, fs_hz)
}

/// [`read_record`] on the file's bytes already in memory; `path` gives the record name, the
/// `.tsv` delimiter choice and the file named in errors.
pub fn read_record_from_bytes(path: &Path, bytes: &[u8], fs_hz: Option<f64>) -> Result<Loaded> {
    let text = super::text_from_bytes(path, bytes)?;
    let is_tsv = path
        .extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| e.eq_ignore_ascii_case("tsv"));
    let mut comment_fs: Option<f64> = None;
    let mut unit = String::from("mV");
    let mut data_lines: Vec<(usize, &str)> = Vec::new();
    for (i, line) in text.lines().enumerate() {
        let t = line.trim();
        if t.is_empty() {
            continue;
        }
        if let Some(c) = t.strip_prefix('#') {
            for kv in c.split([';', ',', ' ']) {
                if let Some(v) = kv.trim().strip_prefix("fs_hz=") {
                    comment_fs = v.trim().parse().ok();
                }
                if let Some(v) = kv.trim().strip_prefix("unit=") {
                    unit = v.trim().to_string();
                }
            }
            continue;
        }
        data_lines.push((i + 1, line.trim_end_matches('\r')));
    }
    let Some(&(first_ln, first)) = data_lines.first() else {
        return Err(Error::input(path, "whole file", "no data rows"));
    };
    let delim = if is_tsv || first.contains('\t') {
        '\t'
    } else if first.contains(';') {
        ';'
    } else {
        ','
    };
    let first_fields = split_fields(first, delim);
    let has_header = first_fields.iter().any(|f| parse_field(f).is_none());
    let ncol = first_fields.len();
    if ncol > MAX_COLUMNS {
        return Err(Error::input(
            path,
            format!("line {first_ln}"),
            format!(
                "{ncol} columns; beatfold reads at most {MAX_COLUMNS} (is the delimiter right? rows are samples, columns are leads)"
            ),
        ));
    }
    let names: Vec<String> = if has_header {
        first_fields
            .iter()
            .map(|s| s.trim_matches('"').to_string())
            .collect()
    } else {
        (0..ncol).map(|i| format!("lead{i}")).collect()
    };
    let time_col = if has_header {
        names
            .iter()
            .position(|n| TIME_NAMES.contains(&n.to_ascii_lowercase().as_str()))
    } else {
        None
    };
    // No capacity up front: a first line of many empty fields must not reserve
    // columns × rows before any row has been checked.
    let mut cols: Vec<Vec<f64>> = vec![Vec::new(); ncol];
    let mut missing = vec![0usize; ncol];
    let rows = if has_header {
        &data_lines[1..]
    } else {
        &data_lines[..]
    };
    for &(ln, line) in rows {
        let fields = split_fields(line, delim);
        if fields.len() != ncol {
            let hint = if delim == ',' && fields.len() > ncol {
                " (decimal commas? beatfold needs a decimal point, e.g. 0.25 not 0,25)"
            } else {
                ""
            };
            return Err(Error::input(
                path,
                format!("line {ln}"),
                format!(
                    "{} fields, but line {first_ln} has {ncol}{hint}",
                    fields.len()
                ),
            ));
        }
        for (c, f) in fields.iter().enumerate() {
            match parse_field(f) {
                Some(Some(v)) => cols[c].push(v),
                Some(None) => {
                    missing[c] += 1;
                    cols[c].push(f64::NAN)
                }
                None if looks_like_decimal_comma(f) => {
                    return Err(Error::input(
                        path,
                        format!("line {ln}, column {}", c + 1),
                        format!(
                            "`{f}` uses a decimal comma; convert the file to decimal points (0.25, not 0,25)"
                        ),
                    ))
                }
                None => {
                    return Err(Error::input(
                        path,
                        format!("line {ln}, column {}", c + 1),
                        format!("`{f}` is not a number"),
                    ))
                }
            }
        }
    }
    let n = cols.first().map_or(0, Vec::len);
    if n < 2 {
        return Err(Error::input(path, "data rows", "fewer than 2 samples"));
    }
    let mut warnings = Vec::new();
    let fs = match time_col {
        Some(tc) => {
            let t = &cols[tc];
            if t.iter().any(|v| !v.is_finite()) {
                return Err(Error::input(
                    path,
                    format!("column `{}`", names[tc]),
                    "time column has missing values",
                ));
            }
            let span = t[n - 1] - t[0];
            if span <= 0.0 {
                return Err(Error::input(
                    path,
                    format!("column `{}`", names[tc]),
                    "times do not increase",
                ));
            }
            let dt = span / (n - 1) as f64;
            if let Some(i) = (1..n).find(|&i| ((t[i] - t[i - 1]) - dt).abs() > 0.01 * dt) {
                return Err(Error::input(
                    path,
                    format!("column `{}`, data row {}", names[tc], i + 1),
                    format!(
                        "sample times are not uniform (step {:.6} s, expected {dt:.6} s); beatfold needs a uniformly sampled recording",
                        t[i] - t[i - 1]
                    ),
                ));
            }
            let derived = 1.0 / dt;
            if let Some(given) = fs_hz.or(comment_fs) {
                if ((given - derived) / derived).abs() > 0.01 {
                    return Err(Error::input(
                        path,
                        format!("column `{}`", names[tc]),
                        format!("time column gives {derived:.3} Hz but {given} Hz was given"),
                    ));
                }
            }
            derived
        }
        None => fs_hz.or(comment_fs).ok_or_else(|| {
            Error::input(
                path,
                "sampling rate",
                "no time column and no rate: give the rate (e.g. --fs 250) or add a `time_s` column",
            )
        })?,
    };
    if !(fs.is_finite() && fs > 0.0 && fs <= 100_000.0) {
        return Err(Error::input(
            path,
            "sampling rate",
            format!("{fs} Hz is outside 0 < fs ≤ 100000 Hz"),
        ));
    }
    let mut leads = Vec::new();
    for (c, samples) in cols.into_iter().enumerate() {
        if Some(c) == time_col {
            continue;
        }
        if missing[c] > 0 {
            warnings.push(format!(
                "{}: column `{}`: {} missing value(s) of {n}; they are treated as gaps",
                path.display(),
                names[c],
                missing[c]
            ));
        }
        leads.push(Lead {
            name: names[c].clone(),
            unit: unit.clone(),
            samples,
        });
    }
    if leads.is_empty() {
        return Err(Error::input(path, "columns", "no signal column"));
    }
    let name = super::file_stem(path);
    Ok(Loaded {
        record: Record {
            name,
            fs_hz: fs,
            leads,
            start_time: None,
            annotations: Annotations::default(),
        },
        warnings,
    })
}

/// Render a record as beatfold CSV text: comments with the rate, unit and notice, a header
/// `time_s,<lead names>`, then one row per sample.
pub fn record_to_csv(rec: &Record) -> String {
    let n = rec.n_samples();
    let unit = rec.leads.first().map_or("mV", |l| l.unit.as_str());
    let mut s = String::with_capacity(n * (12 + 11 * rec.leads.len()));
    let _ = writeln!(s, "# beatfold recording; fs_hz={}; unit={unit}", rec.fs_hz);
    let _ = writeln!(s, "# {}", crate::NOTICE);
    s.push_str("time_s");
    for l in &rec.leads {
        s.push(',');
        s.push_str(&l.name.replace([',', '\n'], "_"));
    }
    s.push('\n');
    for i in 0..n {
        let _ = write!(s, "{:.6}", i as f64 / rec.fs_hz);
        for l in &rec.leads {
            let _ = write!(s, ",{:.6}", l.samples[i]);
        }
        s.push('\n');
    }
    s
}

/// Write a record as CSV atomically.
pub fn write_record(rec: &Record, path: &Path) -> Result<()> {
    super::write_atomic(path, record_to_csv(rec).as_bytes())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn write(dir: &Path, name: &str, text: &str) -> std::path::PathBuf {
        let p = dir.join(name);
        std::fs::write(&p, text).unwrap();
        p
    }

    #[test]
    fn round_trip_keeps_rate_names_and_values() {
        let rec = Record {
            name: "r".into(),
            fs_hz: 250.0,
            leads: vec![
                Lead {
                    name: "ecg1".into(),
                    unit: "mV".into(),
                    samples: (0..500).map(|i| (i as f64 * 0.01).sin()).collect(),
                },
                Lead {
                    name: "ecg2".into(),
                    unit: "mV".into(),
                    samples: (0..500).map(|i| (i as f64 * 0.02).cos()).collect(),
                },
            ],
            start_time: None,
            annotations: Annotations::default(),
        };
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("r.csv");
        write_record(&rec, &p).unwrap();
        let back = read_record(&p, None).unwrap().record;
        assert!((back.fs_hz - 250.0).abs() < 1e-9);
        assert_eq!(back.leads.len(), 2);
        assert_eq!(back.leads[1].name, "ecg2");
        for (a, b) in rec.leads[0].samples.iter().zip(&back.leads[0].samples) {
            assert!((a - b).abs() <= 5e-7, "written with 6 decimals");
        }
    }

    #[test]
    fn headerless_needs_a_rate() {
        let dir = tempfile::tempdir().unwrap();
        let p = write(dir.path(), "h.csv", "0.1,0.2\n0.3,0.4\n0.5,0.6\n");
        let err = read_record(&p, None).unwrap_err().to_string();
        assert!(err.contains("--fs"), "{err}");
        let r = read_record(&p, Some(100.0)).unwrap().record;
        assert_eq!(r.leads.len(), 2);
        assert_eq!(r.leads[0].name, "lead0");
        assert_eq!(r.leads[1].samples, vec![0.2, 0.4, 0.6]);
    }

    #[test]
    fn decimal_commas_are_refused_with_a_clear_message() {
        let dir = tempfile::tempdir().unwrap();
        let p = write(dir.path(), "d.csv", "time;ecg\n0,000;0,25\n0,004;0,30\n");
        let err = read_record(&p, None).unwrap_err().to_string();
        assert!(
            err.contains("decimal comma") && err.contains("d.csv"),
            "{err}"
        );
        let p = write(dir.path(), "e.csv", "ecg\n0,25\n0,30\n");
        let err = read_record(&p, Some(250.0)).unwrap_err().to_string();
        assert!(
            err.contains("decimal commas?") && err.contains("line 2"),
            "{err}"
        );
    }

    #[test]
    fn missing_values_are_reported_and_kept_as_gaps() {
        let dir = tempfile::tempdir().unwrap();
        let p = write(
            dir.path(),
            "m.tsv",
            "time_s\tv1\n0.00\t1\n0.01\t\n0.02\tNaN\n0.03\t4\n",
        );
        let l = read_record(&p, None).unwrap();
        assert!((l.record.fs_hz - 100.0).abs() < 1e-6);
        assert_eq!(l.warnings.len(), 1);
        assert!(l.warnings[0].contains("2 missing"), "{}", l.warnings[0]);
        assert!(l.record.leads[0].samples[1].is_nan());
    }

    #[test]
    fn non_uniform_time_is_refused() {
        let dir = tempfile::tempdir().unwrap();
        let p = write(dir.path(), "g.csv", "t,v\n0,1\n0.01,2\n0.05,3\n0.06,4\n");
        let err = read_record(&p, None).unwrap_err().to_string();
        assert!(err.contains("not uniform"), "{err}");
    }
}
