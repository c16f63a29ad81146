//! Command implementations: read, call the library, print. No analysis happens here.

use super::{Cli, Command, InputArgs};
use anyhow::{bail, Context, Result};
use beatfold::io::{self, ReadOptions};
use beatfold::pipeline::{self, AnalyzeParams, InputInfo};
use beatfold::record::Record;
use beatfold::rhythm::screen::irregular_reference;
use beatfold::{report, synth, NOTICE};
use serde_json::json;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};

/// The bundled demo recording (made by `beatfold synth`, see demo-data/README.md).
const DEMO_CSV: &str = include_str!("../../demo-data/telemetry-night.csv");
/// Its exact ground truth.
const DEMO_ANN: &str = include_str!("../../demo-data/telemetry-night.annotations.csv");

struct Out {
    quiet: bool,
}

impl Out {
    fn line(&self, s: impl AsRef<str>) {
        if !self.quiet {
            println!("{}", s.as_ref());
        }
    }
    fn notice(&self) {
        self.line(format!("NOTICE: {NOTICE}"));
    }
    fn warn(&self, warnings: &[String]) {
        if !self.quiet {
            for w in warnings {
                eprintln!("warning: {w}");
            }
        }
    }
}

/// Run the parsed command line.
pub fn run(cli: Cli) -> Result<()> {
    let quiet = cli.quiet;
    match cli.command {
        Command::Demo {
            out,
            seed,
            minutes,
            json,
        } => demo(&out, seed, minutes, json, quiet || json),
        Command::Synth {
            out,
            minutes,
            fs_hz,
            scenario,
            seed,
            leads,
            mean_hr_bpm,
        } => synth_cmd(
            &out,
            minutes,
            fs_hz,
            &scenario,
            seed,
            leads,
            mean_hr_bpm,
            quiet,
        ),
        Command::Analyze {
            input,
            out,
            json,
            figures,
            from_s,
            to_s,
            colour_by,
        } => {
            let out = out.unwrap_or_else(|| default_out(&input.input));
            let o = Out {
                quiet: quiet || json,
            };
            // Display options are checked before any reading or analysis starts.
            let ropts = report::ReportOptions {
                select: report::Figure::parse_list(&figures)?,
                from_s,
                to_s,
                colour_by: report::ColourBy::parse(&colour_by)?,
                ..Default::default()
            };
            ropts.check()?;
            let (rec, params, info) = load(&input, &o)?;
            analyze_and_write(&rec, &info, &params, &out, json, &ropts, &o)
        }
        Command::Beats { input, out, json } => beats_cmd(&input, out.as_deref(), json, quiet),
        Command::Score {
            inputs,
            reference,
            fs_hz,
            lead,
            learning_s,
            leave_out,
            json,
            labels,
            label_map,
        } => match labels {
            Some(l) => super::label_score::run(&inputs, &l, &label_map, lead, json, quiet),
            None => {
                let rules = beatfold::beats::ec57::Ec57Rules {
                    learning_s,
                    leave_out,
                    ..Default::default()
                };
                rules.check()?;
                score_cmd(&inputs, reference, fs_hz, lead, json, quiet, &rules)
            }
        },
        Command::Embed { input, opts } => embed_cmd(&input, &opts, quiet),
        Command::Dimension {
            input,
            method,
            seed,
            bootstrap,
            from,
            embed_dim,
            delay,
            max_points,
            figure,
            json,
        } => dimension_cmd(
            &input,
            &DimensionOpts {
                method,
                seed,
                bootstrap,
                from,
                embed_dim,
                delay,
                max_points,
                figure,
            },
            json,
            quiet,
        ),
        Command::Rhythm {
            input,
            window,
            step,
            windows_out,
            json,
        } => rhythm_cmd(
            &input,
            &window,
            step.as_deref(),
            windows_out.as_deref(),
            json,
            quiet,
        ),
        Command::Cohort(args) => super::cohort::cohort_cmd(&args, quiet),
        Command::Inspect { file } => {
            let text = io::hdf5::inspect(&file)?;
            if !quiet {
                println!("NOTICE: {NOTICE}");
            }
            print!("{text}");
            Ok(())
        }
    }
}

fn default_out(input: &Path) -> PathBuf {
    let stem = match io::file_stem(input) {
        s if s.is_empty() => "record".to_string(),
        s => s,
    };
    PathBuf::from(format!("{stem}-beatfold"))
}

fn params_from(input: &InputArgs) -> Result<AnalyzeParams> {
    let mut p = match &input.config {
        Some(c) => AnalyzeParams::from_json_file(c)?,
        None => AnalyzeParams::default(),
    };
    if input.lead.is_some() {
        p.lead = input.lead.clone();
    }
    p.check()?;
    Ok(p)
}

fn load(input: &InputArgs, o: &Out) -> Result<(Record, AnalyzeParams, InputInfo)> {
    let params = params_from(input)?;
    let loaded = io::read_record(
        &input.input,
        &ReadOptions {
            fs_hz: input.fs_hz,
            annotations: input.reference.clone(),
            dataset: input.dataset.clone(),
            checksum: input.checksum,
        },
    )?;
    o.warn(&loaded.warnings);
    let info = InputInfo {
        name: input.input.display().to_string(),
        sha256: Some(io::sha256_file(&input.input)?),
        warnings: loaded.warnings.clone(),
    };
    Ok((loaded.record, params, info))
}

fn progress_bar(quiet: bool) -> Option<indicatif::ProgressBar> {
    if quiet || !std::io::stderr().is_terminal() {
        return None;
    }
    let pb = indicatif::ProgressBar::new(pipeline::STAGES.len() as u64);
    if let Ok(style) = indicatif::ProgressStyle::with_template("{bar:30} {pos}/{len} {msg}") {
        pb.set_style(style);
    }
    Some(pb)
}

fn analyze_and_write(
    rec: &Record,
    info: &InputInfo,
    params: &AnalyzeParams,
    out: &Path,
    json: bool,
    ropts: &report::ReportOptions,
    o: &Out,
) -> Result<()> {
    let pb = progress_bar(o.quiet);
    let mut cb = |i: usize, stage: &str| {
        if let Some(pb) = &pb {
            pb.set_position(i as u64);
            pb.set_message(stage.to_string());
        }
    };
    let a = pipeline::analyze(rec, info, params, &mut cb)?;
    if let Some(pb) = &pb {
        pb.set_message("writing report");
    }
    let written = report::write_all(&a, out, ropts)?;
    if let Some(pb) = pb {
        pb.finish_and_clear();
    }
    if json {
        println!(
            "{}",
            serde_json::to_string_pretty(&report::summary_json(&a))?
        );
        return Ok(());
    }
    o.notice();
    o.line(format!(
        "record {}: {:.1} s at {} Hz, lead {}",
        a.record_name, a.duration_s, a.fs_hz, a.raw.name
    ));
    o.line(format!(
        "beats: {}   mean HR {:.1} bpm   SDNN {:.1} ms   RMSSD {:.1} ms   pNN50 {:.3}",
        a.beat_samples.len(),
        a.variability.mean_hr_bpm,
        a.variability.sdnn_ms,
        a.variability.rmssd_ms,
        a.variability.pnn50
    ));
    if let Some(s) = &a.score {
        o.line(format!(
            "against reference: TP {} FP {} FN {}   Se {:.2} %   +P {:.2} %",
            s.tp,
            s.fp,
            s.fn_,
            100.0 * s.se,
            100.0 * s.ppv
        ));
    }
    if a.embedding.n > 0 {
        let ev: Vec<String> = a
            .embedding
            .eigenvalues
            .iter()
            .take(5)
            .map(|v| format!("{v:.4}"))
            .collect();
        o.line(format!(
            "diffusion map: {} beats, epsilon {:.4}, eigenvalues {}",
            a.embedding.n,
            a.embedding.epsilon,
            ev.join(" ")
        ));
        let noise = a
            .dimension
            .noise_scale
            .map_or("not detected".to_string(), |s| format!("{s:.4}"));
        o.line(format!(
            "dimension (k-means quantization): d ≈ {:.2}, noise scale {noise}",
            a.dimension.d
        ));
        if let Some(s) = &a.dimension_suite {
            let parts: Vec<String> = s
                .estimates
                .iter()
                .map(|e| {
                    format!(
                        "{} {:.2} [{:.2}, {:.2}]",
                        e.method.name(),
                        e.d,
                        e.ci95[0],
                        e.ci95[1]
                    )
                })
                .collect();
            o.line(format!(
                "dimension estimates (95 % bootstrap intervals): {}",
                parts.join(", ")
            ));
        }
    }
    for n in &a.notes {
        o.line(format!("note: {n}"));
    }
    o.line(format!(
        "report: {}",
        written.dir.join("report.html").display()
    ));
    Ok(())
}

fn demo(out: &Path, seed: Option<u64>, minutes: f64, json: bool, quiet: bool) -> Result<()> {
    let o = Out { quiet };
    let input_dir = out.join("input");
    std::fs::create_dir_all(&input_dir)
        .with_context(|| format!("{}: cannot create folder", input_dir.display()))?;
    let rec_path = input_dir.join("telemetry-night.csv");
    match seed {
        None => {
            io::write_atomic(&rec_path, DEMO_CSV.as_bytes())?;
            io::write_atomic(
                &io::annotations::sibling_path(&rec_path),
                DEMO_ANN.as_bytes(),
            )?;
            o.line("demo: bundled recording demo-data/telemetry-night.csv (synthetic; exact ground truth)");
        }
        Some(seed) => {
            let scen = synth::Scenario::from_name("telemetry-night")?;
            let p = synth::SynthParams::for_scenario(scen, minutes, 250.0, seed);
            let rec = synth::synthesize(&p)?;
            io::csv::write_record(&rec, &rec_path)?;
            io::annotations::write(
                &rec.annotations,
                rec.fs_hz,
                &io::annotations::sibling_path(&rec_path),
            )?;
            o.line(format!(
                "demo: synthesised telemetry-night, {minutes} min, seed {seed}"
            ));
        }
    }
    let input = InputArgs {
        input: rec_path,
        fs_hz: None,
        lead: None,
        reference: None,
        config: None,
        dataset: None,
        checksum: io::ChecksumPolicy::default(),
    };
    let (rec, params, info) = load(&input, &o)?;
    let t0 = std::time::Instant::now();
    analyze_and_write(
        &rec,
        &info,
        &params,
        out,
        json,
        &report::ReportOptions::default(),
        &o,
    )?;
    o.line(format!(
        "demo finished in {:.2} s",
        t0.elapsed().as_secs_f64()
    ));
    Ok(())
}

#[allow(clippy::too_many_arguments)]
fn synth_cmd(
    out: &Path,
    minutes: f64,
    fs_hz: f64,
    scenario: &str,
    seed: u64,
    leads: usize,
    mean_hr_bpm: Option<f64>,
    quiet: bool,
) -> Result<()> {
    let o = Out { quiet };
    let scen = synth::Scenario::from_name(scenario)?;
    let mut p = synth::SynthParams::for_scenario(scen, minutes, fs_hz, seed);
    p.leads = leads;
    if let Some(hr) = mean_hr_bpm {
        p.mean_hr_bpm = hr;
    }
    p.check()?;
    let rec = synth::synthesize(&p)?;
    let ext = out
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    match ext.as_str() {
        "csv" => io::csv::write_record(&rec, out)?,
        "edf" => io::edf::write_record(&rec, out)?,
        "hea" => {
            let dir = out.parent().filter(|d| !d.as_os_str().is_empty()).unwrap_or(Path::new("."));
            let mut named = rec.clone();
            named.name = match io::file_stem(out) {
                s if s.is_empty() => "synthetic".to_string(),
                s => s,
            };
            io::physionet::write_record(&named, dir, 212, 200.0)?;
        }
        _ => bail!(
            "{}: unsupported output extension `.{ext}`; synth writes .csv, .edf or .hea (PhysioNet format 212)",
            out.display()
        ),
    }
    let ann = io::annotations::sibling_path(out);
    io::annotations::write(&rec.annotations, rec.fs_hz, &ann)?;
    o.notice();
    o.line(format!(
        "wrote {} ({} lead(s), {} samples at {} Hz, scenario {}, seed {seed})",
        out.display(),
        rec.leads.len(),
        rec.n_samples(),
        rec.fs_hz,
        scen.name()
    ));
    o.line(format!(
        "wrote {} ({} beats, {} rhythm intervals)",
        ann.display(),
        rec.annotations.beats.len(),
        rec.annotations.rhythms.len()
    ));
    Ok(())
}

fn beats_cmd(input: &InputArgs, out: Option<&Path>, json: bool, quiet: bool) -> Result<()> {
    let o = Out {
        quiet: quiet || json,
    };
    let (rec, params, _) = load(input, &o)?;
    let b = pipeline::detect_beats(&rec, &params)?;
    let v = beatfold::rhythm::variability(&b.rr_s);
    if let Some(path) = out {
        let mut s = String::from("sample,time_s,rr_s,label\n");
        for (i, &smp) in b.samples.iter().enumerate() {
            let rr = if i == 0 {
                String::new()
            } else {
                format!("{:.6}", b.rr_s[i - 1])
            };
            s.push_str(&format!(
                "{smp},{:.6},{rr},{}\n",
                smp as f64 / rec.fs_hz,
                b.labels[i]
            ));
        }
        io::write_atomic(path, s.as_bytes())?;
    }
    if json {
        let j = json!({
            "record": rec.name, "fs_hz": rec.fs_hz, "n_beats": b.samples.len(),
            "mean_hr_bpm": v.mean_hr_bpm, "agreement": serde_json::Value::Null,
            "notice": NOTICE,
        });
        println!("{}", serde_json::to_string_pretty(&j)?);
        return Ok(());
    }
    o.notice();
    o.line(format!(
        "{}: {} beats, mean HR {:.1} bpm",
        rec.name,
        b.samples.len(),
        v.mean_hr_bpm
    ));
    if let Some(p) = out {
        o.line(format!("wrote {}", p.display()));
    }
    Ok(())
}

fn score_cmd(
    inputs: &[PathBuf],
    reference: Option<PathBuf>,
    fs_hz: Option<f64>,
    lead: Option<String>,
    json: bool,
    quiet: bool,
    rules: &beatfold::beats::ec57::Ec57Rules,
) -> Result<()> {
    let o = Out {
        quiet: quiet || json,
    };
    if reference.is_some() && inputs.len() > 1 {
        bail!("--reference names one file, but {} recordings were given; leave it out to use each recording's `<stem>.annotations.csv`", inputs.len());
    }
    let mut rows = Vec::new();
    let mut scores = Vec::new();
    o.notice();
    o.line(rules.describe());
    o.line(format!(
        "{:<24} {:>8} {:>8} {:>6} {:>6} {:>6} {:>8} {:>8}",
        "record", "ref", "detected", "TP", "FP", "FN", "Se %", "+P %"
    ));
    for path in inputs {
        let input = InputArgs {
            input: path.clone(),
            fs_hz,
            lead: lead.clone(),
            reference: reference.clone(),
            config: None,
            dataset: None,
            checksum: io::ChecksumPolicy::default(),
        };
        let (rec, params, _) = load(&input, &o)?;
        if rec.annotations.beats.is_empty() {
            bail!(
                "{}: no reference beats (give --reference ANN or put `{}` beside it)",
                path.display(),
                io::annotations::sibling_path(path).display()
            );
        }
        let b = pipeline::detect_beats(&rec, &params)?;
        let r: Vec<usize> = rec.annotations.beats.iter().map(|x| x.sample).collect();
        let rs = beatfold::beats::ec57::score_record(
            &rec.name,
            &r,
            &b.samples,
            rec.fs_hz,
            rec.n_samples(),
            rules,
        );
        let s = rs.score;
        scores.push(rs);
        o.line(format!(
            "{:<24} {:>8} {:>8} {:>6} {:>6} {:>6} {:>8.2} {:>8.2}",
            rec.name,
            s.reference,
            s.detected,
            s.tp,
            s.fp,
            s.fn_,
            100.0 * s.se,
            100.0 * s.ppv
        ));
        let rhythm = rhythm_score(&rec, &b, &params)?;
        if let Some(r) = &rhythm {
            o.line(format!(
                "{:<24} irregular-rhythm screen (research): reference {:.0} s, screened {:.0} s, duration Se {:.2} %, Sp {:.2} %",
                "",
                r["reference_irregular_s"].as_f64().unwrap_or(0.0),
                r["detected_irregular_s"].as_f64().unwrap_or(0.0),
                100.0 * r["duration_se"].as_f64().unwrap_or(f64::NAN),
                100.0 * r["duration_sp"].as_f64().unwrap_or(f64::NAN)
            ));
        }
        rows.push(json!({
            "record": rec.name, "duration_s": rec.duration_s(),
            "beats": s, "rhythm": rhythm.unwrap_or(serde_json::Value::Null),
        }));
    }
    let t = beatfold::beats::ec57::totals(&scores, rules);
    let (tp, fp, fn_, gse, gppv) = (
        t.pooled.tp,
        t.pooled.fp,
        t.pooled.fn_,
        t.pooled.se,
        t.pooled.ppv,
    );
    if inputs.len() > 1 {
        o.line(format!(
            "{:<24} {:>8} {:>8} {:>6} {:>6} {:>6} {:>8.2} {:>8.2}",
            "pooled",
            tp + fn_,
            tp + fp,
            tp,
            fp,
            fn_,
            100.0 * gse,
            100.0 * gppv
        ));
        o.line(format!(
            "{:<24} average over {} records: Se {:.2} %, +P {:.2} %",
            "",
            t.records,
            100.0 * t.average_se,
            100.0 * t.average_ppv
        ));
    }
    if json {
        let j = if rows.len() == 1 {
            rows.remove(0)
        } else {
            json!({"records": rows, "rules": rules, "pooled": {"tp": tp, "fp": fp, "fn": fn_, "se": gse, "ppv": gppv}, "average": {"se": t.average_se, "ppv": t.average_ppv, "records": t.records}, "left_out": t.left_out})
        };
        println!("{}", serde_json::to_string_pretty(&j)?);
    }
    Ok(())
}

/// Duration agreement of the irregular-rhythm screen with the reference rhythm labels, or None
/// when the reference has no rhythm labels.
fn rhythm_score(
    rec: &Record,
    b: &pipeline::BeatsResult,
    params: &AnalyzeParams,
) -> Result<Option<serde_json::Value>> {
    if rec.annotations.rhythms.is_empty() {
        return Ok(None);
    }
    let sc = pipeline::screen_rhythm(b, rec.fs_hz, params)?;
    let truth = irregular_reference(&rec.annotations);
    let found = sc.episode_bounds();
    let (r, d, se, sp) =
        beatfold::rhythm::screen::duration_agreement(&truth, &found, rec.duration_s());
    let num = |v: f64| {
        if v.is_finite() {
            json!(v)
        } else {
            serde_json::Value::Null
        }
    };
    Ok(Some(json!({
        "reference_irregular_s": r, "detected_irregular_s": d,
        "duration_se": num(se), "duration_sp": num(sp),
        "reference_episodes": truth.len(), "detected_episodes": found.len(),
    })))
}

/// Points from a recording's beat features or from a plain numeric CSV.
fn points_of(input: &InputArgs, o: &Out) -> Result<beatfold::points::Points> {
    if io::looks_like_points(&input.input) {
        return Ok(io::read_points(&input.input)?);
    }
    let (rec, params, _) = load(input, o)?;
    let b = pipeline::detect_beats(&rec, &params)?;
    let f =
        beatfold::features::beat_features(&b.conditioned, rec.fs_hz, &b.samples, &params.features)?;
    Ok(f.points)
}

/// Row-major values as CSV lines (8 significant digits in scientific notation).
fn csv_rows(values: &[f64], cols: usize) -> String {
    let mut s = String::new();
    for row in values.chunks(cols.max(1)) {
        let r: Vec<String> = row.iter().map(|v| format!("{v:.8e}")).collect();
        s.push_str(&r.join(","));
        s.push('\n');
    }
    s
}

fn embed_cmd(input: &InputArgs, a: &super::EmbedOptions, quiet: bool) -> Result<()> {
    let o = Out {
        quiet: quiet || a.json,
    };
    let pts = points_of(input, &o)?;
    let mut p = params_from(input)?.diffusion;
    p.components = a.components;
    p.alpha = a.alpha;
    p.t = a.t;
    p.seed = a.seed;
    if a.epsilon.is_some() {
        p.epsilon = a.epsilon;
        p.local_scaling_neighbors = 0;
    }
    if let Some(k) = a.neighbors {
        p.neighbors = k;
        if k > 0 {
            p.local_scaling_neighbors = p.local_scaling_neighbors.min(k);
        }
    }
    if let Some(m) = a.landmarks {
        p.max_fit_points = m;
        p.landmark_check = p.landmark_check.max(1000);
    }
    let (e, placed) = match &a.model {
        Some(path) => {
            let model = beatfold::embed::model_io::load_model(path)?;
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
        None => {
            p.check()?;
            (beatfold::embed::diffusion_map(&pts, &p)?, false)
        }
    };
    if let Some(path) = out_path(&a.out) {
        io::write_atomic(path, csv_rows(&e.coords, e.components).as_bytes())?;
    }
    if let Some(path) = out_path(&a.pca_out) {
        io::write_atomic(path, csv_rows(&e.pca_coords, e.pca_components).as_bytes())?;
    }
    if let (Some(path), Some(m)) = (&a.save_model, &e.model) {
        beatfold::embed::model_io::save_model(m, path)?;
    }
    if a.json {
        let j = json!({"n": e.n, "components": e.components, "eigenvalues": e.eigenvalues,
            "epsilon": e.epsilon, "alpha": e.alpha, "t": e.t, "neighbors": e.neighbors,
            "fit_points": e.fit_points, "residual": e.residual,
            "landmark_error": e.landmark_error, "placed_by_model": placed,
            "pca": {"components": e.pca_components, "explained_variance_ratio": e.pca_explained},
            "notice": NOTICE});
        println!("{}", serde_json::to_string_pretty(&j)?);
        return Ok(());
    }
    o.notice();
    o.line(format!(
        "{} points in {} dimensions → {} diffusion coordinates (epsilon {:.5}, alpha {}, t {}, {} neighbours, fitted on {} points{})",
        pts.n,
        pts.dim,
        e.components,
        e.epsilon,
        e.alpha,
        e.t,
        e.neighbors,
        e.fit_points,
        if placed { ", placed by the saved model" } else { "" }
    ));
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

/// Options of the `dimension` command besides input and output switches.
struct DimensionOpts {
    method: String,
    seed: u64,
    bootstrap: usize,
    from: String,
    embed_dim: usize,
    delay: Option<usize>,
    max_points: usize,
    figure: Option<PathBuf>,
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
        bail!("--from: `{from}` is not a source; use features, rr or signal");
    }
    if io::looks_like_points(&input.input) {
        if from != "features" {
            bail!(
                "--from {from} needs a recording; {} is a point cloud",
                input.input.display()
            );
        }
        return Ok((io::read_points(&input.input)?, json!({"from": "points"})));
    }
    if from == "features" {
        return Ok((points_of(input, o)?, json!({"from": "features"})));
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

fn dimension_cmd(input: &InputArgs, opts: &DimensionOpts, json: bool, quiet: bool) -> Result<()> {
    use beatfold::dimension::{dimension_suite, Method, SuiteParams};
    let o = Out {
        quiet: quiet || json,
    };
    let methods = Method::parse_list(&opts.method)?;
    let (pts, source) = dimension_points(input, opts, &o)?;
    let mut kp = params_from(input)?.dimension;
    kp.seed = opts.seed;
    let p = SuiteParams {
        methods,
        bootstrap: opts.bootstrap,
        seed: opts.seed,
        max_points: opts.max_points,
        kmeans: kp,
        ..SuiteParams::default()
    };
    let s = dimension_suite(&pts, &p)?;
    let mut written = Vec::new();
    if let Some(stem) = &opts.figure {
        written = report::dimension_figure::write_suite_figure(&s, stem)?;
    }
    if json {
        println!(
            "{}",
            serde_json::to_string_pretty(&dimension_json(&s, source))?
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
    o.line(format!(
        "{:<14} {:>8} {:>18}",
        "estimator", "d", "95 % interval"
    ));
    for e in &s.estimates {
        o.line(format!(
            "{:<14} {:>8.2} {:>18}",
            e.method.name(),
            e.d,
            if e.ci95[0].is_finite() {
                format!("[{:.2}, {:.2}]", e.ci95[0], e.ci95[1])
            } else {
                "-".to_string()
            }
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

/// JSON of the `dimension` command (DESIGN.md keys plus one object per method with its curve).
fn dimension_json(
    s: &beatfold::dimension::DimensionSuite,
    source: serde_json::Value,
) -> serde_json::Value {
    let num = |x: f64| {
        if x.is_finite() {
            json!(x)
        } else {
            serde_json::Value::Null
        }
    };
    let curve = |c: &[beatfold::dimension::ScalePoint]| -> Vec<serde_json::Value> {
        c.iter()
            .map(|q| json!({"scale": num(q.scale), "d": num(q.d)}))
            .collect()
    };
    let mut est = serde_json::Map::new();
    for e in &s.estimates {
        est.insert(
            e.method.name().to_string(),
            json!({"d": num(e.d), "estimate": num(e.d),
                   "ci95": [num(e.ci95[0]), num(e.ci95[1])], "curve": curve(&e.curve)}),
        );
    }
    json!({
        "n": s.n,
        "ambient_dim": s.ambient_dim,
        "n_used": s.n_used,
        "bootstrap": s.bootstrap,
        "estimates": est,
        "scale_curve": s.kmeans.as_ref().map_or(Vec::new(), |k| curve(&k.curve)),
        "noise_scale": s.noise_scale.map_or(serde_json::Value::Null, num),
        "failures": s.failures,
        "source": source,
        "notice": NOTICE,
    })
}

fn rhythm_cmd(
    input: &InputArgs,
    window: &str,
    step: Option<&str>,
    windows_out: Option<&Path>,
    json: bool,
    quiet: bool,
) -> Result<()> {
    use beatfold::rhythm::windowed::{windowed_variability, Span};
    let o = Out {
        quiet: quiet || json,
    };
    // Check the window options before reading anything.
    let len = Span::parse(window)?;
    let step = match step {
        Some(s) => Span::parse(s)?,
        None => match len {
            Span::Beats(n) => Span::Beats((n / 2).max(1)),
            Span::Seconds(s) => Span::Seconds(0.5 * s),
        },
    };
    let (rec, params, _) = load(input, &o)?;
    let b = pipeline::detect_beats(&rec, &params)?;
    let nn = beatfold::rhythm::nn_intervals(&b.rr_s, &b.labels);
    let v = beatfold::rhythm::variability(&nn);
    let (sd1, sd2, sampen) = beatfold::rhythm::entropy::nn_descriptors(&nn);
    let sc = pipeline::screen_rhythm(&b, rec.fs_hz, &params)?;
    let (verdict, _) = beatfold::verdicts::record_verdict(&rec, &params)?;
    let t_end: Vec<f64> = b
        .samples
        .iter()
        .skip(1)
        .map(|&s| s as f64 / rec.fs_hz)
        .collect();
    let wins = windowed_variability(&b.rr_s, &t_end, &b.labels, len, step)?;
    if let Some(path) = windows_out {
        let mut csv =
            String::from("start_s,end_s,n_intervals,n_nn,mean_hr_bpm,sdnn_ms,rmssd_ms,pnn50,cv\n");
        for w in &wins {
            let v = &w.variability;
            csv.push_str(&format!(
                "{:.3},{:.3},{},{},{:.4},{:.4},{:.4},{:.5},{:.6}\n",
                w.start_s,
                w.end_s,
                w.n_intervals,
                v.n_rr,
                v.mean_hr_bpm,
                v.sdnn_ms,
                v.rmssd_ms,
                v.pnn50,
                w.cv
            ));
        }
        io::write_atomic(path, csv.as_bytes())?;
    }
    let num = |x: f64| {
        if x.is_finite() {
            json!(x)
        } else {
            serde_json::Value::Null
        }
    };
    if json {
        let wj: Vec<serde_json::Value> = wins
            .iter()
            .map(|w| {
                let v = &w.variability;
                json!({"start_s": w.start_s, "end_s": w.end_s, "n_intervals": w.n_intervals,
                    "n_nn": v.n_rr, "mean_hr_bpm": num(v.mean_hr_bpm), "sdnn_ms": num(v.sdnn_ms),
                    "rmssd_ms": num(v.rmssd_ms), "pnn50": num(v.pnn50), "cv": num(w.cv)})
            })
            .collect();
        let j = json!({"record": rec.name, "variability": v,
            "poincare": {"sd1_ms": num(sd1), "sd2_ms": num(sd2)},
            "sample_entropy": num(sampen),
            "screen": {"windows": sc.windows.len(), "episodes": sc.episodes},
            "verdict": beatfold::rhythm::verdict::verdict_json(&verdict),
            "windows": wj,
            "notice": NOTICE});
        println!("{}", serde_json::to_string_pretty(&j)?);
        return Ok(());
    }
    o.notice();
    o.line(format!(
        "{}: {} NN intervals; mean HR {:.1} bpm, SDNN {:.1} ms, RMSSD {:.1} ms, pNN50 {:.3}",
        rec.name, v.n_rr, v.mean_hr_bpm, v.sdnn_ms, v.rmssd_ms, v.pnn50
    ));
    o.line(format!(
        "Poincaré SD1 {:.1} ms, SD2 {:.1} ms; sample entropy {:.3}",
        sd1, sd2, sampen
    ));
    o.line(format!(
        "irregular-rhythm research screen (not a diagnosis): {} windows, {} episode(s){}",
        sc.windows.len(),
        sc.episodes.len(),
        sc.episodes
            .iter()
            .map(|e| format!(" {:.0}–{:.0} s", e.start_s, e.end_s))
            .collect::<String>()
    ));
    o.line(format!(
        "rhythm verdict (research label, not a diagnosis): {} — {}",
        verdict.class.name(),
        verdict.reasons.join("; ")
    ));
    o.line(format!(
        "variability in {} sliding window(s) of {window}{}",
        wins.len(),
        windows_out.map_or(String::new(), |p| format!(": {}", p.display()))
    ));
    Ok(())
}
