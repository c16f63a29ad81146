//! Reading recordings and point clouds, writing recordings and annotations.
//!
//! In: a path. Out: a [`Record`](crate::record::Record) (leads in physical units, sampling rate,
//! reference annotations) or [`Points`](crate::points::Points). Only this module and `report`
//! touch files. Every writer goes through [`write_atomic`]: a temporary sibling file, fsync, then
//! rename, so an interrupted run never leaves a half-written output.

pub mod annotations;
pub mod beat_table;
pub mod csv;
pub mod edf;
pub mod hdf5;
pub mod matv4;
pub mod model;
pub mod physionet;
pub mod tables;

pub use physionet::ChecksumPolicy;

use crate::error::{Error, Result};
use crate::points::Points;
use crate::record::Record;
use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

/// Counter that makes temporary names unique within the process.
static TEMP_COUNTER: AtomicU64 = AtomicU64::new(0);

/// Options for reading a recording.
#[derive(Debug, Clone, Default)]
pub struct ReadOptions {
    /// Sampling rate in Hz, for files that carry neither a rate nor a time column.
    pub fs_hz: Option<f64>,
    /// Reference annotation file to attach: a beatfold annotation CSV, or for a PhysioNet-format
    /// record also a PhysioNet annotation file. It must exist.
    pub annotations: Option<PathBuf>,
    /// For a PhysioNet-format record: the suffix of its annotation file beside the header
    /// (`atr` by default, e.g. `qrs`). Cannot be given together with `annotations`.
    pub annotation_suffix: Option<String>,
    /// For HDF5 input: the dataset holding the signal.
    pub dataset: Option<String>,
    /// For PhysioNet-format input: what a checksum mismatch does (default: a warning).
    pub checksum: ChecksumPolicy,
}

/// A record with the warnings its reader raised (e.g. missing values).
#[derive(Debug, Clone)]
pub struct Loaded {
    /// The record.
    pub record: Record,
    /// Non-fatal findings, each naming the file and place.
    pub warnings: Vec<String>,
}

/// Read a recording, choosing the reader by file extension (`.csv`, `.tsv`, `.txt`, `.edf`, `.h5`/`.hdf5`, `.hea`).
///
/// When `opts.annotations` is not given, a sibling `<stem>.annotations.csv` (as written by
/// `beatfold synth`) is attached if it exists.
pub fn read_record(path: &Path, opts: &ReadOptions) -> Result<Loaded> {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(|e| e.to_ascii_lowercase())
        .unwrap_or_default();
    let mut loaded = match ext.as_str() {
        "csv" | "tsv" | "txt" => csv::read_record(path, opts.fs_hz)?,
        "edf" => edf::read_record(path)?,
        "h5" | "hdf5" => hdf5::read_record(path, opts.dataset.as_deref(), opts.fs_hz)?,
        "hea" => {
            let file_given = opts.annotations.as_deref();
            let suffix = opts.annotation_suffix.as_deref();
            if let Some(sfx) = suffix {
                if file_given.is_some() {
                    return Err(Error::param(
                        "annotation suffix",
                        "give a reference file or an annotation suffix, not both",
                    ));
                }
                if sfx.is_empty() || sfx.contains(['/', '\\', '.']) {
                    return Err(Error::param(
                        "annotation suffix",
                        format!(
                            "`{sfx}` is not a file suffix (letters and digits, e.g. atr or qrs)"
                        ),
                    ));
                }
            }
            let ann_ext = match (suffix, file_given) {
                (Some(e), _) => Some(e),
                (None, Some(_)) => None,
                (None, None) => Some("atr"),
            };
            let ext_given = suffix;
            let (mut record, mut warnings) =
                physionet::read_record_checked(path, ann_ext, opts.checksum)?;
            if ext_given.is_none() && file_given.is_none() {
                // The default annotation file is optional.
                warnings.retain(|w| !w.contains("no annotation file"));
            }
            if let Some(f) = file_given {
                if !f.exists() {
                    return Err(Error::input(
                        f,
                        "reference",
                        "no such annotation file (for another annotation file beside the header, use its suffix option instead)",
                    ));
                }
                let is_csv = f.extension().is_some_and(|e| e.eq_ignore_ascii_case("csv"));
                if is_csv {
                    record.annotations = annotations::read(f, record.fs_hz)?;
                } else {
                    let bytes = std::fs::read(f).map_err(|e| Error::io(f, e))?;
                    let anns = physionet::parse_annotations(f, &bytes)?;
                    record.annotations =
                        physionet::to_annotations(&anns, record.fs_hz, record.n_samples());
                }
            }
            return Ok(Loaded { record, warnings });
        }
        other => {
            return Err(Error::input(
                path,
                "file name",
                format!(
                "unsupported extension `.{other}`; beatfold reads .csv, .tsv and .txt recordings"
            ),
            ))
        }
    };
    if let Some(sfx) = &opts.annotation_suffix {
        return Err(Error::param(
            "annotation suffix",
            format!(
                "`{sfx}` applies to PhysioNet-format records (.hea) only; {} is not one",
                path.display()
            ),
        ));
    }
    let ann_path = match &opts.annotations {
        Some(p) => Some(p.clone()),
        None => {
            let sib = annotations::sibling_path(path);
            sib.exists().then_some(sib)
        }
    };
    if let Some(ap) = ann_path {
        loaded.record.annotations = annotations::read(&ap, loaded.record.fs_hz)?;
    }
    Ok(loaded)
}

/// Read a plain numeric CSV point cloud: one row a point, no header, comma/tab/space separated.
pub fn read_points(path: &Path) -> Result<Points> {
    let text = read_text(path)?;
    let mut rows: Vec<Vec<f64>> = Vec::new();
    for (ln, line) in text.lines().enumerate() {
        let line = line.trim();
        if line.is_empty() || line.starts_with('#') {
            continue;
        }
        let mut row = Vec::new();
        for (col, field) in line
            .split([',', '\t', ';', ' '])
            .filter(|f| !f.is_empty())
            .enumerate()
        {
            let v: f64 = field.trim().parse().map_err(|_| {
                Error::input(
                    path,
                    format!("line {}, column {}", ln + 1, col + 1),
                    format!("`{field}` is not a number (a point cloud is numbers only, no header)"),
                )
            })?;
            if !v.is_finite() {
                return Err(Error::input(
                    path,
                    format!("line {}, column {}", ln + 1, col + 1),
                    "value is not finite",
                ));
            }
            row.push(v);
        }
        if let Some(first) = rows.first() {
            if first.len() != row.len() {
                return Err(Error::input(
                    path,
                    format!("line {}", ln + 1),
                    format!(
                        "{} values, but the first row has {}",
                        row.len(),
                        first.len()
                    ),
                ));
            }
        }
        rows.push(row);
    }
    if rows.is_empty() {
        return Err(Error::input(path, "whole file", "no points found"));
    }
    Points::from_rows(&rows).map_err(|e| Error::input(path, "rows", e.to_string()))
}

/// True when a CSV file looks like a plain point cloud (first data line all numbers, no
/// beatfold recording header) rather than a recording.
pub fn looks_like_points(path: &Path) -> bool {
    use std::io::BufRead;
    // Only the first non-empty line is needed; a recording can be gigabytes long.
    let Ok(file) = std::fs::File::open(path) else {
        return false;
    };
    let first = std::io::BufReader::new(file)
        .lines()
        .map_while(|l| l.ok())
        .find(|l| !l.trim().is_empty());
    match first.as_deref() {
        Some(first) if first.starts_with('#') => false,
        Some(first) => first
            .split([',', '\t', ';', ' '])
            .filter(|f| !f.is_empty())
            .all(|f| f.trim().parse::<f64>().is_ok()),
        None => false,
    }
}

/// A path's file name without its extension, as text (empty when there is none); the name
/// records and outputs take from their files.
pub fn file_stem(path: &Path) -> String {
    path.file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default()
}

/// Read a whole file as UTF-8 text with an error naming the file.
pub fn read_text(path: &Path) -> Result<String> {
    let bytes = std::fs::read(path).map_err(|e| Error::io(path, e))?;
    String::from_utf8(bytes).map_err(|e| {
        Error::input(
            path,
            format!("byte offset {}", e.utf8_error().valid_up_to()),
            "not valid UTF-8 text (save the file as UTF-8 or plain ASCII)",
        )
    })
}

/// View bytes already in memory as UTF-8 text; `path` names the file in the error.
pub fn text_from_bytes<'a>(path: &Path, bytes: &'a [u8]) -> Result<&'a str> {
    std::str::from_utf8(bytes).map_err(|e| {
        Error::input(
            path,
            format!("byte offset {}", e.valid_up_to()),
            "not valid UTF-8 text (save the file as UTF-8 or plain ASCII)",
        )
    })
}

/// SHA-256 of a file, lower-case hex.
pub fn sha256_file(path: &Path) -> Result<String> {
    use sha2::{Digest, Sha256};
    let mut f = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let mut h = Sha256::new();
    std::io::copy(&mut f, &mut h).map_err(|e| Error::io(path, e))?;
    Ok(h.finalize().iter().map(|b| format!("{b:02x}")).collect())
}

/// A fresh temporary sibling of `path`: same folder, hidden name, ending in `suffix`.
pub fn temp_sibling(path: &Path, suffix: &str) -> Result<PathBuf> {
    let name = path
        .file_name()
        .ok_or_else(|| Error::output(path, "output path has no file name"))?;
    let n = TEMP_COUNTER.fetch_add(1, Ordering::Relaxed);
    let tmp_name = format!(
        ".{}.tmp-{}-{}{}",
        name.to_string_lossy(),
        std::process::id(),
        n,
        suffix
    );
    Ok(path.with_file_name(tmp_name))
}

/// Flush a finished temporary file to disk and rename it onto `path`; remove it on failure.
pub fn commit_temp(tmp: &Path, path: &Path) -> Result<()> {
    let result = (|| {
        let f = fs::File::open(tmp).map_err(|e| Error::io(tmp, e))?;
        f.sync_all().map_err(|e| Error::io(tmp, e))?;
        drop(f);
        fs::rename(tmp, path).map_err(|e| Error::io(path, e))?;
        // Make the rename itself durable where the platform allows syncing a folder.
        if let Some(dir) = path.parent().filter(|d| !d.as_os_str().is_empty()) {
            if let Ok(d) = fs::File::open(dir) {
                let _ = d.sync_all();
            }
        }
        Ok(())
    })();
    if result.is_err() {
        let _ = fs::remove_file(tmp);
    }
    result
}

/// Write `bytes` to `path` atomically: into a temporary sibling file, `fsync`, then rename over
/// `path`. On failure the temporary file is removed and any existing file at `path` is left
/// unchanged.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    write_atomic_with(path, |w| w.write_all(bytes))
}

/// Write `path` atomically from a writer callback: `write` fills a temporary sibling file; only
/// when it returns `Ok` is the file flushed and renamed over `path`. When `write` fails part-way
/// (or the flush or rename fails) the temporary file is removed and any existing file at `path`
/// is left whole and unchanged.
pub fn write_atomic_with<F>(path: &Path, write: F) -> Result<()>
where
    F: FnOnce(&mut dyn Write) -> std::io::Result<()>,
{
    let tmp = temp_sibling(path, "")?;
    let written = (|| {
        let f = fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&tmp)
            .map_err(|e| Error::io(&tmp, e))?;
        let mut buf = std::io::BufWriter::new(f);
        write(&mut buf).map_err(|e| Error::io(path, e))?;
        let f = buf
            .into_inner()
            .map_err(|e| Error::io(&tmp, e.into_error()))?;
        f.sync_all().map_err(|e| Error::io(&tmp, e))?;
        Ok(())
    })();
    if let Err(e) = written {
        let _ = fs::remove_file(&tmp);
        return Err(e);
    }
    commit_temp(&tmp, path)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_reference_file_and_an_annotation_suffix_are_separate_options() {
        let hea = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/mitdb-excerpt/100x.hea");
        let by_suffix = ReadOptions {
            annotation_suffix: Some("atr".into()),
            ..ReadOptions::default()
        };
        let r = read_record(&hea, &by_suffix).unwrap().record;
        assert!(!r.annotations.beats.is_empty());
        let by_file = ReadOptions {
            annotations: Some(hea.with_extension("atr")),
            ..ReadOptions::default()
        };
        let f = read_record(&hea, &by_file).unwrap().record;
        assert_eq!(f.annotations.beats.len(), r.annotations.beats.len());
        // A file that does not exist is an error naming it, never taken for a suffix.
        let missing = ReadOptions {
            annotations: Some("qrs".into()),
            ..ReadOptions::default()
        };
        let e = read_record(&hea, &missing).unwrap_err().to_string();
        assert!(
            e.contains("qrs") && e.contains("no such annotation file"),
            "{e}"
        );
        // Both together, and a suffix for a CSV recording, are refused.
        let both = ReadOptions {
            annotations: Some(hea.with_extension("atr")),
            annotation_suffix: Some("atr".into()),
            ..ReadOptions::default()
        };
        assert!(read_record(&hea, &both).is_err());
        let dir = tempfile::tempdir().unwrap();
        let csv = dir.path().join("r.csv");
        std::fs::write(&csv, "# fs_hz=250\necg\n0\n1\n").unwrap();
        let e = read_record(&csv, &by_suffix).unwrap_err().to_string();
        assert!(e.contains("PhysioNet"), "{e}");
    }

    #[test]
    fn atomic_write_replaces_and_leaves_no_temp() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("a.txt");
        write_atomic(&p, b"one").unwrap();
        write_atomic(&p, b"two").unwrap();
        assert_eq!(std::fs::read(&p).unwrap(), b"two");
        let n = std::fs::read_dir(dir.path()).unwrap().count();
        assert_eq!(n, 1, "only the target file remains");
        // A write into a missing folder fails and names the file.
        let bad = dir.path().join("missing").join("b.txt");
        let err = write_atomic(&bad, b"x").unwrap_err().to_string();
        assert!(err.contains("b.txt"), "{err}");
    }

    #[test]
    fn points_csv_reads_and_rejects_ragged_rows() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("pts.csv");
        std::fs::write(&p, "1,2,3\n4,5,6\n").unwrap();
        let pts = read_points(&p).unwrap();
        assert_eq!((pts.n, pts.dim), (2, 3));
        assert_eq!(pts.row(1), &[4.0, 5.0, 6.0]);
        assert!(looks_like_points(&p));
        std::fs::write(&p, "1,2,3\n4,5\n").unwrap();
        let err = read_points(&p).unwrap_err().to_string();
        assert!(err.contains("line 2"), "{err}");
    }

    #[test]
    fn sha256_of_known_text() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("abc.txt");
        std::fs::write(&p, "abc").unwrap();
        // Source: FIPS 180-2, appendix B.1 (SHA-256 of "abc").
        assert_eq!(
            sha256_file(&p).unwrap(),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }
}
