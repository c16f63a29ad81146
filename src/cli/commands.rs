//! Command dispatch and the helpers every command shares: reading an input with its checked
//! parameters, printing, the progress bar. Each command lives in its own file; no analysis
//! happens in the command line.

use super::{Cli, Command, InputArgs};
use anyhow::{bail, Result};
use beatfold::io::{self, ReadOptions};
use beatfold::params::{Check, Checked};
use beatfold::pipeline::{self, AnalyzeParams, InputInfo};
use beatfold::record::Record;
use beatfold::{report, NOTICE};
use std::io::IsTerminal;
use std::path::{Path, PathBuf};

pub(super) struct Out {
    pub(super) quiet: bool,
}

impl Out {
    pub(super) fn line(&self, s: impl AsRef<str>) {
        if !self.quiet {
            println!("{}", s.as_ref());
        }
    }
    pub(super) fn notice(&self) {
        self.line(format!("NOTICE: {NOTICE}"));
    }
    pub(super) fn warn(&self, warnings: &[String]) {
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
        } => super::analyze::demo(&out, seed, minutes, json, quiet || json),
        Command::Synth {
            out,
            minutes,
            fs_hz,
            scenario,
            seed,
            leads,
            mean_hr_bpm,
        } => super::synth::synth_cmd(
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
            table,
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
            let ropts = ropts.check()?;
            let (rec, params, info) = load(&input, &o)?;
            let table = table.read(params.separate.table_mode)?;
            let table = table.as_ref().map(|(t, m)| (t, *m));
            let inputs = super::analyze::Inputs {
                rec: &rec,
                info: &info,
                table,
            };
            super::analyze::analyze_and_write(inputs, &params, &out, json, &ropts, &o)
        }
        Command::Beats { input, out, json } => {
            super::beats::beats_cmd(&input, out.as_deref(), json, quiet)
        }
        Command::Score {
            inputs,
            read,
            learning_s,
            leave_out,
            json,
            labels,
        } => match &labels.labels {
            Some(l) => {
                if read.reference.is_some()
                    || read.annotation_suffix.is_some()
                    || read.rate.fs_hz.is_some()
                {
                    bail!("--labels scores record verdicts against a label file; --reference, --annotation-suffix and --fs do not apply with it");
                }
                let p = params_of(&read)?;
                super::label_score::run(&inputs, l, &labels.label_map, &p, json, quiet)
            }
            None => {
                let rules = beatfold::beats::ec57::Ec57Rules {
                    learning_s,
                    leave_out,
                    ..Default::default()
                };
                rules.validate()?;
                super::beats::score_cmd(&inputs, &read, json, quiet, &rules)
            }
        },
        Command::Embed { input, opts } => super::embed::embed_cmd(&input, &opts, quiet),
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
        } => super::dimension::dimension_cmd(
            &input,
            &super::dimension::DimensionOpts {
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
        } => super::rhythm::rhythm_cmd(
            &input,
            &window,
            step.as_deref(),
            windows_out.as_deref(),
            json,
            quiet,
        ),
        Command::Cohort(args) => super::cohort::cohort_cmd(&args, quiet),
        Command::Separate(args) => super::separate::separate_cmd(&args, quiet),
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

/// The parameters of a command that reads one recording: the flags (`--lead`), then the config
/// file, then the library defaults, checked once.
pub(super) fn params_from(input: &InputArgs) -> Result<Checked<AnalyzeParams>> {
    params_of(&input.read)
}

/// [`params_from`] for the reading options alone (commands that read many recordings).
pub(super) fn params_of(read: &super::ReadArgs) -> Result<Checked<AnalyzeParams>> {
    let mut p = config_params(&read.config)?;
    if read.lead.is_some() {
        p.lead = read.lead.clone();
    }
    Ok(p.check()?)
}

/// The parameters of the config file (`--config`), or the library defaults without one; the
/// caller lays its flags over them and checks the result once.
pub(super) fn config_params(c: &super::ConfigArg) -> Result<AnalyzeParams> {
    Ok(match &c.config {
        Some(c) => AnalyzeParams::from_json_file(c)?,
        None => AnalyzeParams::default(),
    })
}

pub(super) fn load(
    input: &InputArgs,
    o: &Out,
) -> Result<(Record, Checked<AnalyzeParams>, InputInfo)> {
    let params = params_from(input)?;
    let loaded = io::read_record(
        &input.input,
        &ReadOptions {
            fs_hz: input.read.rate.fs_hz,
            annotations: input.read.reference.clone(),
            annotation_suffix: input.read.annotation_suffix.clone(),
            dataset: input.read.dataset.clone(),
            checksum: input.read.checksum,
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

pub(super) fn progress_bar(quiet: bool) -> Option<indicatif::ProgressBar> {
    if quiet || !std::io::stderr().is_terminal() {
        return None;
    }
    let pb = indicatif::ProgressBar::new(pipeline::STAGES.len() as u64);
    if let Ok(style) = indicatif::ProgressStyle::with_template("{bar:30} {pos}/{len} {msg}") {
        pb.set_style(style);
    }
    Some(pb)
}
