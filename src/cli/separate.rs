//! `beatfold separate`: flags and glue over [`beatfold::separate`]. Within-record with records
//! given as arguments, inter-patient with `--fit` and `--test`. No analysis happens here.

use super::commands::params_from;
use super::{InputArgs, ReadArgs};
use anyhow::{bail, Result};
use beatfold::io::ReadOptions;
use beatfold::params::Checked;
use beatfold::separate::{self, BeatClass, SeparateParams, Separation, Space};
use beatfold::NOTICE;
use clap::Args;
use std::path::PathBuf;

/// Options of `beatfold separate`.
#[derive(Debug, Args)]
pub struct SeparateArgs {
    /// Records scored one by one (within-record protocol); each needs reference beat labels.
    #[arg(conflicts_with_all = ["fit", "test"], required_unless_present = "fit")]
    pub records: Vec<PathBuf>,
    /// Records the spaces are fitted on (inter-patient protocol; needs --test).
    #[arg(long, num_args = 1.., value_name = "REC", requires = "test")]
    pub fit: Vec<PathBuf>,
    /// Records scored in the spaces fitted on --fit (inter-patient protocol).
    #[arg(long, num_args = 1.., value_name = "REC", requires = "fit")]
    pub test: Vec<PathBuf>,
    /// A per-beat feature table, scored next to the built-in features.
    #[command(flatten)]
    pub table: super::FeatureTableArgs,
    /// Spaces scored, comma separated: diffusion, pca, features or all (default all).
    #[arg(long, value_name = "LIST")]
    pub space: Option<String>,
    /// Neighbours of the vote, 1 to 100 (default 5, or the config file's
    /// `separate.vote_neighbors`).
    #[arg(long, value_name = "K")]
    pub vote_k: Option<usize>,
    /// Inter-patient only: draw the test beats in the fitted diffusion map, coloured by class,
    /// to PATH.svg and PATH.png.
    #[arg(long, value_name = "PATH", requires = "fit")]
    pub figure: Option<PathBuf>,
    /// How to read the records (the same options for every record).
    #[command(flatten)]
    pub read: ReadArgs,
    /// Print results as JSON on stdout.
    #[arg(long)]
    pub json: bool,
}

/// The bench's parameters: each flag given, else the config file's `separate` block (`d`),
/// whose missing keys hold the library defaults.
fn separate_params(a: &SeparateArgs, d: SeparateParams) -> Result<Checked<SeparateParams>> {
    let p = SeparateParams {
        vote_neighbors: a.vote_k.unwrap_or(d.vote_neighbors),
        spaces: match &a.space {
            Some(s) => Space::parse_list(s)?,
            None => d.spaces,
        },
        table_mode: a.table.mode(d.table_mode)?,
        ..d
    };
    Ok(Checked::new(p)?)
}

/// Run the command.
pub fn separate_cmd(a: &SeparateArgs, quiet: bool) -> Result<()> {
    let n_records = a.records.len() + a.fit.len() + a.test.len();
    if n_records > 1 && a.read.reference.is_some() {
        bail!("--reference names one annotation file, but {n_records} records are read; put each record's annotation file beside it instead");
    }
    let p = params_from(&InputArgs {
        input: PathBuf::new(),
        read: a.read.clone(),
    })?;
    let sp = separate_params(a, p.separate.clone())?;
    let opts = ReadOptions {
        fs_hz: a.read.rate.fs_hz,
        annotations: a.read.reference.clone(),
        annotation_suffix: a.read.annotation_suffix.clone(),
        dataset: a.read.dataset.clone(),
        checksum: a.read.checksum,
    };
    let table = a.table.read(sp.table_mode)?.map(|t| t.0);
    let t0 = std::time::Instant::now();
    let (result, notes) = if a.fit.is_empty() {
        let (beats, notes) = separate::load_labelled(&a.records, &opts, &p, table.as_ref())?;
        (separate::within_record(&beats, &p, &sp)?, notes)
    } else {
        let all: Vec<PathBuf> = a.fit.iter().chain(&a.test).cloned().collect();
        let (mut beats, notes) = separate::load_labelled(&all, &opts, &p, table.as_ref())?;
        let test = beats.split_off(a.fit.len());
        (separate::inter_patient(&beats, &test, &p, &sp)?, notes)
    };
    let mut result = result;
    result.notes.splice(0..0, notes);
    if let Some(fig) = &a.figure {
        separate::figure::write(fig, &result)?;
    }
    if a.json {
        println!("{}", serde_json::to_string_pretty(&result.to_json())?);
        return Ok(());
    }
    print_text(&result, quiet, t0.elapsed().as_secs_f64());
    Ok(())
}

fn pct(x: f64) -> String {
    if x.is_finite() {
        format!("{:5.1} %", 100.0 * x)
    } else {
        "    –  ".to_string()
    }
}

fn print_text(r: &Separation, quiet: bool, elapsed_s: f64) {
    if !quiet {
        println!("NOTICE: {NOTICE}");
        println!("{}", separate::BENCH_NOTE);
    }
    let t = r.totals();
    println!(
        "protocol {}: {} beats scored ({} reference beats missed by detection, {} detections without a reference beat, {} without a complete window)",
        r.protocol.name(),
        r.spaces.first().map_or(0, |s| s.1.n),
        t.missed_reference,
        t.unmatched_detections,
        t.no_window
    );
    if r.protocol == separate::Protocol::WithinRecord {
        println!("{}", separate::WITHIN_NOTE);
    } else {
        println!(
            "fit on {} records, scored on {} records",
            r.fit_records.len(),
            r.test_records.len()
        );
    }
    println!(
        "{}-nearest-neighbour vote; rank index = ROC area of the neighbour share (0.5 chance)",
        r.vote_neighbors
    );
    for (key, s) in &r.spaces {
        println!("{key}:");
        for c in s.classes.iter().filter(|c| c.n + c.predicted > 0) {
            println!(
                "  {} n {:6}  Se {}  +P {}  F1 {}  rank index {}",
                c.class.name(),
                c.n,
                pct(c.se),
                pct(c.ppv),
                if c.f1.is_finite() {
                    format!("{:.3}", c.f1)
                } else {
                    "–".into()
                },
                if c.rank_index.is_finite() {
                    format!("{:.3}", c.rank_index)
                } else {
                    "–".into()
                }
            );
        }
        let names: Vec<&str> = BeatClass::ALL.iter().map(|c| c.name()).collect();
        println!("  confusion (rows reference {names:?}, columns voted):");
        for (k, row) in s.confusion.iter().enumerate() {
            println!("    {} {:?}", names[k], row);
        }
    }
    for n in &r.notes {
        println!("note: {n}");
    }
    if !quiet {
        eprintln!("elapsed {elapsed_s:.1} s");
    }
}
