//! A fitted [`DiffusionModel`] in HDF5, so later points can be placed without refitting.
//!
//! In: a model (write) or an HDF5 file (read). Out: the group `/embedding/model` in a results
//! file (written by the report through [`add_model_group`]) or a standalone file holding only
//! that group ([`save_model`]); [`load_model`] reads either.
//!
//! Layout of the `model` group (all floating values `f64`, indices `u64`, row-major):
//! datasets `landmarks` (m × dim of the kernel space), `landmark_index` (m), `q` (m), `psi`
//! (m × components), `eigenvalues` (components), `rho` (m local scales, or 0 for a global ε),
//! `rho0` (the ad hoc scales, same length), and, when a PCA reduction is used, `pca_mean` (D), `pca_axes` (D × D), `pca_variance` (D);
//! attributes `format` (`beatfold-diffusion-model-2`), `epsilon`, `alpha`, `t`, `rho_rank`,
//! `kernel_alpha`, `kernel_dim`, `rho_scale`, `eps0`, `dim0`, `graph_k`, `neighbors`, `residual`, `pca_keep` (0 = no
//! reduction).

use crate::embed::pca::Pca;
use crate::embed::DiffusionModel;
use crate::error::{Error, Result};
use crate::points::Points;
use hdf5_pure::{AttrValue, FileBuilder, GroupBuilder};
use std::collections::HashMap;
use std::path::Path;

/// Value of the `format` attribute.
pub const MODEL_FORMAT: &str = "beatfold-diffusion-model-2";
/// Path of the model group in a results file.
pub const MODEL_PATH: &str = "embedding/model";

fn u64s(v: &[usize]) -> Vec<u64> {
    v.iter().map(|&x| x as u64).collect()
}

/// Add the group `model` describing `m` to `parent` (the `/embedding` group of a results file).
pub fn add_model_group(parent: &mut GroupBuilder, m: &DiffusionModel) {
    let mut g = parent.create_group("model");
    g.set_attr("format", AttrValue::VarLenString(MODEL_FORMAT.to_string()));
    g.set_attr("epsilon", AttrValue::F64(m.epsilon));
    g.set_attr("alpha", AttrValue::F64(m.alpha));
    g.set_attr("t", AttrValue::F64(m.t));
    g.set_attr("rho_rank", AttrValue::U64(m.rho_rank as u64));
    g.set_attr("kernel_alpha", AttrValue::F64(m.kernel_alpha));
    g.set_attr("kernel_dim", AttrValue::F64(m.kernel_dim));
    g.set_attr("rho_scale", AttrValue::F64(m.rho_scale));
    g.set_attr("eps0", AttrValue::F64(m.eps0));
    g.set_attr("dim0", AttrValue::F64(m.dim0));
    g.set_attr("graph_k", AttrValue::U64(m.graph_k as u64));
    g.set_attr("neighbors", AttrValue::U64(m.neighbors as u64));
    g.set_attr("residual", AttrValue::F64(m.residual));
    let c = m.components();
    g.create_dataset("landmarks")
        .with_f64_data(&m.landmarks.data)
        .with_shape(&[m.landmarks.n as u64, m.landmarks.dim as u64]);
    g.create_dataset("landmark_index")
        .with_u64_data(&u64s(&m.landmark_index));
    g.create_dataset("q").with_f64_data(&m.q);
    g.create_dataset("psi")
        .with_f64_data(&m.psi)
        .with_shape(&[m.landmarks.n as u64, c as u64]);
    g.create_dataset("eigenvalues")
        .with_f64_data(&m.eigenvalues);
    g.create_dataset("rho").with_f64_data(&m.rho);
    g.create_dataset("rho0").with_f64_data(&m.rho0);
    match &m.reduction {
        Some((pca, keep)) => {
            g.set_attr("pca_keep", AttrValue::U64(*keep as u64));
            g.create_dataset("pca_mean").with_f64_data(&pca.mean);
            g.create_dataset("pca_axes")
                .with_f64_data(&pca.axes)
                .with_shape(&[pca.dim as u64, pca.dim as u64]);
            g.create_dataset("pca_variance")
                .with_f64_data(&pca.variance);
        }
        None => g.set_attr("pca_keep", AttrValue::U64(0)),
    }
    parent.add_group(g.finish());
}

/// Write a standalone HDF5 file holding only `/embedding/model` (atomically).
pub fn save_model(m: &DiffusionModel, path: &Path) -> Result<()> {
    let mut b = FileBuilder::new();
    b.set_attr("notice", AttrValue::VarLenString(crate::NOTICE.to_string()));
    let mut e = b.create_group("embedding");
    add_model_group(&mut e, m);
    b.add_group(e.finish());
    let bytes = b
        .finish()
        .map_err(|err| Error::output(path, format!("HDF5 encoding failed: {err}")))?;
    super::write_atomic(path, &bytes)
}

fn bad(path: &Path, place: &str, msg: impl Into<String>) -> Error {
    Error::input(path, format!("{MODEL_PATH}/{place}"), msg)
}

fn attr_f64(path: &Path, a: &HashMap<String, AttrValue>, k: &str) -> Result<f64> {
    match a.get(k) {
        Some(AttrValue::F64(v)) => Ok(*v),
        _ => Err(bad(path, k, "missing or not a 64-bit float attribute")),
    }
}

fn attr_usize(path: &Path, a: &HashMap<String, AttrValue>, k: &str) -> Result<usize> {
    match a.get(k) {
        Some(AttrValue::U64(v)) => {
            usize::try_from(*v).map_err(|_| bad(path, k, "value too large for this machine"))
        }
        _ => Err(bad(path, k, "missing or not an unsigned integer attribute")),
    }
}

/// Read a model written by [`add_model_group`] / [`save_model`] from `/embedding/model` of
/// `path`, checking that every array has a consistent size.
///
/// Errors (`Error::Input`): unreadable file, no model group, a wrong format tag, missing or
/// inconsistent arrays.
pub fn load_model(path: &Path) -> Result<DiffusionModel> {
    let f = hdf5_pure::File::open(path)
        .map_err(|e| Error::input(path, "HDF5 structure", e.to_string()))?;
    let g = f.group(MODEL_PATH).map_err(|_| {
        Error::input(
            path,
            MODEL_PATH,
            "no saved diffusion model (write one with `analyze` or `embed --save-model`)",
        )
    })?;
    let a = g
        .attrs()
        .map_err(|e| bad(path, "attributes", e.to_string()))?;
    match a.get("format").and_then(|v| v.as_str()) {
        Some(s) if s == MODEL_FORMAT => {}
        _ => return Err(bad(path, "format", format!("expected `{MODEL_FORMAT}`"))),
    }
    let ds = |name: &str| -> Result<(Vec<f64>, Vec<u64>)> {
        let d = f
            .dataset(&format!("{MODEL_PATH}/{name}"))
            .map_err(|e| bad(path, name, e.to_string()))?;
        let shape = d.shape().map_err(|e| bad(path, name, e.to_string()))?;
        let v = d.read_f64().map_err(|e| bad(path, name, e.to_string()))?;
        Ok((v, shape))
    };
    let (lm, shape) = ds("landmarks")?;
    let (m, dim) = match shape[..] {
        [m, d] => (m as usize, d as usize),
        _ => return Err(bad(path, "landmarks", "expected a 2-D array")),
    };
    let landmarks = Points::new(m, dim, lm).map_err(|e| bad(path, "landmarks", e.to_string()))?;
    let landmark_index: Vec<usize> = f
        .dataset(&format!("{MODEL_PATH}/landmark_index"))
        .and_then(|d| d.read_u64())
        .map_err(|e| bad(path, "landmark_index", e.to_string()))?
        .into_iter()
        .map(|v| v as usize)
        .collect();
    let (q, _) = ds("q")?;
    let (psi, _) = ds("psi")?;
    let (eigenvalues, _) = ds("eigenvalues")?;
    let (rho, _) = ds("rho")?;
    let (rho0, _) = ds("rho0")?;
    let c = eigenvalues.len();
    let rho_rank = attr_usize(path, &a, "rho_rank")?;
    if q.len() != m
        || psi.len() != m * c
        || c == 0
        || landmark_index.len() != m
        || !(rho.is_empty() || rho.len() == m)
        || rho0.len() != rho.len()
        || (rho_rank > 0) == rho.is_empty()
        || rho.iter().any(|v| !(v.is_finite() && *v > 0.0))
    {
        return Err(bad(
            path,
            "arrays",
            format!("inconsistent sizes for {m} landmarks and {c} components"),
        ));
    }
    let keep = attr_usize(path, &a, "pca_keep")?;
    let reduction = if keep > 0 {
        let (mean, _) = ds("pca_mean")?;
        let (axes, _) = ds("pca_axes")?;
        let (variance, _) = ds("pca_variance")?;
        let d = mean.len();
        if axes.len() != d * d || variance.len() != d || keep != dim || keep > d {
            return Err(bad(path, "pca_axes", "inconsistent PCA sizes"));
        }
        Some((
            Pca {
                dim: d,
                mean,
                axes,
                variance,
            },
            keep,
        ))
    } else {
        None
    };
    Ok(DiffusionModel {
        landmarks,
        landmark_index,
        q,
        psi,
        eigenvalues,
        epsilon: attr_f64(path, &a, "epsilon")?,
        alpha: attr_f64(path, &a, "alpha")?,
        t: attr_f64(path, &a, "t")?,
        rho,
        rho_rank,
        rho0,
        eps0: attr_f64(path, &a, "eps0")?,
        dim0: attr_f64(path, &a, "dim0")?,
        graph_k: attr_usize(path, &a, "graph_k")?,
        kernel_alpha: attr_f64(path, &a, "kernel_alpha")?,
        kernel_dim: attr_f64(path, &a, "kernel_dim")?,
        rho_scale: attr_f64(path, &a, "rho_scale")?,
        neighbors: attr_usize(path, &a, "neighbors")?,
        reduction,
        residual: attr_f64(path, &a, "residual")?,
        diagnostics: Default::default(),
    })
}
