//! HDF5 input: a signal from a named dataset, and a readable summary of any HDF5 file (such as
//! beatfold's own results file), through the pure-Rust `hdf5-pure` reader.
//!
//! A signal dataset is 1-D (one lead) or 2-D with the leads along the shorter axis (at most 64
//! leads). The sampling rate comes from an attribute `fs_hz`, `fs`, `sampling_rate` or
//! `sample_rate` of the dataset or of its parent group, or from the caller; the unit from an
//! attribute `unit` or `units` (default mV).

use super::Loaded;
use crate::error::{Error, Result};
use crate::record::{Annotations, Lead, Record};
use hdf5_pure::{AttrValue, File};
use std::collections::HashMap;
use std::fmt::Write as _;
use std::path::Path;

/// Deepest group nesting walked when listing datasets.
const MAX_GROUP_DEPTH: usize = 32;
/// Most groups (and datasets) walked when listing datasets.
const MAX_GROUPS: usize = 10_000;

const RATE_KEYS: [&str; 4] = ["fs_hz", "fs", "sampling_rate", "sample_rate"];

fn attr_f64(a: &AttrValue) -> Option<f64> {
    match a {
        AttrValue::F64(v) => Some(*v),
        AttrValue::F32(v) => Some(*v as f64),
        AttrValue::I64(v) => Some(*v as f64),
        AttrValue::I32(v) => Some(*v as f64),
        AttrValue::U64(v) => Some(*v as f64),
        AttrValue::U32(v) => Some(*v as f64),
        AttrValue::I16(v) => Some(*v as f64),
        AttrValue::U16(v) => Some(*v as f64),
        other => other.as_str().and_then(|s| s.trim().parse().ok()),
    }
}

fn rate_of(attrs: &HashMap<String, AttrValue>) -> Option<f64> {
    RATE_KEYS
        .iter()
        .find_map(|k| attrs.get(*k).and_then(attr_f64))
}

fn open(path: &Path) -> Result<File> {
    if !path.exists() {
        return Err(Error::io(
            path,
            std::io::Error::from(std::io::ErrorKind::NotFound),
        ));
    }
    File::open(path).map_err(|e| {
        Error::input(
            path,
            "HDF5 structure",
            format!("not a readable HDF5 file: {e}"),
        )
    })
}

/// Every dataset path in the file (depth-first, sorted within each group).
pub fn dataset_paths(path: &Path) -> Result<Vec<String>> {
    let f = open(path)?;
    dataset_paths_of(path, &f)
}

/// Read a signal dataset (`dataset` like `/ecg` or `signals/lead2`) as a record.
pub fn read_record(path: &Path, dataset: Option<&str>, fs_hz: Option<f64>) -> Result<Loaded> {
    let f = open(path)?;
    record_from_file(path, &f, dataset, fs_hz)
}

/// [`read_record`] on the file's bytes already in memory; `path` gives the record name and the
/// file named in errors.
pub fn read_record_from_bytes(
    path: &Path,
    bytes: &[u8],
    dataset: Option<&str>,
    fs_hz: Option<f64>,
) -> Result<Loaded> {
    let f = File::from_bytes(bytes.to_vec()).map_err(|e| {
        Error::input(
            path,
            "HDF5 structure",
            format!("not a readable HDF5 file: {e}"),
        )
    })?;
    record_from_file(path, &f, dataset, fs_hz)
}

/// Every dataset path of an open file (depth-first, sorted within each group).
fn dataset_paths_of(path: &Path, f: &File) -> Result<Vec<String>> {
    let mut out = Vec::new();
    let mut visited = 0usize;
    let mut stack = vec![String::new()];
    while let Some(g) = stack.pop() {
        let group = if g.is_empty() {
            f.root()
        } else {
            f.group(&g)
                .map_err(|e| Error::input(path, format!("group /{g}"), e.to_string()))?
        };
        let mut ds = group
            .datasets()
            .map_err(|e| Error::input(path, format!("group /{g}"), e.to_string()))?;
        ds.sort();
        for d in ds {
            out.push(if g.is_empty() { d } else { format!("{g}/{d}") });
        }
        let mut gs = group
            .groups()
            .map_err(|e| Error::input(path, format!("group /{g}"), e.to_string()))?;
        gs.sort();
        visited += 1;
        for s in gs.into_iter().rev() {
            // A corrupt file can make a group its own child (a cycle): stop at a depth, a
            // number of groups or a number of datasets no real signal file has.
            let depth = g.matches('/').count() + 1;
            if depth > MAX_GROUP_DEPTH || visited > MAX_GROUPS || out.len() > MAX_GROUPS {
                return Err(Error::input(
                    path,
                    format!("group /{g}"),
                    "group tree deeper than 32 levels, or more than 10 000 groups or datasets: cyclic or corrupt file? Name the signal with --dataset",
                ));
            }
            stack.push(if g.is_empty() { s } else { format!("{g}/{s}") });
        }
    }
    Ok(out)
}

fn record_from_file(
    path: &Path,
    f: &File,
    dataset: Option<&str>,
    fs_hz: Option<f64>,
) -> Result<Loaded> {
    let name = match dataset {
        Some(d) => d.trim_start_matches('/').to_string(),
        None => {
            let all = dataset_paths_of(path, f)?;
            match all.as_slice() {
                [only] => only.clone(),
                _ => {
                    return Err(Error::input(
                        path,
                        "dataset",
                        format!(
                            "name the signal with --dataset; the file holds: {}",
                            if all.is_empty() {
                                "no dataset".into()
                            } else {
                                all.join(", ")
                            }
                        ),
                    ))
                }
            }
        }
    };
    let place = format!("dataset /{name}");
    let ds = f
        .dataset(&name)
        .map_err(|e| Error::input(path, &place, format!("cannot open: {e}")))?;
    let shape = ds
        .shape()
        .map_err(|e| Error::input(path, &place, e.to_string()))?;
    let limit = 2 * super::edf::MAX_SAMPLES as u64;
    // Checked: a corrupt header can give dimensions whose product overflows.
    let total: u64 = shape
        .iter()
        .try_fold(1u64, |acc, &d| acc.checked_mul(d))
        .unwrap_or(u64::MAX);
    if total > limit {
        return Err(Error::input(
            path,
            &place,
            format!(
                "{total} values exceed what beatfold reads ({})",
                2 * super::edf::MAX_SAMPLES
            ),
        ));
    }
    let data = ds
        .read_f64()
        .map_err(|e| Error::input(path, &place, format!("not numeric or unreadable: {e}")))?;
    if data.len() as u64 != total {
        return Err(Error::input(
            path,
            &place,
            format!(
                "shape {shape:?} promises {total} values but {} were read (corrupt file?)",
                data.len()
            ),
        ));
    }
    let attrs = ds.attrs().unwrap_or_default();
    let parent = name.rsplit_once('/').map(|(p, _)| p.to_string());
    let parent_attrs = match &parent {
        Some(p) => f
            .group(p)
            .ok()
            .and_then(|g| g.attrs().ok())
            .unwrap_or_default(),
        None => f.root().attrs().unwrap_or_default(),
    };
    let fs = rate_of(&attrs)
        .or_else(|| rate_of(&parent_attrs))
        .or(fs_hz)
        .ok_or_else(|| {
            Error::input(
                path,
                &place,
                "no sampling rate: add an attribute `fs_hz` to the dataset or give --fs",
            )
        })?;
    if !(fs.is_finite() && fs > 0.0 && fs <= 100_000.0) {
        return Err(Error::input(
            path,
            &place,
            format!("sampling rate {fs} Hz is outside 0 < fs ≤ 100000"),
        ));
    }
    let unit = ["unit", "units"]
        .iter()
        .find_map(|k| attrs.get(*k).and_then(|a| a.as_str().map(str::to_string)))
        .unwrap_or_else(|| "mV".into());
    let base = name.rsplit('/').next().unwrap_or("signal").to_string();
    let leads: Vec<Lead> = match shape.as_slice() {
        [_] => vec![Lead {
            name: base,
            unit,
            samples: data,
        }],
        [r, c] => {
            let (r, c) = (*r as usize, *c as usize);
            if c <= r && c <= 64 {
                (0..c)
                    .map(|j| Lead {
                        name: format!("{base}[{j}]"),
                        unit: unit.clone(),
                        samples: (0..r).map(|i| data[i * c + j]).collect(),
                    })
                    .collect()
            } else if r <= 64 {
                (0..r)
                    .map(|i| Lead {
                        name: format!("{base}[{i}]"),
                        unit: unit.clone(),
                        samples: data[i * c..(i + 1) * c].to_vec(),
                    })
                    .collect()
            } else {
                return Err(Error::input(path, &place, format!("shape {r} × {c}: expected samples along one axis and at most 64 leads along the other")));
            }
        }
        other => {
            return Err(Error::input(
                path,
                &place,
                format!("shape {other:?}: expected a 1-D or 2-D signal"),
            ))
        }
    };
    if leads.first().map_or(0, |l| l.samples.len()) < 2 {
        return Err(Error::input(path, &place, "fewer than 2 samples"));
    }
    let missing = leads
        .iter()
        .map(|l| l.samples.iter().filter(|v| !v.is_finite()).count())
        .sum::<usize>();
    let mut warnings = Vec::new();
    if missing > 0 {
        warnings.push(format!(
            "{}: {place}: {missing} non-finite value(s), treated as gaps",
            path.display()
        ));
    }
    let rec_name = super::file_stem(path);
    Ok(Loaded {
        record: Record {
            name: rec_name,
            fs_hz: fs,
            leads,
            start_time: None,
            annotations: Annotations::default(),
        },
        warnings,
    })
}

fn show_attr(v: &AttrValue) -> String {
    let s = v.to_string();
    let one_line = s.replace('\n', " ");
    if one_line.chars().count() > 100 {
        format!(
            "{}… ({} characters)",
            one_line.chars().take(100).collect::<String>(),
            one_line.chars().count()
        )
    } else {
        one_line
    }
}

/// A readable summary of any HDF5 file: root attributes, then every group and dataset with its
/// shape, type and attributes. For a beatfold results file this shows the provenance and the
/// layout of `docs/results-format.md`.
pub fn inspect(path: &Path) -> Result<String> {
    let f = open(path)?;
    let mut o = String::new();
    let _ = writeln!(o, "{}", path.display());
    let mut root_attrs: Vec<(String, AttrValue)> =
        f.root().attrs().unwrap_or_default().into_iter().collect();
    root_attrs.sort_by(|a, b| a.0.cmp(&b.0));
    for (k, v) in &root_attrs {
        let _ = writeln!(o, "  @{k} = {}", show_attr(v));
    }
    let mut stack = vec![String::new()];
    while let Some(g) = stack.pop() {
        let group = if g.is_empty() {
            f.root()
        } else {
            f.group(&g)
                .map_err(|e| Error::input(path, format!("group /{g}"), e.to_string()))?
        };
        if !g.is_empty() {
            let _ = writeln!(o, "/{g}/");
            let mut a: Vec<(String, AttrValue)> =
                group.attrs().unwrap_or_default().into_iter().collect();
            a.sort_by(|x, y| x.0.cmp(&y.0));
            for (k, v) in &a {
                let _ = writeln!(o, "    @{k} = {}", show_attr(v));
            }
        }
        let mut ds = group.datasets().unwrap_or_default();
        ds.sort();
        for d in ds {
            let full = if g.is_empty() {
                d.clone()
            } else {
                format!("{g}/{d}")
            };
            match f.dataset(&full) {
                Ok(x) => {
                    let shape = x
                        .shape()
                        .map(|s| format!("{s:?}"))
                        .unwrap_or_else(|_| "?".into());
                    let dt = x
                        .dtype()
                        .map(|t| format!("{t:?}"))
                        .unwrap_or_else(|_| "?".into());
                    let _ = writeln!(o, "  /{full}  shape {shape}  type {dt}");
                }
                Err(e) => {
                    let _ = writeln!(o, "  /{full}  (unreadable: {e})");
                }
            }
        }
        let mut gs = group.groups().unwrap_or_default();
        gs.sort();
        for s in gs.into_iter().rev() {
            stack.push(if g.is_empty() { s } else { format!("{g}/{s}") });
        }
    }
    Ok(o)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn fixture() -> std::path::PathBuf {
        Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/h5/signals.h5")
    }

    #[test]
    fn reads_signals_written_by_h5py() {
        // Source: tests/data/h5/signals.h5 written by h5py 3.16 (general-purpose reference
        // library) with scripts/make_h5_fixture.py; the values are closed forms given there.
        let r = read_record(&fixture(), Some("/ecg"), None).unwrap().record;
        assert_eq!(r.fs_hz, 360.0);
        assert_eq!(r.leads.len(), 2);
        assert_eq!(r.leads[1].unit, "mV");
        for (i, v) in r.leads[1].samples.iter().enumerate() {
            let expect = ((0.05 * i as f64).sin() * 2.0) as f32 as f64;
            assert_eq!(*v, expect, "row {i}");
        }
        // Rate from the parent group's integer attribute.
        let r = read_record(&fixture(), Some("rec/lead"), None)
            .unwrap()
            .record;
        assert_eq!(r.fs_hz, 128.0);
        assert_eq!(r.leads[0].samples[399], 0.399);
    }

    #[test]
    fn clear_errors_for_wrong_datasets() {
        let e = read_record(&fixture(), None, None).unwrap_err().to_string();
        assert!(
            e.contains("--dataset") && e.contains("ecg") && e.contains("rec/lead"),
            "{e}"
        );
        let e = read_record(&fixture(), Some("nope"), None)
            .unwrap_err()
            .to_string();
        assert!(e.contains("dataset /nope"), "{e}");
        let e = read_record(&fixture(), Some("rec/bad"), Some(100.0))
            .unwrap_err()
            .to_string();
        assert!(e.contains("1-D or 2-D"), "{e}");
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("x.h5");
        std::fs::write(&p, b"not hdf5 at all").unwrap();
        let e = read_record(&p, Some("a"), None).unwrap_err().to_string();
        assert!(e.contains("x.h5") && e.contains("HDF5"), "{e}");
    }

    #[test]
    fn inspect_lists_groups_datasets_and_attributes() {
        let s = inspect(&fixture()).unwrap();
        assert!(s.contains("/ecg  shape [500, 2]"), "{s}");
        assert!(s.contains("/rec/"), "{s}");
        assert!(s.contains("@sampling_rate = 128"), "{s}");
        assert!(s.contains("/rec/lead  shape [400]"), "{s}");
    }
}
