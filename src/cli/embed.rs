//! `embed`: the diffusion map of a point cloud or of a recording's beat features.

use super::commands::{load, params_from, Out};
use super::InputArgs;
use anyhow::Result;
use beatfold::io;
use beatfold::params::Checked;
use beatfold::pipeline;
use beatfold::NOTICE;
use serde_json::json;
use std::path::{Path, PathBuf};

/// Points from a recording's beat features or from a plain numeric CSV.
pub(super) fn points_of(input: &InputArgs, o: &Out) -> Result<beatfold::points::Points> {
    if io::looks_like_points(&input.input) {
        return Ok(io::read_points(&input.input)?);
    }
    let (rec, params, _) = load(input, o)?;
    let b = pipeline::detect_beats(&rec, &params)?;
    let f = beatfold::features::beat_features(
        &b.conditioned,
        rec.fs_hz,
        &b.samples,
        &params.features(),
    )?;
    Ok(f.points)
}

/// Place the points into a saved model, or fit a new map with checked parameters.
enum Job<'a> {
    Place(&'a Path),
    Fit(Checked<beatfold::embed::DiffusionParams>),
}

pub(super) fn embed_cmd(input: &InputArgs, a: &super::EmbedOptions, quiet: bool) -> Result<()> {
    let o = Out {
        quiet: quiet || a.json,
    };
    // Flag, then config file, then the library default; checked once, before any work.
    let mut p = params_from(input)?.into_inner().diffusion;
    p.components = a.components.unwrap_or(p.components);
    p.alpha = a.alpha.unwrap_or(p.alpha);
    p.t = a.t.unwrap_or(p.t);
    p.seed = a.seed.unwrap_or(p.seed);
    p.overlay_kernel(a.bandwidth, a.neighbors);
    if let Some(m) = a.landmarks {
        p.max_fit_points = m;
        p.landmark_check = p.landmark_check.max(1000);
    }
    let job = match &a.model {
        Some(path) => Job::Place(path),
        None => Job::Fit(Checked::new(p.clone()).map_err(|e| e.in_block("diffusion"))?),
    };
    let pts = points_of(input, &o)?;
    let (e, placed) = match &job {
        Job::Place(path) => {
            let model = beatfold::io::model::load_model(path)?;
            let coords = model.extend(&pts)?;
            let (pc, pk, pe) = beatfold::embed::pca_baseline(&pts, model.components())?;
            let mut e = model.embedding_of_fit();
            e.n = pts.n;
            e.coords = coords;
            e.pca_coords = pc;
            e.pca_components = pk;
            e.pca_explained = pe;
            (e, true)
        }
        Job::Fit(p) => (beatfold::embed::diffusion_map(&pts, p)?, false),
    };
    if let Some(path) = out_path(&a.out) {
        io::write_atomic(
            path,
            io::tables::matrix_csv(&e.coords, e.components).as_bytes(),
        )?;
    }
    if let Some(path) = out_path(&a.pca_out) {
        io::write_atomic(
            path,
            io::tables::matrix_csv(&e.pca_coords, e.pca_components).as_bytes(),
        )?;
    }
    if let (Some(path), Some(m)) = (&a.save_model, &e.model) {
        beatfold::io::model::save_model(m, path)?;
    }
    if a.json {
        let dg = &e.diagnostics;
        let j = json!({"n": e.n, "components": e.components, "eigenvalues": e.eigenvalues,
            "epsilon": e.epsilon, "bandwidth": p.bandwidth.to_string(),
            "bandwidth_rule": dg.bandwidth_rule, "kernel_sum_dimension": dg.kernel_sum_dimension,
            "truncation_weight": dg.truncation_weight,
            "alpha": e.alpha, "t": e.t, "neighbors": e.neighbors,
            "fit_points": e.fit_points, "residual": e.residual, "residuals": dg.residuals,
            "eigengap": dg.eigengap.map(|(i, g)| json!({"after": i, "gap": g})),
            "connected_components": dg.connected_components,
            "component_sizes": dg.component_sizes, "note": dg.note,
            "landmark_error": e.landmark_error, "placed_by_model": placed,
            "pca": {"components": e.pca_components, "explained_variance_ratio": e.pca_explained},
            "notice": NOTICE});
        println!("{}", serde_json::to_string_pretty(&j)?);
        return Ok(());
    }
    o.notice();
    let dg = &e.diagnostics;
    o.line(format!(
        "{} points in {} dimensions → {} diffusion coordinates (epsilon {:.5} by {}, alpha {}, t {}, {} neighbours, fitted on {} points{})",
        pts.n,
        pts.dim,
        e.components,
        e.epsilon,
        if placed { "the saved model" } else { &dg.bandwidth_rule },
        e.alpha,
        e.t,
        e.neighbors,
        e.fit_points,
        if placed { ", placed by the saved model" } else { "" }
    ));
    if !placed {
        o.line(format!(
            "kernel graph: {} connected component{}; largest eigen-residual {:.1e}{}",
            dg.connected_components,
            if dg.connected_components == 1 {
                ""
            } else {
                "s"
            },
            e.residual,
            dg.eigengap
                .map(|(i, g)| format!("; largest eigengap {g:.2e} after coordinate {i}"))
                .unwrap_or_default()
        ));
    }
    if let Some(note) = &dg.note {
        o.line(format!("note: {note}"));
    }
    let ev: Vec<String> = e.eigenvalues.iter().map(|v| format!("{v:.6}")).collect();
    o.line(format!("eigenvalues: {}", ev.join(" ")));
    if let Some(err) = e.landmark_error {
        o.line(format!("landmark mode: held-out relative error {err:.4}"));
    }
    let pv: Vec<String> = e
        .pca_explained
        .iter()
        .map(|v| format!("{:.3}", v))
        .collect();
    o.line(format!("PCA baseline variance shares: {}", pv.join(" ")));
    for p in [&a.out, &a.pca_out, &a.save_model].into_iter().flatten() {
        o.line(format!("wrote {}", p.display()));
    }
    Ok(())
}

fn out_path(p: &Option<PathBuf>) -> Option<&Path> {
    p.as_deref()
}
