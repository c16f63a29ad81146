//! `beatfold cohort`: flags and glue over [`beatfold::cohort`] (a run, one shard of a run, or the
//! merge of shard outputs). No analysis happens here.

use super::{ConfigArg, LabelArgs, RateArg};
use anyhow::{bail, Result};
use beatfold::cohort::{
    self, CohortLabels, CohortOptions, RecordOutputs, Shard, SharedParams, Status,
};
use beatfold::params::Checked;
use beatfold::NOTICE;
use clap::{Args, Subcommand};
use std::path::{Path, PathBuf};

/// Options of `beatfold cohort`.
#[derive(Debug, Args)]
#[command(args_conflicts_with_subcommands = true)]
pub struct CohortArgs {
    /// `merge OUT`: build the table and shared embedding from shard outputs.
    #[command(subcommand)]
    pub action: Option<CohortAction>,
    /// Folder of recordings, or a manifest CSV `path[,lead][,reference][,group]` (a folder
    /// literally named `merge` must be written `./merge`).
    pub input: Option<PathBuf>,
    /// Output folder (required).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Worker threads, one record each at a time, 1 to 1024 (default: available cores).
    #[arg(long, value_name = "N")]
    pub jobs: Option<usize>,
    /// Process only shard I of N (zero-based: 0/4 … 3/4; records at sorted positions i with
    /// i mod N = I) and do not merge.
    #[arg(long, value_name = "I/N")]
    pub shard: Option<String>,
    /// The analysis parameters of every record.
    #[command(flatten)]
    pub config: ConfigArg,
    /// The sampling rate of files without one.
    #[command(flatten)]
    pub rate: RateArg,
    /// Seed of the shared embedding's beat sample and fit (default 0).
    #[arg(long)]
    pub seed: Option<u64>,
    /// Most beats sampled from one record for the shared embedding, 1 to 100000 (default 300).
    #[arg(long, value_name = "N")]
    pub per_record: Option<usize>,
    /// Most beats in the shared embedding's fit sample, 10 to 5000 (default 1000).
    #[arg(long, value_name = "N")]
    pub max_total: Option<usize>,
    /// What each record writes: `summary` (default: table row and compact record.h5) or
    /// `full` (also report.html, results.h5, summary.json, figures/).
    #[arg(long, value_name = "summary|full", default_value = "summary")]
    pub record_outputs: String,
    /// File of record names (one a line, `#` comments) that write full outputs.
    #[arg(long, value_name = "FILE")]
    pub full_for: Option<PathBuf>,
    /// Labels the cohort page scores record verdicts against.
    #[command(flatten)]
    pub labels: LabelArgs,
    /// A per-beat feature table (with a `record` column) replacing or joining every record's
    /// built-in beat windows.
    #[command(flatten)]
    pub table: super::FeatureTableArgs,
}

/// Record names from a `--full-for` file: one a line; blank lines and `#` comments skipped.
fn read_names(path: &Path) -> Result<Vec<String>> {
    let text = beatfold::io::read_text(path)?;
    let names: Vec<String> = text
        .lines()
        .map(str::trim)
        .filter(|l| !l.is_empty() && !l.starts_with('#'))
        .map(String::from)
        .collect();
    if names.is_empty() {
        bail!("{}: --full-for names no record", path.display());
    }
    Ok(names)
}

/// Sub-actions of `beatfold cohort`.
#[derive(Debug, Subcommand)]
pub enum CohortAction {
    /// Merge shard outputs in OUT into cohort.csv, cohort.h5, cohort.html and the shared
    /// embedding.
    Merge {
        /// The output folder the shards wrote into.
        out: PathBuf,
    },
}

fn print_merge(m: &cohort::MergeSummary, out: &Path, quiet: bool) {
    if quiet {
        return;
    }
    let ok = m.rows.iter().filter(|r| r.status == Status::Ok).count();
    println!(
        "cohort: {} records, {ok} ok, {} with errors",
        m.rows.len(),
        m.rows.len() - ok
    );
    for r in m.rows.iter().filter(|r| r.status == Status::Error) {
        println!("  error {}: {}", r.name, r.error);
    }
    if let Some(s) = &m.shared {
        println!(
            "shared embedding: {} beats from {} records, {} coordinates",
            s.fit_points, s.records, s.components
        );
    }
    for n in &m.notes {
        println!("note: {n}");
    }
    println!("table: {}", out.join("cohort.csv").display());
    println!("page: {}", out.join("cohort.html").display());
}

/// Run `beatfold cohort`.
pub fn cohort_cmd(a: &CohortArgs, quiet: bool) -> Result<()> {
    if let Some(CohortAction::Merge { out }) = &a.action {
        let m = cohort::merge(out)?;
        if !quiet {
            println!("NOTICE: {NOTICE}");
        }
        print_merge(&m, out, quiet);
        return Ok(());
    }
    let Some(input) = &a.input else {
        bail!("cohort: give a folder of recordings or a manifest CSV (or `merge OUT`)");
    };
    let Some(out) = &a.out else {
        bail!("cohort: --out DIR is required");
    };
    let params = super::commands::config_params(&a.config)?;
    let jobs = a.jobs.unwrap_or_else(|| {
        std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(1)
    });
    // Every option is checked once, before any work.
    let opts = Checked::new(CohortOptions {
        features: a.table.read(params.separate.table_mode)?,
        params,
        jobs,
        shard: a.shard.as_deref().map(Shard::parse).transpose()?,
        fs_hz: a.rate.fs_hz,
        shared: shared_params(a),
        outputs: RecordOutputs::parse(&a.record_outputs)?,
        full_for: a
            .full_for
            .as_deref()
            .map(read_names)
            .transpose()?
            .unwrap_or_default(),
        labels: match &a.labels.labels {
            Some(f) => Some(CohortLabels::read(f, &a.labels.label_map)?),
            None => None,
        },
        ..CohortOptions::default()
    })?;
    if !quiet {
        println!("NOTICE: {NOTICE}");
    }
    let progress = |done: usize, total: usize| {
        if !quiet {
            eprintln!("[{done}/{total}] records done");
        }
    };
    let s = cohort::run_with_progress(input, out, &opts, &progress)?;
    if !quiet {
        println!(
            "{} of {} records in this run: {} analysed, {} already complete, {} failed",
            s.selected, s.total, s.analysed, s.skipped, s.failed
        );
    }
    match &s.merged {
        Some(m) => print_merge(m, out, quiet),
        None => {
            if !quiet {
                println!(
                    "shard done; when every shard has run: beatfold cohort merge {}",
                    out.display()
                );
            }
        }
    }
    Ok(())
}

/// The shared embedding's options: each flag, else the library default.
fn shared_params(a: &CohortArgs) -> SharedParams {
    let d = SharedParams::default();
    SharedParams {
        seed: a.seed.unwrap_or(d.seed),
        per_record: a.per_record.unwrap_or(d.per_record),
        max_total: a.max_total.unwrap_or(d.max_total),
        ..d
    }
}
