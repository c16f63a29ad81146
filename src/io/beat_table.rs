//! A per-beat feature table brought by the user (CSV): one row per beat, keyed by its sample or
//! its time, with numeric feature columns.
//!
//! Layout (our own): a header row; one key column, `sample` (an integer sample index at the
//! record's rate) or `time_s` (seconds from the record start); an optional `record` column
//! naming the record (file stem) a row belongs to, needed when several records are read; every
//! other column is a feature and must hold a finite number in every row. Lines starting with `#`
//! and empty lines are skipped. Commas separate fields (no quoting).

use crate::error::{Error, Result};
use std::path::{Path, PathBuf};

/// How a row names its beat.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum BeatKey {
    /// Sample index at the record's rate.
    Sample(usize),
    /// Seconds from the record start.
    Time(f64),
}

impl BeatKey {
    /// The key as a (fractional) sample position at `fs_hz`.
    pub fn sample_at(self, fs_hz: f64) -> f64 {
        match self {
            BeatKey::Sample(s) => s as f64,
            BeatKey::Time(t) => t * fs_hz,
        }
    }
}

/// One row of the table.
#[derive(Debug, Clone, PartialEq)]
pub struct BeatRow {
    /// Line number in the file (1-based), for messages.
    pub line: usize,
    /// The record the row names, when the table has a `record` column.
    pub record: Option<String>,
    /// The beat it describes.
    pub key: BeatKey,
    /// Feature values, one per feature column.
    pub values: Vec<f64>,
}

/// A parsed feature table.
#[derive(Debug, Clone, PartialEq)]
pub struct BeatTable {
    /// The file, for messages.
    pub path: PathBuf,
    /// Feature column names, in file order.
    pub names: Vec<String>,
    /// Whether the table has a `record` column.
    pub has_record: bool,
    /// Rows in file order.
    pub rows: Vec<BeatRow>,
}

/// Read a feature table file.
pub fn read(path: &Path) -> Result<BeatTable> {
    let text = super::read_text(path)?;
    parse(path, &text)
}

/// Parse feature-table text; `path` names the file in errors.
pub fn parse(path: &Path, text: &str) -> Result<BeatTable> {
    let mut lines = text
        .lines()
        .enumerate()
        .map(|(i, l)| (i + 1, l.trim()))
        .filter(|(_, l)| !l.is_empty() && !l.starts_with('#'));
    let Some((hline, header)) = lines.next() else {
        return Err(Error::input(path, "header", "the file holds no header row"));
    };
    let cols: Vec<&str> = header.split(',').map(str::trim).collect();
    let find = |n: &str| cols.iter().position(|c| c.eq_ignore_ascii_case(n));
    let (key_col, key_is_time) = match (find("sample"), find("time_s")) {
        (Some(_), Some(_)) => {
            return Err(Error::input(
                path,
                format!("line {hline}: header"),
                "both `sample` and `time_s` columns; keep one key column",
            ))
        }
        (Some(c), None) => (c, false),
        (None, Some(c)) => (c, true),
        (None, None) => {
            return Err(Error::input(
                path,
                format!("line {hline}: header"),
                "no key column: name one column `sample` (sample index) or `time_s` (seconds)",
            ))
        }
    };
    let rec_col = find("record");
    let feat_cols: Vec<usize> = (0..cols.len())
        .filter(|&c| c != key_col && Some(c) != rec_col)
        .collect();
    if feat_cols.is_empty() {
        return Err(Error::input(
            path,
            format!("line {hline}: header"),
            "no feature column besides the key and record columns",
        ));
    }
    if let Some(c) = feat_cols.iter().find(|&&c| cols[c].is_empty()) {
        return Err(Error::input(
            path,
            format!("line {hline}: header, column {}", c + 1),
            "empty column name",
        ));
    }
    let mut rows = Vec::new();
    for (ln, line) in lines {
        let f: Vec<&str> = line.split(',').map(str::trim).collect();
        if f.len() != cols.len() {
            return Err(Error::input(
                path,
                format!("line {ln}"),
                format!("{} fields, the header has {}", f.len(), cols.len()),
            ));
        }
        let key = if key_is_time {
            match f[key_col].parse::<f64>() {
                Ok(t) if t.is_finite() && t >= 0.0 => BeatKey::Time(t),
                _ => {
                    return Err(Error::input(
                        path,
                        format!("line {ln}, column `time_s`"),
                        format!("`{}` is not a time in seconds ≥ 0", f[key_col]),
                    ))
                }
            }
        } else {
            match f[key_col].parse::<usize>() {
                Ok(s) => BeatKey::Sample(s),
                Err(_) => {
                    return Err(Error::input(
                        path,
                        format!("line {ln}, column `sample`"),
                        format!("`{}` is not a sample index (an integer ≥ 0)", f[key_col]),
                    ))
                }
            }
        };
        let mut values = Vec::with_capacity(feat_cols.len());
        for &c in &feat_cols {
            match f[c].parse::<f64>() {
                Ok(v) if v.is_finite() => values.push(v),
                _ => {
                    return Err(Error::input(
                        path,
                        format!("line {ln}, column `{}`", cols[c]),
                        format!(
                            "`{}` is not a finite number (every feature needs a value)",
                            f[c]
                        ),
                    ))
                }
            }
        }
        rows.push(BeatRow {
            line: ln,
            record: rec_col.map(|c| f[c].to_string()),
            key,
            values,
        });
    }
    if rows.is_empty() {
        return Err(Error::input(path, "rows", "the table holds no beat row"));
    }
    Ok(BeatTable {
        path: path.to_path_buf(),
        names: feat_cols.iter().map(|&c| cols[c].to_string()).collect(),
        has_record: rec_col.is_some(),
        rows,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_keys_records_and_values() {
        let t = parse(
            Path::new("f.csv"),
            "# mine\nrecord,sample,width,area\n100,12,0.1,2\n100,400,0.2,-1e-3\n",
        )
        .unwrap();
        assert_eq!(t.names, vec!["width", "area"]);
        assert!(t.has_record);
        assert_eq!(t.rows[1].key, BeatKey::Sample(400));
        assert_eq!(t.rows[1].values, vec![0.2, -1e-3]);
        assert_eq!(t.rows[1].line, 4);
        let t = parse(Path::new("f.csv"), "time_s,x\n1.5,3\n").unwrap();
        assert_eq!(t.rows[0].key.sample_at(100.0), 150.0);
    }

    #[test]
    fn bad_tables_name_line_and_column() {
        let e = parse(Path::new("f.csv"), "sample,x\n10,abc\n")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("f.csv") && e.contains("line 2") && e.contains("`x`"),
            "{e}"
        );
        let e = parse(Path::new("f.csv"), "beat,x\n10,1\n")
            .unwrap_err()
            .to_string();
        assert!(e.contains("no key column"), "{e}");
        let e = parse(Path::new("f.csv"), "sample,x\n10,1,2\n")
            .unwrap_err()
            .to_string();
        assert!(e.contains("line 2") && e.contains("3 fields"), "{e}");
        let e = parse(Path::new("f.csv"), "sample,x\n-3,1\n")
            .unwrap_err()
            .to_string();
        assert!(e.contains("`sample`"), "{e}");
        let e = parse(Path::new("f.csv"), "sample\n3\n")
            .unwrap_err()
            .to_string();
        assert!(e.contains("no feature column"), "{e}");
    }
}
