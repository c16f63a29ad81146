//! The command line: flag definitions (each with unit and default in its help) and the glue that
//! runs library stages and prints results. Every command prints the research-use notice unless
//! `--json` (where the notice is a key) or `--quiet` is given.

mod analyze;
mod args;
mod beats;
pub mod cohort;
pub mod commands;
mod dimension;
mod embed;
pub mod label_score;
mod rhythm;
pub mod separate;
mod synth;

pub use args::{
    ConfigArg, EmbedOptions, FeatureTableArgs, InputArgs, LabelArgs, RateArg, ReadArgs,
};
use clap::{Parser, Subcommand};
use std::path::PathBuf;

/// beatfold — ECG-like recordings to beats, diffusion-map embeddings, scale-resolved dimension
/// and rhythm measures. Research use only: not a medical device, not for diagnosis.
#[derive(Debug, Parser)]
#[command(name = "beatfold", version, about, long_about = None)]
pub struct Cli {
    /// Print nothing but errors (and --json output).
    #[arg(long, short, global = true)]
    pub quiet: bool,
    /// The command.
    #[command(subcommand)]
    pub command: Command,
}

/// Commands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Analyse the bundled demo recording (or a fresh synthetic one with --seed) end to end.
    Demo {
        /// Output folder (default: beatfold-demo).
        #[arg(long, default_value = "beatfold-demo")]
        out: PathBuf,
        /// Synthesise a new demo recording with this seed instead of the bundled one.
        #[arg(long)]
        seed: Option<u64>,
        /// Length of a freshly synthesised demo recording in minutes (default 6; needs --seed).
        #[arg(long, default_value_t = 6.0)]
        minutes: f64,
        /// Print the summary as JSON on stdout.
        #[arg(long)]
        json: bool,
    },
    /// Write a synthetic recording and its exact ground-truth annotation file.
    Synth {
        /// Output recording (.csv, .edf, or .hea for PhysioNet format 212); the exact annotations go
        /// to `<stem>.annotations.csv` beside it.
        #[arg(long)]
        out: PathBuf,
        /// Length in minutes (default 5).
        #[arg(long, default_value_t = 5.0)]
        minutes: f64,
        /// Sampling rate in Hz (default 250).
        #[arg(long = "fs", default_value_t = 250.0)]
        fs_hz: f64,
        /// Scenario: resting, telemetry-night, ambulatory-noisy (default resting).
        #[arg(long, default_value = "resting")]
        scenario: String,
        /// Random seed (default 0).
        #[arg(long, default_value_t = 0)]
        seed: u64,
        /// Number of leads, 1 or 2 (default 2).
        #[arg(long, default_value_t = 2)]
        leads: usize,
        /// Mean heart rate in beats per minute (default: the scenario's).
        #[arg(long = "hr", value_name = "BPM")]
        mean_hr_bpm: Option<f64>,
    },
    /// Whole chain on one recording: report.html, summary.json, results.h5, figures/.
    Analyze {
        /// Input and reading options.
        #[command(flatten)]
        input: InputArgs,
        /// Output folder (default: `<input stem>-beatfold`).
        #[arg(long)]
        out: Option<PathBuf>,
        /// Print the summary as JSON on stdout.
        #[arg(long)]
        json: bool,
        /// Figures to draw, comma separated, or `all` (default): trace, beats, embedding,
        /// trajectory, dimension, recurrence, rr, rhythm (or their numbers 1–8).
        #[arg(long, value_name = "LIST", default_value = "all")]
        figures: String,
        /// Start of the time range of the trace, trajectory and recurrence figures, seconds
        /// (default 0).
        #[arg(long = "view-start", value_name = "SECONDS")]
        from_s: Option<f64>,
        /// End of that time range, seconds (default: 10 s after the start for the trace, 60 s
        /// for the trajectory, one recurrence window for the recurrence plot).
        #[arg(long = "view-end", value_name = "SECONDS")]
        to_s: Option<f64>,
        /// Colour of the embedding figure's points: time (default), rr, class, rhythm or
        /// local-dimension (which also adds a strip of local dimension against time).
        #[arg(long = "colour-by", value_name = "WHAT", default_value = "time")]
        colour_by: String,
        /// A per-beat feature table replacing or joining the built-in beat windows.
        #[command(flatten)]
        table: FeatureTableArgs,
    },
    /// Detect beats; write sample, time, RR and label per beat.
    Beats {
        /// Input and reading options.
        #[command(flatten)]
        input: InputArgs,
        /// Output CSV (default: print a summary only).
        #[arg(long)]
        out: Option<PathBuf>,
        /// Print the summary as JSON on stdout.
        #[arg(long)]
        json: bool,
    },
    /// Score detected beats against reference beats (ANSI/AAMI EC57 150 ms matching).
    Score {
        /// Recordings to score.
        #[arg(required = true)]
        inputs: Vec<PathBuf>,
        /// How to read them (the same options for every recording).
        #[command(flatten)]
        read: ReadArgs,
        /// Seconds at the start of each record not scored (EC57 learning period).
        #[arg(long = "learning-s", value_name = "S", default_value_t = beatfold::beats::ec57::LEARNING_S)]
        learning_s: f64,
        /// Records (names, comma-separated) left out of the pooled totals, e.g. paced records.
        #[arg(long = "leave-out", value_name = "NAMES", value_delimiter = ',')]
        leave_out: Vec<String>,
        /// Print results as JSON on stdout.
        #[arg(long)]
        json: bool,
        /// With --labels: score record verdicts of the one folder given instead of beats.
        #[command(flatten)]
        labels: LabelArgs,
    },
    /// Diffusion-map embedding of a recording's beats or of a numeric CSV point cloud.
    Embed {
        /// Input and reading options.
        #[command(flatten)]
        input: InputArgs,
        /// Embedding options.
        #[command(flatten)]
        opts: EmbedOptions,
    },
    /// Intrinsic dimension scale by scale: k-means quantization scaling, TwoNN, MLE, correlation
    /// dimension and local PCA, each with a curve against scale and a bootstrap 95 % interval.
    Dimension {
        /// Input and reading options.
        #[command(flatten)]
        input: InputArgs,
        /// Estimators, comma separated (kmeans, twonn, mle, correlation, local_pca, kernel_sum;
        /// default: the config file's `dimension.methods`, else all of these).
        #[arg(long, value_name = "LIST")]
        method: Option<String>,
        /// Random seed of the whole suite (default: the config file's `dimension.seed`, else 0).
        #[arg(long)]
        seed: Option<u64>,
        /// Bootstrap resamples per interval, 0 to 10000 (default: the config file's
        /// `dimension.bootstrap`, else 30; 0 = no intervals).
        #[arg(long, value_name = "N")]
        bootstrap: Option<usize>,
        /// Point cloud of a recording: beat features, or a delay embedding of the RR series or of
        /// the conditioned signal (default features; ignored for a numeric CSV of points).
        #[arg(
            long = "cloud",
            value_name = "features|rr|signal",
            default_value = "features"
        )]
        from: String,
        /// Delay-embedding dimension for --cloud rr|signal, 1 to 100 (default 3).
        #[arg(long, value_name = "M", default_value_t = 3)]
        embed_dim: usize,
        /// Delay in beats (rr) or samples (signal), at least 1 (default: first minimum of the
        /// average mutual information).
        #[arg(long, value_name = "STEPS")]
        delay: Option<usize>,
        /// Most points used by the neighbour-based estimators, at least 20 (default: the config
        /// file's `dimension.max_points`, else 5000).
        #[arg(long, value_name = "N")]
        max_points: Option<usize>,
        /// Also write the figure of d against scale to PATH.svg and PATH.png.
        #[arg(long, value_name = "PATH")]
        figure: Option<PathBuf>,
        /// Print results as JSON on stdout.
        #[arg(long)]
        json: bool,
    },
    /// Analyse many records in parallel (a folder or a manifest CSV): per-record reports, a
    /// cohort table (cohort.csv, cohort.h5), a cohort page and one shared embedding. Resumable;
    /// `--shard I/N` for a cluster, then `beatfold cohort merge OUT`.
    Cohort(cohort::CohortArgs),
    /// Beat-class separation within records or across patients (research bench, not a classifier).
    Separate(separate::SeparateArgs),
    /// Print a readable summary of an HDF5 file, such as a results file.
    Inspect {
        /// The HDF5 file.
        file: PathBuf,
    },
    /// Time-domain variability of the RR series.
    Rhythm {
        /// Input and reading options.
        #[command(flatten)]
        input: InputArgs,
        /// Sliding window for variability: seconds (`300s`), minutes (`5m`) or RR intervals
        /// (`128b`). Default 5m.
        #[arg(long, default_value = beatfold::report::json_views::RHYTHM_WINDOW, value_name = "SPAN")]
        window: String,
        /// Step between windows, in the window's unit (default: half the window).
        #[arg(long, value_name = "SPAN")]
        step: Option<String>,
        /// Write the per-window variability as CSV to this file.
        #[arg(long, value_name = "CSV")]
        windows_out: Option<PathBuf>,
        /// Print results as JSON on stdout.
        #[arg(long)]
        json: bool,
    },
}
