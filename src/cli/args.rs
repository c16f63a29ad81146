//! Option groups shared by several commands, each flag defined once with its help.

use beatfold::io::beat_table::BeatTable;
use beatfold::separate::TableMode;
use clap::Args;
use std::path::PathBuf;

/// Options of `beatfold embed`.
#[derive(Debug, Args, Clone)]
pub struct EmbedOptions {
    /// Output CSV of diffusion coordinates (one row a point, no header).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Output CSV of the PCA baseline scores (one row a point, no header).
    #[arg(long, value_name = "FILE")]
    pub pca_out: Option<PathBuf>,
    /// Number of diffusion coordinates (default 10, or the config file's value).
    #[arg(long)]
    pub components: Option<usize>,
    /// Density normalisation alpha, 0..1 (default 1: Laplace–Beltrami, density-free).
    #[arg(long)]
    pub alpha: Option<f64>,
    /// Diffusion time t (default 1).
    #[arg(long)]
    pub t: Option<f64>,
    /// Kernel bandwidth: `local` (variable bandwidth, the default), `auto` (one global epsilon
    /// by the kernel-sum rule) or a number (a fixed epsilon in squared input units).
    #[arg(long, value_name = "auto|local|EPS")]
    pub bandwidth: Option<beatfold::embed::Bandwidth>,
    /// Neighbours per point in the sparse kernel graph, 2..1000, or 0 for a dense kernel
    /// (every pair; up to 5000 points) (default 30, or the config file's value).
    #[arg(long, visible_alias = "k", value_name = "K")]
    pub neighbors: Option<usize>,
    /// Landmark mode: fit on at most N seeded random points and place the others by Nyström
    /// extension (default 200 000).
    #[arg(long, value_name = "N")]
    pub landmarks: Option<usize>,
    /// Place the input's points into the model saved in this HDF5 file (a results.h5 from
    /// `analyze` or a file from --save-model) instead of fitting a new map.
    #[arg(long, value_name = "FILE.h5", conflicts_with_all = ["save_model", "components", "alpha", "t", "bandwidth", "neighbors", "landmarks", "seed"])]
    pub model: Option<PathBuf>,
    /// Write the fitted model to this HDF5 file (group /embedding/model).
    #[arg(long, value_name = "FILE.h5")]
    pub save_model: Option<PathBuf>,
    /// Seed for landmarks, bandwidth subsample and eigensolver start (default 0).
    #[arg(long)]
    pub seed: Option<u64>,
    /// Print a summary as JSON on stdout.
    #[arg(long)]
    pub json: bool,
}

/// A recording and how to read it (commands that take one recording).
#[derive(Debug, Args, Clone)]
pub struct InputArgs {
    /// Recording (.csv/.tsv, .edf, .hea, .h5) or, where accepted, a plain numeric CSV of points.
    pub input: PathBuf,
    /// How to read it.
    #[command(flatten)]
    pub read: ReadArgs,
}

/// The sampling rate of recordings that do not carry one (every command that reads
/// recordings, the cohort included).
#[derive(Debug, Args, Clone, Default)]
pub struct RateArg {
    /// Sampling rate in Hz for files without a time column or rate comment (no default).
    #[arg(long = "fs", value_name = "HZ")]
    pub fs_hz: Option<f64>,
}

/// The analysis parameter file (every command that analyses recordings, the cohort included).
#[derive(Debug, Args, Clone, Default)]
pub struct ConfigArg {
    /// JSON file of analysis parameters (missing keys take defaults, unknown keys are refused;
    /// flags given on the command line win over it; see docs/methods.md).
    #[arg(long, value_name = "FILE")]
    pub config: Option<PathBuf>,
}

/// Record labels for scoring record verdicts (`score` and `cohort`).
#[derive(Debug, Args, Clone, Default)]
pub struct LabelArgs {
    /// Label file, one `record,label` line a record (research labels, never a diagnosis);
    /// record verdicts are scored against it.
    #[arg(long, value_name = "FILE")]
    pub labels: Option<PathBuf>,
    /// With --labels: which class each label stands for, `LABEL=class,…` (classes regular,
    /// irregular, other, unreadable).
    #[arg(
        long,
        value_name = "MAP",
        default_value = "A=irregular,N=regular,O=other,~=unreadable",
        requires = "labels"
    )]
    pub label_map: String,
}

/// Reading options, defined once for every command that reads recordings.
#[derive(Debug, Args, Clone, Default)]
pub struct ReadArgs {
    /// The sampling rate of files without one.
    #[command(flatten)]
    pub rate: RateArg,
    /// Lead to analyse, by name or zero-based index (default: the first lead).
    #[arg(long, value_name = "NAME|INDEX")]
    pub lead: Option<String>,
    /// Reference annotation file: a beatfold annotation CSV, or a PhysioNet annotation file
    /// (default: a sibling `<stem>.annotations.csv`, or for a .hea record its `.atr` file).
    #[arg(long, value_name = "FILE")]
    pub reference: Option<PathBuf>,
    /// For a PhysioNet-format record: the suffix of the annotation file beside its header to use
    /// as the reference, e.g. `qrs` (default `atr`).
    #[arg(long, value_name = "SUFFIX", conflicts_with = "reference")]
    pub annotation_suffix: Option<String>,
    /// The analysis parameter file.
    #[command(flatten)]
    pub config: ConfigArg,
    /// For HDF5 input: the dataset holding the signal, e.g. /ecg (default: the only dataset).
    #[arg(long, value_name = "PATH")]
    pub dataset: Option<String>,
    /// For PhysioNet-format input: a signal checksum that does not match its header is a
    /// warning (`warn`, default: the reading goes on) or an error (`strict`).
    #[arg(long, value_name = "warn|strict", default_value_t = beatfold::io::ChecksumPolicy::Warn)]
    pub checksum: beatfold::io::ChecksumPolicy,
}

/// A user's per-beat feature table (`analyze`, `cohort`, `separate`), defined once.
#[derive(Debug, Args, Clone, Default)]
pub struct FeatureTableArgs {
    /// Per-beat feature table (CSV: a `sample` or `time_s` key column, a `record` column when
    /// several records are read, then numeric feature columns); rows are matched to detected
    /// beats within the beat matching window (150 ms by default). Rows and beats left out are
    /// reported.
    #[arg(long, value_name = "FILE.csv")]
    pub features: Option<PathBuf>,
    /// With --features: `replace` (the table's columns alone) or `join` (appended to the
    /// built-in beat windows) (default replace, or the config file's `separate.table_mode`).
    #[arg(long, value_name = "replace|join", requires = "features")]
    pub features_mode: Option<String>,
}

impl FeatureTableArgs {
    /// The mode given, else `default`.
    pub fn mode(&self, default: TableMode) -> anyhow::Result<TableMode> {
        Ok(match self.features_mode.as_deref() {
            None => default,
            Some("replace") => TableMode::Replace,
            Some("join") => TableMode::Join,
            Some(o) => anyhow::bail!("--features-mode: `{o}`; allowed replace or join"),
        })
    }

    /// Read the table, if one is given, with its mode (`default` when no mode is given).
    pub fn read(&self, default: TableMode) -> anyhow::Result<Option<(BeatTable, TableMode)>> {
        let mode = self.mode(default)?;
        Ok(match &self.features {
            Some(f) => Some((beatfold::io::beat_table::read(f)?, mode)),
            None => None,
        })
    }
}
