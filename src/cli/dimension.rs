//! `dimension`: the dimension suite on a point cloud, beat features, RR or signal delay vectors.

use super::commands::{load, params_from, Out};
use super::InputArgs;
use anyhow::{bail, Result};
use beatfold::io;
use beatfold::params::Check;
use beatfold::pipeline;
use beatfold::report;
use serde_json::json;
use std::path::PathBuf;

/// Options of the `dimension` command besides input and output switches.
pub(super) struct DimensionOpts {
    pub(super) method: Option<String>,
    pub(super) seed: Option<u64>,
    pub(super) bootstrap: Option<usize>,
    pub(super) from: String,
    pub(super) embed_dim: usize,
    pub(super) delay: Option<usize>,
    pub(super) max_points: Option<usize>,
    pub(super) figure: Option<PathBuf>,
}

/// Most samples of a conditioned signal that are delay-embedded (the estimators subsample
/// anyway) and most used for the mutual-information delay.
const SIGNAL_EMBED_MAX: usize = 2_000_000;
const AMI_MAX: usize = 200_000;

/// The point cloud of the `dimension` command and a description of where it came from.
fn dimension_points(
    input: &InputArgs,
    opts: &DimensionOpts,
    o: &Out,
) -> Result<(beatfold::points::Points, serde_json::Value)> {
    use beatfold::dimension::delay;
    let from = opts.from.trim();
    if !["features", "rr", "signal"].contains(&from) {
        bail!("--cloud: `{from}` is not a point cloud; use features, rr or signal");
    }
    if io::looks_like_points(&input.input) {
        if from != "features" {
            bail!(
                "--cloud {from} needs a recording; {} is a point cloud",
                input.input.display()
            );
        }
        return Ok((io::read_points(&input.input)?, json!({"from": "points"})));
    }
    if from == "features" {
        return Ok((
            super::embed::points_of(input, o)?,
            json!({"from": "features"}),
        ));
    }
    let (rec, params, _) = load(input, o)?;
    let b = pipeline::detect_beats(&rec, &params)?;
    let series: Vec<f64> = if from == "rr" {
        b.rr_s
    } else {
        let mut c = b.conditioned;
        c.truncate(SIGNAL_EMBED_MAX);
        c
    };
    let delay = match opts.delay {
        Some(d) => d,
        None => {
            let x = &series[..series.len().min(AMI_MAX)];
            let cap = if from == "rr" {
                50
            } else {
                rec.fs_hz.round().max(1.0) as usize
            };
            let max_lag = cap.min(x.len() / 4).max(1);
            delay::ami_delay(x, max_lag, 16)?
        }
    };
    let pts = delay::delay_embed(&series, opts.embed_dim, delay)?;
    Ok((
        pts,
        json!({"from": from, "embed_dim": opts.embed_dim, "delay": delay,
               "delay_from_ami": opts.delay.is_none(), "series_len": series.len()}),
    ))
}

pub(super) fn dimension_cmd(
    input: &InputArgs,
    opts: &DimensionOpts,
    json: bool,
    quiet: bool,
) -> Result<()> {
    use beatfold::dimension::{dimension_suite, Method};
    let o = Out {
        quiet: quiet || json,
    };
    // Flag, then config file (the `dimension` block), then the library default; the suite is
    // then the one `analyze` runs (`Checked<AnalyzeParams>::suite`: one seed, k-means included).
    let mut a = params_from(input)?.into_inner();
    if let Some(m) = &opts.method {
        a.dimension.methods = Method::parse_list(m)?;
    }
    if let Some(b) = opts.bootstrap {
        a.dimension.bootstrap = b;
    }
    if let Some(seed) = opts.seed {
        a.dimension.seed = seed;
    }
    if let Some(n) = opts.max_points {
        a.dimension.max_points = n;
    }
    let p = a.check()?.suite();
    // Parameters checked before any work.
    let (pts, source) = dimension_points(input, opts, &o)?;
    let s = dimension_suite(&pts, &p)?;
    let mut written = Vec::new();
    if let Some(stem) = &opts.figure {
        written = report::write_suite_figure(&s, stem)?;
    }
    if json {
        println!(
            "{}",
            serde_json::to_string_pretty(&report::json_views::dimension_json(&s, source))?
        );
        return Ok(());
    }
    o.notice();
    o.line(format!(
        "{} points in {} dimensions ({} used by the neighbour-based estimators; {} bootstrap \
         resamples)",
        s.n, s.ambient_dim, s.n_used, s.bootstrap
    ));
    if source["from"] != "points" && source["from"] != "features" {
        o.line(format!(
            "delay embedding of the {} series: {} coordinates, delay {}{}",
            source["from"].as_str().unwrap_or(""),
            source["embed_dim"],
            source["delay"],
            if opts.delay.is_none() {
                " (first minimum of the average mutual information)"
            } else {
                ""
            }
        ));
    }
    let ci = |c: [f64; 2]| {
        if c[0].is_finite() {
            format!("[{:.2}, {:.2}]", c[0], c[1])
        } else {
            "-".to_string()
        }
    };
    o.line(format!(
        "{:<19} {:>7} {:>16} {:>9} {:>16}",
        "estimator", "raw d", "95 % interval", "corrected", "95 % interval"
    ));
    for e in &s.estimates {
        let (cd, cc) = if e.correction.applied {
            (format!("{:.2}", e.corrected_d), ci(e.corrected_ci95))
        } else {
            ("-".to_string(), "-".to_string())
        };
        o.line(format!(
            "{:<19} {:>7.2} {:>16} {:>9} {:>16}",
            e.method.name(),
            e.d,
            ci(e.ci95),
            cd,
            cc
        ));
    }
    if let Some(c) = &s.consensus {
        o.line(format!(
            "consensus: {} [{:.2}, {:.2}]",
            c.sentence(),
            c.ci95[0],
            c.ci95[1]
        ));
    }
    for e in &s.estimates {
        let c: Vec<String> = e
            .curve
            .iter()
            .map(|q| format!("{:.2}@{:.4}", q.d, q.scale))
            .collect();
        o.line(format!(
            "{} curve (d@scale): {}",
            e.method.name(),
            c.join(" ")
        ));
    }
    o.line(format!(
        "noise scale (k-means): {}",
        s.noise_scale
            .map_or("not detected".into(), |v| format!("{v:.5}"))
    ));
    o.warn(&s.failures);
    for w in written {
        o.line(format!("wrote {}", w.display()));
    }
    Ok(())
}
