//! The shared reference embedding of a cohort: one diffusion map (Coifman & Lafon 2006) fitted
//! on a seeded, stratified sample of beat feature rows — an equal share from every analysed
//! record, capped — and every beat of every record placed in it by Nyström extension, so
//! records are comparable in one coordinate system.
//!
//! In: the cohort plan, the table rows and each record's `results.h5` (`/features/matrix`).
//! Out: `cohort_embedding.h5` (the model, the fit sample and every record's mean position),
//! `records/<name>/shared_embedding.h5` (every beat's shared coordinates, for records with full
//! outputs), the figure `cohort_embedding.{png,svg}` and each record's
//! mean position for the cohort page. When the cohort has more records than `max_total`, one
//! beat each from a seeded choice of `max_total` records forms the fit sample (the choice
//! depends on the seed and the sorted record names only, never on shards). Records are
//! read one at a time (twice: once to sample, once to extend), so memory holds the sample and one
//! record, never the whole cohort. Each record's sample is drawn with its own seed (the cohort
//! seed mixed with a hash of its name), so it does not depend on which shard analysed it.

use super::{record_dir, Plan, Row, Status};
use crate::embed::{self, DiffusionModel, DiffusionParams};
use crate::error::{Error, Result};
use crate::io::model as model_io;
use crate::points::Points;
use hdf5_pure::{AttrValue, FileBuilder};
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::path::Path;

/// Settings of the shared embedding.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SharedParams {
    /// Seed of the beat sample and of the fit (default 0).
    pub seed: u64,
    /// Most beats sampled from one record (default 300; 1 to 100 000).
    pub per_record: usize,
    /// Most beats in the whole fit sample (default 1000; 10 to 5000 with the dense kernel,
    /// to 200 000 with a sparse one); the share per record is `min(per_record, max_total /
    /// records)`.
    pub max_total: usize,
    /// The diffusion map (default: `analyze`'s local scaling with 5 coordinates and a dense
    /// kernel, so that a fit beat extended by Nyström lands exactly on its fit coordinates).
    pub diffusion: DiffusionParams,
}

impl Default for SharedParams {
    fn default() -> Self {
        SharedParams {
            seed: 0,
            per_record: 300,
            max_total: 1000,
            diffusion: DiffusionParams {
                components: 5,
                landmark_check: 0,
                neighbors: 0,
                max_fit_points: embed::MAX_FIT_POINTS,
                ..crate::pipeline::AnalyzeParams::default().diffusion
            },
        }
    }
}

impl SharedParams {
    /// Validate the ranges given on each field.
    pub fn check(&self) -> Result<()> {
        if !(1..=100_000).contains(&self.per_record) {
            return Err(Error::param(
                "per_record",
                format!("{} beats; allowed 1 to 100000", self.per_record),
            ));
        }
        let cap = if self.diffusion.neighbors == 0 {
            embed::MAX_FIT_POINTS
        } else {
            200_000
        };
        if !(10..=cap).contains(&self.max_total) {
            return Err(Error::param(
                "max_total",
                format!(
                    "{} beats; allowed 10 to {cap} (the {} kernel)",
                    self.max_total,
                    if self.diffusion.neighbors == 0 {
                        "dense"
                    } else {
                        "sparse"
                    }
                ),
            ));
        }
        self.diffusion.check()?;
        Ok(())
    }
}

/// What the shared embedding came to.
#[derive(Debug, Clone, PartialEq)]
pub struct SharedEmbeddingSummary {
    /// Records in the fit sample.
    pub records: usize,
    /// Beats sampled per record (at most).
    pub per_record: usize,
    /// Beats in the fit sample.
    pub fit_points: usize,
    /// Diffusion coordinates.
    pub components: usize,
    /// Non-trivial eigenvalues of the fit.
    pub eigenvalues: Vec<f64>,
    /// Largest |Nyström − fit| over the sampled beats' coordinates, relative to the largest
    /// |fit coordinate|: how well the extension reproduces the fit where both exist.
    pub fit_reproduction_error: f64,
    /// Records left out, and why.
    pub notes: Vec<String>,
    /// Each placed record's position for the cohort page: the mean of its beats' first two
    /// shared coordinates.
    pub record_positions: BTreeMap<String, [f64; 2]>,
}

/// The record's feature matrix from its `results.h5`.
pub(crate) fn read_features(path: &Path) -> Result<Points> {
    let f = hdf5_pure::File::open(path)
        .map_err(|e| Error::input(path, "HDF5 structure", e.to_string()))?;
    let ds = f
        .dataset("features/matrix")
        .map_err(|e| Error::input(path, "/features/matrix", e.to_string()))?;
    let shape = ds
        .shape()
        .map_err(|e| Error::input(path, "/features/matrix", e.to_string()))?;
    let data = ds
        .read_f64()
        .map_err(|e| Error::input(path, "/features/matrix", e.to_string()))?;
    let (n, dim) = match shape.as_slice() {
        [n, d] => (*n as usize, *d as usize),
        [n] if *n == 0 => (0, 0),
        _ => {
            return Err(Error::input(
                path,
                "/features/matrix",
                format!("shape {shape:?}, expected 2 dimensions"),
            ))
        }
    };
    if n == 0 || dim == 0 {
        return Ok(Points {
            n: 0,
            dim: 0,
            data: Vec::new(),
        });
    }
    Points::new(n, dim, data)
}

/// Beats placed per record, at most, for the page position of a record outside the fit sample
/// with summary outputs.
const POSITION_BEATS: usize = 8;

/// 64-bit FNV-1a hash of a name (Fowler, Noll & Vo), to give each record its own seed.
fn fnv1a(s: &str) -> u64 {
    s.bytes().fold(0xcbf2_9ce4_8422_2325u64, |h, b| {
        (h ^ u64::from(b)).wrapping_mul(0x0000_0100_0000_01b3)
    })
}

/// Sorted rows sampled from `n` without replacement with the record's own seed.
pub(crate) fn sample_rows(n: usize, k: usize, seed: u64, name: &str) -> Vec<usize> {
    if n <= k {
        return (0..n).collect();
    }
    let mut rng = ChaCha8Rng::seed_from_u64(seed ^ fnv1a(name));
    let mut v = rand::seq::index::sample(&mut rng, n, k).into_vec();
    v.sort_unstable();
    v
}

/// Fit the shared embedding and write its files (see the module notes).
pub(crate) fn build(out: &Path, plan: &Plan, rows: &[Row]) -> Result<SharedEmbeddingSummary> {
    let sp = &plan.shared;
    let ok: Vec<&str> = rows
        .iter()
        .filter(|r| r.status == Status::Ok)
        .map(|r| r.name.as_str())
        .collect();
    if ok.is_empty() {
        return Err(Error::Analysis("no record was analysed".into()));
    }
    let per = sp.per_record.min(sp.max_total / ok.len()).max(1);
    // More records than fit points: a seeded choice of records gives one beat each.
    let in_fit: Vec<bool> = if ok.len() > sp.max_total {
        let mut v = vec![false; ok.len()];
        for k in sample_rows(ok.len(), sp.max_total, sp.seed, "cohort records") {
            if let Some(x) = v.get_mut(k) {
                *x = true;
            }
        }
        v
    } else {
        vec![true; ok.len()]
    };
    let mut notes = Vec::new();
    // Pass 1: the stratified sample.
    let mut dim = None;
    let mut sample = Vec::new();
    let mut members: Vec<(usize, usize)> = Vec::new(); // (record position in `ok`, row)
    let mut used = vec![false; ok.len()];
    for (ri, name) in ok.iter().enumerate() {
        if !in_fit.get(ri).copied().unwrap_or(false) {
            continue; // read in pass 2 only
        }
        let pts = read_features(&record_dir(out, name).join(super::compact::COMPACT_FILE))?;
        if pts.n == 0 {
            notes.push(format!(
                "record {name}: no beat features, not in the shared embedding"
            ));
            continue;
        }
        match dim {
            None => dim = Some(pts.dim),
            Some(d) if d != pts.dim => {
                notes.push(format!(
                    "record {name}: {} feature columns where the cohort has {d} (another sampling rate or feature setting?), not in the shared embedding",
                    pts.dim
                ));
                continue;
            }
            Some(_) => {}
        }
        used[ri] = true;
        for r in sample_rows(pts.n, per, sp.seed, name) {
            sample.extend_from_slice(pts.row(r));
            members.push((ri, r));
        }
    }
    let dim = dim.ok_or_else(|| Error::Analysis("no record has beat features".into()))?;
    let fit_pts = Points::new(members.len(), dim, sample)?;
    let mut dp = sp.diffusion.clone();
    dp.seed = sp.seed;
    let cap = if dp.neighbors == 0 {
        embed::MAX_FIT_POINTS
    } else {
        embed::MAX_SPARSE_FIT_POINTS
    };
    dp.max_fit_points = fit_pts.n.clamp(dp.components + 2, cap);
    // A new block (the sample's seed and size): checked here.
    let model = embed::fit(&fit_pts, &crate::params::Checked::new(dp)?)?;
    let c = model.components();
    // Fit coordinates of each sample member (landmark order → sample order).
    let lm_coords = model.coords_of_fit();
    let mut fit_coords = vec![f64::NAN; fit_pts.n * c];
    for (li, &si) in model.landmark_index.iter().enumerate() {
        if let (Some(dst), Some(src)) = (
            fit_coords.get_mut(si * c..(si + 1) * c),
            lm_coords.get(li * c..(li + 1) * c),
        ) {
            dst.copy_from_slice(src);
        }
    }
    // Pass 2: every beat of every record by Nyström extension.
    let scale = fit_coords
        .iter()
        .filter(|v| v.is_finite())
        .fold(0.0f64, |m, v| m.max(v.abs()))
        .max(f64::MIN_POSITIVE);
    let mut worst = 0.0f64;
    let mut positions = BTreeMap::new();
    // Every beat's shared coordinates are written for records with full outputs only (one
    // small file each); the others keep their mean position in `cohort_embedding.h5`.
    let full: std::collections::HashSet<&str> = rows
        .iter()
        .filter(|r| r.has_report)
        .map(|r| r.name.as_str())
        .collect();
    for (ri, name) in ok.iter().enumerate() {
        let fitted = in_fit.get(ri).copied().unwrap_or(false);
        if fitted && !used.get(ri).copied().unwrap_or(false) {
            continue; // noted in pass 1
        }
        let dir = record_dir(out, name);
        let all = read_features(&dir.join(super::compact::COMPACT_FILE))?;
        if !fitted {
            if all.n == 0 {
                notes.push(format!(
                    "record {name}: no beat features, not in the shared embedding"
                ));
                continue;
            }
            if all.dim != dim {
                notes.push(format!(
                    "record {name}: {} feature columns where the cohort has {dim} (another sampling rate or feature setting?), not in the shared embedding",
                    all.dim
                ));
                continue;
            }
            if let Some(u) = used.get_mut(ri) {
                *u = true;
            }
        }
        // A record outside the fit with summary outputs needs its page position only: the mean
        // of a seeded sample of its beats (display only; no coordinates are written for it).
        let pts = if fitted || full.contains(name) || all.n <= POSITION_BEATS {
            all
        } else {
            let rows = sample_rows(all.n, POSITION_BEATS, sp.seed, name);
            let mut v = Vec::with_capacity(rows.len() * all.dim);
            for &r in &rows {
                v.extend_from_slice(all.row(r));
            }
            Points::new(rows.len(), all.dim, v)?
        };
        let coords = model.extend(&pts)?;
        if pts.n > 0 && c > 0 {
            let (mut sx, mut sy) = (0.0, 0.0);
            for row in coords.chunks(c) {
                sx += row.first().copied().unwrap_or(0.0);
                sy += row.get(1).copied().unwrap_or(0.0);
            }
            let k = pts.n as f64;
            if (sx / k).is_finite() && (sy / k).is_finite() {
                positions.insert(name.to_string(), [sx / k, sy / k]);
            }
        }
        let rows_fit: Vec<usize> = members
            .iter()
            .enumerate()
            .filter(|(_, m)| m.0 == ri)
            .map(|(si, m)| {
                if let (Some(a), Some(b)) = (
                    coords.get(m.1 * c..(m.1 + 1) * c),
                    fit_coords.get(si * c..(si + 1) * c),
                ) {
                    for (x, y) in a.iter().zip(b) {
                        worst = worst.max((x - y).abs() / scale);
                    }
                }
                m.1
            })
            .collect();
        let shared_path = dir.join("shared_embedding.h5");
        if full.contains(name) {
            write_record_h5(&shared_path, &coords, pts.n, c, &rows_fit)?;
        } else if shared_path.exists() {
            let _ = std::fs::remove_file(&shared_path);
        }
    }
    let names: Vec<String> = ok.iter().map(|s| s.to_string()).collect();
    write_cohort_h5(
        &out.join("cohort_embedding.h5"),
        &model,
        &names,
        &members,
        &fit_coords,
        sp,
        &positions,
    )?;
    let group_of: std::collections::HashMap<&str, &str> = rows
        .iter()
        .map(|r| (r.name.as_str(), r.group.as_str()))
        .collect();
    let groups: Vec<String> = ok
        .iter()
        .map(|n| group_of.get(n).map(|g| g.to_string()).unwrap_or_default())
        .collect();
    super::figure::write(out, &names, &groups, &members, &fit_coords, c)?;
    Ok(SharedEmbeddingSummary {
        records: used.iter().filter(|&&u| u).count(),
        per_record: per,
        fit_points: fit_pts.n,
        components: c,
        eigenvalues: model.eigenvalues.clone(),
        fit_reproduction_error: worst,
        notes,
        record_positions: positions,
    })
}

fn encode(b: FileBuilder, path: &Path) -> Result<()> {
    let bytes = b
        .finish()
        .map_err(|e| Error::output(path, format!("HDF5 encoding failed: {e}")))?;
    crate::io::write_atomic(path, &bytes)
}

/// `records/<name>/shared_embedding.h5`: `/shared/coords` (n × c, row i ↔ features row i of
/// `results.h5`) and `/shared/fit_rows` (the feature rows in the fit sample).
fn write_record_h5(
    path: &Path,
    coords: &[f64],
    n: usize,
    c: usize,
    fit_rows: &[usize],
) -> Result<()> {
    let mut b = FileBuilder::new();
    b.set_attr("notice", AttrValue::VarLenString(crate::NOTICE.to_string()));
    let mut g = b.create_group("shared");
    g.create_dataset("coords")
        .with_f64_data(coords)
        .with_shape(&[n as u64, c as u64]);
    let fr: Vec<u64> = fit_rows.iter().map(|&r| r as u64).collect();
    g.create_dataset("fit_rows").with_u64_data(&fr);
    b.add_group(g.finish());
    encode(b, path)
}

/// `cohort_embedding.h5`: `/embedding/model` (see `io::model`), `/sample/record` (index
/// into `/sample/records`), `/sample/row` (feature row in that record), `/sample/coords` (fit
/// coordinates), `/sample/records` (record names), `/records/name` and `/records/position`
/// (every placed record's mean (ψ1, ψ2), sorted by name); root attributes `notice`,
/// `parameters`.
fn write_cohort_h5(
    path: &Path,
    model: &DiffusionModel,
    names: &[String],
    members: &[(usize, usize)],
    fit_coords: &[f64],
    sp: &SharedParams,
    positions: &BTreeMap<String, [f64; 2]>,
) -> Result<()> {
    let mut b = FileBuilder::new();
    b.set_attr("notice", AttrValue::VarLenString(crate::NOTICE.to_string()));
    let params = serde_json::to_string(sp).map_err(|e| Error::output(path, e.to_string()))?;
    b.set_attr("parameters", AttrValue::VarLenString(params));
    let mut e = b.create_group("embedding");
    model_io::add_model_group(&mut e, model);
    b.add_group(e.finish());
    let mut g = b.create_group("sample");
    let rec: Vec<u64> = members.iter().map(|m| m.0 as u64).collect();
    let row: Vec<u64> = members.iter().map(|m| m.1 as u64).collect();
    g.create_dataset("record").with_u64_data(&rec);
    g.create_dataset("row").with_u64_data(&row);
    g.create_dataset("coords")
        .with_f64_data(fit_coords)
        .with_shape(&[members.len() as u64, model.components() as u64]);
    let refs: Vec<&str> = names.iter().map(String::as_str).collect();
    g.create_dataset("records").with_vlen_strings(&refs);
    b.add_group(g.finish());
    let mut g = b.create_group("records");
    let names: Vec<&str> = positions.keys().map(String::as_str).collect();
    let pos: Vec<f64> = positions.values().flat_map(|p| [p[0], p[1]]).collect();
    g.create_dataset("name").with_vlen_strings(&names);
    g.create_dataset("position")
        .with_f64_data(&pos)
        .with_shape(&[names.len() as u64, 2]);
    b.add_group(g.finish());
    encode(b, path)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sample_is_seeded_sorted_and_capped() {
        let a = sample_rows(1000, 50, 7, "r1");
        assert_eq!(a.len(), 50);
        assert!(a.windows(2).all(|w| w[0] < w[1]));
        assert_eq!(a, sample_rows(1000, 50, 7, "r1"));
        assert_ne!(a, sample_rows(1000, 50, 7, "r2"));
        assert_eq!(sample_rows(5, 50, 7, "r1"), vec![0, 1, 2, 3, 4]);
    }
}
