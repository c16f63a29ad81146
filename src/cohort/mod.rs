//! Cohorts: many records in one run, one shared embedding, and deterministic shards for a cluster.
//!
//! In: a folder of recordings (`.csv`/`.tsv`, `.edf`, `.hea`, `.h5`; `*.annotations.csv` files are
//! references, not records) or a manifest CSV `path[,lead][,reference][,group]` (paths relative
//! to the manifest), an output folder and [`CohortOptions`]. Out, under the output folder:
//! `records/<name>/` with every file `analyze` writes plus `row.json` (the record's table row) and
//! `manifest.json` (SHA-256 of the input, of the parameters and of every output file);
//! `cohort-plan.json` (the sorted record list and the shared-embedding settings); and, after
//! [`merge`], `cohort.csv`, `cohort.h5`, `cohort.html`, `cohort_embedding.h5`,
//! `cohort_embedding.{png,svg}` and `records/<name>/shared_embedding.h5`.
//!
//! Records are analysed in a pool of `jobs` threads, one record a task, and nothing but each
//! record's small table row is kept, so memory does not grow with the number of records. A
//! record whose manifest matches its input, parameters and outputs is skipped on a re-run; a
//! record that fails gets an error row and does not stop the others. Every file is written
//! under a temporary name and renamed into place. A shard `I/N` takes the records at positions
//! `i` of the sorted list with `i mod N = I`; [`merge`] builds the table and the shared embedding
//! from whatever the shards wrote, so a sharded run and a single run give the same `cohort.csv`
//! byte for byte (the table holds no time stamps or run times).
//!
//! The shared embedding is a diffusion map (Coifman & Lafon 2006) fitted on a seeded sample of
//! beat feature rows with an equal share from every record, extended to all beats of every
//! record by the Nyström method (as in Coifman & Lafon 2006, section on geometric harmonics),
//! so beats of different records lie in one coordinate system.

pub mod compact;
mod figure;
mod page;
mod shared;
pub mod support;
mod table;

pub use shared::{SharedEmbeddingSummary, SharedParams};
pub use support::Support;
pub use table::{table_csv, Row, Status, COLUMNS};

use crate::error::{Error, Result};
use crate::io::beat_table::BeatTable;
use crate::io::{self, ReadOptions};
use crate::params::Checked;
use crate::pipeline::{self, AnalyzeParams, InputInfo};
use crate::report::{self, ReportOptions};
use crate::rhythm::label_score::{LabelMap, LabelScore};
use crate::rhythm::verdict::VerdictClass;
use crate::separate::TableMode;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};

/// File extensions (lower case) of recordings found in a cohort folder.
pub const RECORD_EXTENSIONS: [&str; 6] = ["csv", "tsv", "edf", "hea", "h5", "hdf5"];

/// Name of the plan file in the output folder.
pub const PLAN_FILE: &str = "cohort-plan.json";
/// Folder of the per-record outputs.
pub const RECORDS_DIR: &str = "records";
/// Table row file of a record that failed (an analysed record's row is in its manifest).
pub const ROW_FILE: &str = "row.json";
/// Per-record manifest file.
pub const MANIFEST_FILE: &str = "manifest.json";

/// One record of a cohort.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RecordSpec {
    /// The recording file.
    pub path: PathBuf,
    /// Unique name of the record in the cohort (its output folder name): the file stem, with
    /// `-2`, `-3`, … added when stems repeat.
    pub name: String,
    /// Lead to analyse (name or index); `None` = the analysis parameters' lead.
    pub lead: Option<String>,
    /// Reference annotation file; `None` = a sibling `<stem>.annotations.csv` if present.
    pub reference: Option<PathBuf>,
    /// Group label (may be empty).
    pub group: String,
}

/// A deterministic part of a cohort: records at sorted positions `i` with `i mod count = index`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    /// Zero-based shard index, `0 ≤ index < count`.
    pub index: usize,
    /// Number of shards, at least 1.
    pub count: usize,
}

impl Shard {
    /// Parse `I/N` (zero-based `I`, `0 ≤ I < N`, `1 ≤ N ≤ 100 000`).
    pub fn parse(s: &str) -> Result<Shard> {
        let bad = |m: &str| Error::param("shard", format!("`{s}`: {m}"));
        let (i, n) = s
            .split_once('/')
            .ok_or_else(|| bad("expected I/N, e.g. 0/4 (zero-based shard I of N)"))?;
        let index: usize = i
            .trim()
            .parse()
            .map_err(|_| bad("I is not a whole number"))?;
        let count: usize = n
            .trim()
            .parse()
            .map_err(|_| bad("N is not a whole number"))?;
        if !(1..=100_000).contains(&count) {
            return Err(bad("N must be between 1 and 100000 shards"));
        }
        if index >= count {
            return Err(bad(
                "I must be between 0 and N-1 (shards are numbered from 0)",
            ));
        }
        Ok(Shard { index, count })
    }

    /// True when the record at sorted position `i` belongs to this shard.
    pub fn contains(&self, i: usize) -> bool {
        i % self.count == self.index
    }
}

/// Options of a cohort run.
#[derive(Debug, Clone)]
pub struct CohortOptions {
    /// Analysis parameters applied to every record (a manifest's lead overrides `lead`).
    pub params: AnalyzeParams,
    /// Worker threads, 1 to 1024 (each analyses one record at a time).
    pub jobs: usize,
    /// Process only this shard and do not merge; `None` = every record, then [`merge`].
    pub shard: Option<Shard>,
    /// Sampling rate, Hz, for files that carry none.
    pub fs_hz: Option<f64>,
    /// Per-record report options (records with full outputs only).
    pub report: ReportOptions,
    /// Shared embedding settings (stored in the plan, used by [`merge`]).
    pub shared: SharedParams,
    /// What every record writes (default [`RecordOutputs::Summary`]).
    pub outputs: RecordOutputs,
    /// Records (by name) that write full outputs although `outputs` is `Summary`.
    pub full_for: Vec<String>,
    /// Minimum support of the table's estimates.
    pub support: Support,
    /// Record labels and the label map, scored on the cohort page (stored in the plan).
    pub labels: Option<CohortLabels>,
    /// A per-beat feature table whose rows (by their `record` column, or every row for a cohort
    /// of one record) replace or join each record's built-in beat windows (see
    /// [`crate::features::table`]); each record's rows take part in its parameter hash.
    pub features: Option<(BeatTable, TableMode)>,
}

/// What each record writes into `records/<name>/`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum RecordOutputs {
    /// `row.json`, `record.h5` (the compact results file) and `manifest.json`: a few tens of
    /// kilobytes for a short record. The dimension suite is not computed below the dimension's
    /// minimum support (the table would not show it).
    #[default]
    Summary,
    /// Everything `analyze` writes as well (`report.html`, `results.h5`, `summary.json`,
    /// `figures/`).
    Full,
}

impl RecordOutputs {
    /// Parse `summary` or `full`.
    pub fn parse(s: &str) -> Result<RecordOutputs> {
        match s {
            "summary" => Ok(RecordOutputs::Summary),
            "full" => Ok(RecordOutputs::Full),
            _ => Err(Error::param(
                "record-outputs",
                format!("`{s}`; allowed: summary, full"),
            )),
        }
    }
}

/// Record labels for the cohort page: `(record name, label)` pairs as read by
/// [`crate::rhythm::label_score::read_labels`] and the label map as text (`LABEL=class,…`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CohortLabels {
    /// `(record name, label)`, in the label file's order.
    pub labels: Vec<(String, String)>,
    /// The label map, `LABEL=class,…` (parsed by [`LabelMap::parse`]).
    pub map: String,
    /// The label file, never taken for a record of the cohort folder.
    #[serde(skip)]
    pub source: Option<PathBuf>,
}

impl CohortLabels {
    /// Read a label file; [`CohortLabels::check`] (part of [`CohortOptions::check`]) says
    /// whether every label is in the map (errors name the record and the label).
    pub fn read(path: &Path, map: &str) -> Result<CohortLabels> {
        let labels = crate::rhythm::label_score::read_labels(path)?;
        Ok(CohortLabels {
            labels,
            map: map.to_string(),
            source: Some(path.to_path_buf()),
        })
    }

    /// Check the map and that every label is in it.
    pub fn check(&self) -> Result<()> {
        let m = LabelMap::parse(&self.map)?;
        for (name, label) in &self.labels {
            if m.class_of(label).is_none() {
                return Err(Error::param(
                    "labels",
                    format!(
                        "record `{name}`: label `{label}` is not in the label map ({})",
                        m.describe()
                    ),
                ));
            }
        }
        Ok(())
    }
}

impl Default for CohortOptions {
    fn default() -> Self {
        CohortOptions {
            params: AnalyzeParams::default(),
            jobs: 1,
            shard: None,
            fs_hz: None,
            report: ReportOptions::default(),
            shared: SharedParams::default(),
            outputs: RecordOutputs::Summary,
            full_for: Vec::new(),
            support: Support::default(),
            labels: None,
            features: None,
        }
    }
}

impl CohortOptions {
    /// Validate every option before work starts.
    pub fn check(&self) -> Result<()> {
        crate::params::Check::validate(&self.params)?;
        if !(1..=1024).contains(&self.jobs) {
            return Err(Error::param(
                "jobs",
                format!("{} threads; allowed 1 to 1024", self.jobs),
            ));
        }
        if let Some(f) = self.fs_hz {
            if !(f.is_finite() && f > 0.0) {
                return Err(Error::param(
                    "fs",
                    format!("{f} Hz; must be a finite rate above 0 Hz"),
                ));
            }
        }
        if self.outputs == RecordOutputs::Full && !self.full_for.is_empty() {
            return Err(Error::param(
                "full-for",
                "names records for full outputs, but every record already writes full outputs (record-outputs full); give one or the other",
            ));
        }
        self.report.check()?;
        self.support.check()?;
        if let Some(l) = &self.labels {
            l.check()?;
        }
        if let Some((t, _)) = &self.features {
            if !t.has_record {
                return Err(Error::input(
                    &t.path,
                    "header",
                    "no `record` column; a cohort's feature table names each row's record (the recording's file stem)",
                ));
            }
        }
        self.shared.check()
    }

    /// True when record `name` writes full outputs.
    pub fn is_full(&self, name: &str) -> bool {
        self.outputs == RecordOutputs::Full || self.full_for.iter().any(|n| n == name)
    }
}

/// The checked blocks of checked cohort options, for the stages.
impl Checked<CohortOptions> {
    /// `params`, checked.
    pub fn params(&self) -> Checked<AnalyzeParams> {
        Checked::part_of_checked(self.params.clone())
    }
    /// `report`, checked.
    pub fn report(&self) -> Checked<ReportOptions> {
        Checked::part_of_checked(self.report.clone())
    }
    /// `shared`, checked.
    pub fn shared(&self) -> Checked<SharedParams> {
        Checked::part_of_checked(self.shared.clone())
    }
    /// `labels`, checked.
    pub fn labels(&self) -> Option<Checked<CohortLabels>> {
        self.labels.clone().map(Checked::part_of_checked)
    }
}

/// What [`run`] did.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RunSummary {
    /// Records of the whole cohort.
    pub total: usize,
    /// Records of this run's shard (all when not sharded).
    pub selected: usize,
    /// Records analysed in this run.
    pub analysed: usize,
    /// Records skipped because their outputs were complete.
    pub skipped: usize,
    /// Records that failed (they have an error row).
    pub failed: usize,
    /// The merge, when this run merged (not sharded).
    pub merged: Option<MergeSummary>,
}

/// What [`merge`] wrote.
#[derive(Debug, Clone, PartialEq)]
pub struct MergeSummary {
    /// The table rows, in plan order.
    pub rows: Vec<Row>,
    /// The shared embedding, when one could be fitted.
    pub shared: Option<SharedEmbeddingSummary>,
    /// Why parts could not be made (shown on the cohort page).
    pub notes: Vec<String>,
    /// The verdicts scored against the labels, when labels were given.
    pub labels: Option<LabelScore>,
}

/// The plan file: the whole sorted record list and the merge settings, written by every run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Plan {
    /// Format tag.
    pub format: String,
    /// Every record of the cohort, sorted.
    pub records: Vec<RecordSpec>,
    /// Shared embedding settings (checked when the plan is read).
    pub shared: Checked<SharedParams>,
    /// Folder the input paths are relative to, stripped from error messages in the table.
    pub base: PathBuf,
    /// Record labels and their map, when given (checked when the plan is read).
    #[serde(default)]
    pub labels: Option<Checked<CohortLabels>>,
}

/// Value of [`Plan::format`].
pub const PLAN_FORMAT: &str = "beatfold-cohort-plan-1";

/// The per-record manifest that makes a record skippable.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Manifest {
    /// SHA-256 of the input recording.
    pub input_sha256: String,
    /// SHA-256 of the reference annotation file, when one was given or found.
    pub reference_sha256: Option<String>,
    /// SHA-256 of the analysis settings (parameters, lead, report options, version).
    pub params_sha256: String,
    /// Every output file (relative to the record folder) with its SHA-256.
    pub files: Vec<(String, String)>,
    /// The record's table row (an analysed record has no separate `row.json`).
    pub row: Row,
}

fn sha256_hex(bytes: &[u8]) -> String {
    use sha2::{Digest, Sha256};
    Sha256::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

fn is_record_file(p: &Path) -> bool {
    let name = p
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    if name.starts_with('.') || name.to_ascii_lowercase().ends_with(".annotations.csv") {
        return false;
    }
    let ext = p
        .extension()
        .map(|e| e.to_string_lossy().to_ascii_lowercase())
        .unwrap_or_default();
    RECORD_EXTENSIONS.contains(&ext.as_str())
}

/// Give every spec a unique name (file stem, then `-2`, `-3` …), after sorting by path.
fn name_specs(mut specs: Vec<RecordSpec>) -> Vec<RecordSpec> {
    specs.sort_by(|a, b| a.path.cmp(&b.path));
    let mut used = std::collections::BTreeSet::new();
    for s in &mut specs {
        let stem = match io::file_stem(&s.path) {
            x if x.is_empty() => "record".to_string(),
            x => x.replace(['/', '\\'], "_"),
        };
        let mut name = stem.clone();
        let mut k = 2;
        while used.contains(&name) {
            name = format!("{stem}-{k}");
            k += 1;
        }
        used.insert(name.clone());
        s.name = name;
    }
    specs
}

/// The records of a cohort, sorted by path: every recording in a folder (not recursive), or
/// the rows of a manifest CSV.
///
/// A manifest has the columns `path`, `lead`, `reference`, `group` (only `path` required); a
/// first line starting with `path` names them in any order, otherwise they are taken in that
/// order. Empty fields mean "not given"; lines starting with `#` are skipped; paths are
/// relative to the manifest's folder.
///
/// Errors: an unreadable folder or manifest, a manifest row without a path, no records.
pub fn list_records(input: &Path) -> Result<Vec<RecordSpec>> {
    let specs = if input.is_dir() {
        let rd = std::fs::read_dir(input).map_err(|e| Error::io(input, e))?;
        let mut v = Vec::new();
        for ent in rd {
            let ent = ent.map_err(|e| Error::io(input, e))?;
            let p = ent.path();
            if p.is_file() && is_record_file(&p) {
                v.push(RecordSpec {
                    path: p,
                    name: String::new(),
                    lead: None,
                    reference: None,
                    group: String::new(),
                });
            }
        }
        v
    } else {
        parse_manifest(input)?
    };
    if specs.is_empty() {
        return Err(Error::input(
            input,
            "record list",
            "no recordings found (.csv, .tsv, .edf, .hea, .h5)",
        ));
    }
    Ok(name_specs(specs))
}

fn split_csv_line(line: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut cur = String::new();
    let mut quoted = false;
    let mut chars = line.chars().peekable();
    while let Some(c) = chars.next() {
        match c {
            '"' if quoted && chars.peek() == Some(&'"') => {
                cur.push('"');
                chars.next();
            }
            '"' => quoted = !quoted,
            ',' if !quoted => out.push(std::mem::take(&mut cur)),
            _ => cur.push(c),
        }
    }
    out.push(cur);
    out.into_iter().map(|s| s.trim().to_string()).collect()
}

fn parse_manifest(path: &Path) -> Result<Vec<RecordSpec>> {
    let text = io::read_text(path)?;
    let base = path.parent().unwrap_or(Path::new("")).to_path_buf();
    let mut cols = ["path", "lead", "reference", "group"]
        .map(String::from)
        .to_vec();
    let mut specs = Vec::new();
    let mut first = true;
    for (ln, line) in text.lines().enumerate() {
        let line = line.trim();
        if line.is_empty() || line.starts_with('#') {
            continue;
        }
        let fields = split_csv_line(line);
        if first {
            first = false;
            if fields.first().map(|f| f.to_ascii_lowercase()) == Some("path".into()) {
                cols = fields.iter().map(|f| f.to_ascii_lowercase()).collect();
                for c in &cols {
                    if !["path", "lead", "reference", "group"].contains(&c.as_str()) {
                        return Err(Error::input(
                            path,
                            format!("line {}", ln + 1),
                            format!("unknown column `{c}`; allowed: path, lead, reference, group"),
                        ));
                    }
                }
                continue;
            }
        }
        let get = |k: &str| -> Option<String> {
            cols.iter()
                .position(|c| c == k)
                .and_then(|i| fields.get(i))
                .filter(|s| !s.is_empty())
                .cloned()
        };
        let p = get("path")
            .ok_or_else(|| Error::input(path, format!("line {}", ln + 1), "the row has no path"))?;
        specs.push(RecordSpec {
            path: base.join(p),
            name: String::new(),
            lead: get("lead"),
            reference: get("reference").map(|r| base.join(r)),
            group: get("group").unwrap_or_default(),
        });
    }
    Ok(specs)
}

/// Positions (in `0..n`) of the records of `shard` (all of them for `None`).
pub fn shard_positions(n: usize, shard: Option<Shard>) -> Vec<usize> {
    (0..n)
        .filter(|&i| shard.is_none_or(|s| s.contains(i)))
        .collect()
}

/// The folder of a record's outputs.
pub fn record_dir(out: &Path, name: &str) -> PathBuf {
    out.join(RECORDS_DIR).join(name)
}

/// SHA-256 of everything that decides a record's outputs besides its input files.
fn params_sha256(spec: &RecordSpec, opts: &CohortOptions) -> Result<String> {
    let mut p = opts.params.clone();
    if spec.lead.is_some() {
        p.lead = spec.lead.clone();
    }
    let v = serde_json::json!({
        "version": env!("CARGO_PKG_VERSION"),
        "params": p,
        "fs_hz": opts.fs_hz,
        "report": format!("{:?}", opts.report),
        "full": opts.is_full(&spec.name),
        "support": opts.support,
        "name": spec.name,
        "group": spec.group,
        "features": opts.features.as_ref().map(|(t, mode)| {
            let rows: Vec<_> = crate::features::table::rows_of(t, &spec.name)
                .into_iter()
                .map(|r| format!("{:?} {:?}", t.rows[r].key, t.rows[r].values))
                .collect();
            serde_json::json!({"mode": mode, "columns": t.names, "rows": rows})
        }),
    });
    Ok(sha256_hex(v.to_string().as_bytes()))
}

fn reference_of(spec: &RecordSpec) -> Option<PathBuf> {
    spec.reference.clone().or_else(|| {
        let sib = io::annotations::sibling_path(&spec.path);
        sib.exists().then_some(sib)
    })
}

fn input_hashes(spec: &RecordSpec) -> Result<(String, Option<String>)> {
    let i = io::sha256_file(&spec.path)?;
    let r = match reference_of(spec) {
        Some(p) if p.is_file() => Some(io::sha256_file(&p)?),
        _ => None,
    };
    Ok((i, r))
}

/// True when `dir` holds a manifest matching the given hashes and every listed file still has
/// its recorded SHA-256.
fn is_complete(dir: &Path, input: &(String, Option<String>), params: &str) -> bool {
    let Ok(text) = std::fs::read_to_string(dir.join(MANIFEST_FILE)) else {
        return false;
    };
    let Ok(m) = serde_json::from_str::<Manifest>(&text) else {
        return false;
    };
    if m.input_sha256 != input.0 || m.reference_sha256 != input.1 || m.params_sha256 != params {
        return false;
    }
    m.files.iter().all(|(rel, h)| {
        io::sha256_file(&dir.join(rel))
            .map(|x| &x == h)
            .unwrap_or(false)
    })
}

fn write_json<T: Serialize>(path: &Path, v: &T) -> Result<()> {
    let mut text =
        serde_json::to_string_pretty(v).map_err(|e| Error::output(path, e.to_string()))?;
    text.push('\n');
    io::write_atomic(path, text.as_bytes())
}

/// Strip the cohort's base folder from a message so the table does not depend on where the
/// input lies.
fn relative_message(msg: &str, base: &Path) -> String {
    let b = base.display().to_string();
    if b.is_empty() {
        return msg.to_string();
    }
    msg.replace(&format!("{b}/"), "")
}

enum Outcome {
    Analysed,
    Skipped,
    Failed,
}

/// Analyse one record into its folder; never returns an error for a bad record (an error row
/// is written instead), only when even the error row cannot be written.
fn process(
    spec: &RecordSpec,
    out: &Path,
    base: &Path,
    opts: &Checked<CohortOptions>,
) -> Result<Outcome> {
    let dir = record_dir(out, &spec.name);
    std::fs::create_dir_all(&dir).map_err(|e| Error::io(&dir, e))?;
    let params_hash = params_sha256(spec, opts)?;
    let hashes = input_hashes(spec);
    if let Ok(h) = &hashes {
        if is_complete(&dir, h, &params_hash) {
            return Ok(Outcome::Skipped);
        }
    }
    // A stale manifest must not describe the files about to be replaced, and temporary files
    // left by an interrupted run of this record are of no further use (no other run writes
    // into this record's folder at the same time: shards own disjoint records).
    let _ = std::fs::remove_file(dir.join(MANIFEST_FILE));
    remove_stale_temps(&dir);
    // Outputs of an earlier run with other settings must not outlive them (a record switched
    // from full to summary outputs keeps no report).
    for f in [
        "report.html",
        "results.h5",
        "summary.json",
        compact::COMPACT_FILE,
    ] {
        let _ = std::fs::remove_file(dir.join(f));
    }
    let _ = std::fs::remove_dir_all(dir.join("figures"));
    // A panic inside a stage (a bug, not bad data) must not take the other records down: it
    // becomes this record's error row.
    let result = hashes.and_then(|h| {
        std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
            analyse_one(spec, &dir, opts)
        }))
        .unwrap_or_else(|p| {
            let what = p
                .downcast_ref::<&str>()
                .map(|s| s.to_string())
                .or_else(|| p.downcast_ref::<String>().cloned())
                .unwrap_or_else(|| "no message".to_string());
            Err(Error::Analysis(format!("internal failure (panic: {what})")))
        })
        .map(|row| (h, row))
    });
    match result {
        Ok((h, row)) => {
            let _ = std::fs::remove_file(dir.join(ROW_FILE));
            let mut files = Vec::new();
            let mut rels = list_files(&dir)?;
            rels.sort();
            for rel in rels {
                if rel == MANIFEST_FILE || rel.starts_with("shared_embedding") {
                    continue;
                }
                files.push((rel.clone(), io::sha256_file(&dir.join(&rel))?));
            }
            let m = Manifest {
                input_sha256: h.0,
                reference_sha256: h.1,
                params_sha256: params_hash,
                files,
                row,
            };
            write_json(&dir.join(MANIFEST_FILE), &m)?;
            Ok(Outcome::Analysed)
        }
        Err(e) => {
            for f in [compact::COMPACT_FILE, "shared_embedding.h5"] {
                let _ = std::fs::remove_file(dir.join(f));
            }
            let row = Row::error(
                &spec.name,
                &spec.group,
                &relative_message(&e.to_string(), base),
            );
            write_json(&dir.join(ROW_FILE), &row)?;
            Ok(Outcome::Failed)
        }
    }
}

/// Remove hidden temporary files (`.name.tmp-…`, as `io::temp_sibling` makes them) from `dir`
/// and its `figures/` folder; failures are ignored (they only leave clutter).
fn remove_stale_temps(dir: &Path) {
    for d in [dir.to_path_buf(), dir.join("figures")] {
        let Ok(rd) = std::fs::read_dir(&d) else {
            continue;
        };
        for ent in rd.flatten() {
            let name = ent.file_name().to_string_lossy().into_owned();
            if name.starts_with('.') && name.contains(".tmp-") {
                let _ = std::fs::remove_file(ent.path());
            }
        }
    }
}

/// Files under `dir` (recursively), relative, with `/` separators; temporary names skipped.
fn list_files(dir: &Path) -> Result<Vec<String>> {
    let mut out = Vec::new();
    let mut stack = vec![(dir.to_path_buf(), String::new())];
    while let Some((d, prefix)) = stack.pop() {
        let rd = std::fs::read_dir(&d).map_err(|e| Error::io(&d, e))?;
        for ent in rd {
            let ent = ent.map_err(|e| Error::io(&d, e))?;
            let name = ent.file_name().to_string_lossy().into_owned();
            if name.starts_with('.') {
                continue;
            }
            let rel = format!("{prefix}{name}");
            let p = ent.path();
            if p.is_dir() {
                stack.push((p, format!("{rel}/")));
            } else {
                out.push(rel);
            }
        }
    }
    Ok(out)
}

fn analyse_one(spec: &RecordSpec, dir: &Path, opts: &Checked<CohortOptions>) -> Result<Row> {
    let mut p = opts.params();
    if spec.lead.is_some() {
        p = p.with_lead(spec.lead.clone());
    }
    let loaded = io::read_record(
        &spec.path,
        &ReadOptions {
            fs_hz: opts.fs_hz,
            annotations: spec.reference.clone(),
            dataset: None,
            ..ReadOptions::default()
        },
    )?;
    let info = InputInfo {
        name: spec.path.display().to_string(),
        sha256: Some(io::sha256_file(&spec.path)?),
        warnings: loaded.warnings.clone(),
    };
    let full = opts.is_full(&spec.name);
    if !full {
        // The table shows no dimension below its support: do not compute one.
        p = p.with_dimension_min_points_at_least(opts.support.dimension_points);
    }
    let table = opts.features.as_ref().map(|(t, m)| (t, *m));
    let a = pipeline::analyze_with_table(&loaded.record, &info, &p, table, &mut |_, _| {})?;
    compact::write(&a, &dir.join(compact::COMPACT_FILE))?;
    if full {
        report::write_all(&a, dir, &opts.report())?;
    }
    let mut row = Row::from_analysis(&spec.name, &spec.group, &a, &opts.support);
    row.has_report = full;
    Ok(row)
}

fn common_base(specs: &[RecordSpec]) -> PathBuf {
    let mut parents = specs.iter().filter_map(|s| s.path.parent());
    let Some(first) = parents.next() else {
        return PathBuf::new();
    };
    let mut base = first.to_path_buf();
    for p in parents {
        while !p.starts_with(&base) {
            if !base.pop() {
                return PathBuf::new();
            }
        }
    }
    base
}

/// Analyse a cohort (or one shard of it) into `out`; without a shard, [`merge`] afterwards.
///
/// Errors: bad options, an unreadable record list, an output folder that cannot be written, a
/// thread pool that cannot start. A record that cannot be read or analysed is not an error: it
/// gets an error row.
pub fn run(input: &Path, out: &Path, opts: &Checked<CohortOptions>) -> Result<RunSummary> {
    run_with_progress(input, out, opts, &|_, _| {})
}

/// As [`run`], calling `progress(done, selected)` after each record.
pub fn run_with_progress(
    input: &Path,
    out: &Path,
    opts: &Checked<CohortOptions>,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<RunSummary> {
    let mut specs = list_records(input)?;
    // A label file inside the cohort folder is not a recording.
    if let Some(src) = opts.labels.as_ref().and_then(|l| l.source.as_ref()) {
        let src = src.canonicalize().unwrap_or_else(|_| src.clone());
        specs.retain(|s| s.path.canonicalize().map_or(true, |p| p != src));
    }
    std::fs::create_dir_all(out.join(RECORDS_DIR)).map_err(|e| Error::io(out, e))?;
    let base = if input.is_dir() {
        input.to_path_buf()
    } else {
        common_base(&specs)
    };
    let plan = Plan {
        format: PLAN_FORMAT.to_string(),
        records: specs.clone(),
        shared: opts.shared(),
        base: base.clone(),
        labels: opts.labels(),
    };
    write_json(&out.join(PLAN_FILE), &plan)?;
    let pos = shard_positions(specs.len(), opts.shard);
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(opts.jobs)
        .build()
        .map_err(|e| Error::Analysis(format!("cannot start {} threads: {e}", opts.jobs)))?;
    let done = AtomicUsize::new(0);
    let outcomes: Vec<Result<Outcome>> = pool.install(|| {
        pos.par_iter()
            .with_max_len(1)
            .map(|&i| {
                let r = match specs.get(i) {
                    Some(s) => process(s, out, &base, opts),
                    None => Err(Error::Analysis(format!("record {i} out of range"))),
                };
                progress(done.fetch_add(1, Ordering::Relaxed) + 1, pos.len());
                r
            })
            .collect()
    });
    let mut s = RunSummary {
        total: specs.len(),
        selected: pos.len(),
        ..RunSummary::default()
    };
    for o in outcomes {
        match o? {
            Outcome::Analysed => s.analysed += 1,
            Outcome::Skipped => s.skipped += 1,
            Outcome::Failed => s.failed += 1,
        }
    }
    if opts.shard.is_none() {
        s.merged = Some(pool.install(|| merge(out))?);
    }
    Ok(s)
}

/// Read the plan of a cohort output folder.
pub fn read_plan(out: &Path) -> Result<Plan> {
    let path = out.join(PLAN_FILE);
    let text = io::read_text(&path)?;
    let plan: Plan = serde_json::from_str(&text)
        .map_err(|e| Error::input(&path, format!("line {}", e.line()), e.to_string()))?;
    if plan.format != PLAN_FORMAT {
        return Err(Error::input(
            &path,
            "format",
            format!("`{}`, expected `{PLAN_FORMAT}`", plan.format),
        ));
    }
    Ok(plan)
}

/// Build the cohort table (`cohort.csv`, `cohort.h5`), the cohort page (`cohort.html`) and the
/// shared embedding from the per-record outputs in `out` (of one run or of all shards). A
/// record without a row (its shard has not run) gets an error row saying so.
///
/// Errors: no readable plan in `out`; an output that cannot be written. A shared embedding that
/// cannot be fitted (too few beats) is a note, not an error.
pub fn merge(out: &Path) -> Result<MergeSummary> {
    let plan = read_plan(out)?;
    let mut rows = Vec::with_capacity(plan.records.len());
    for spec in &plan.records {
        let dir = record_dir(out, &spec.name);
        // An analysed record's row is in its manifest; a failed record has only `row.json`.
        let row = match std::fs::read_to_string(dir.join(MANIFEST_FILE)) {
            Ok(t) => serde_json::from_str::<Manifest>(&t)
                .map(|m| m.row)
                .unwrap_or_else(|e| {
                    Row::error(
                        &spec.name,
                        &spec.group,
                        &format!("unreadable manifest.json: {e}"),
                    )
                }),
            Err(_) => match std::fs::read_to_string(dir.join(ROW_FILE)) {
                Ok(t) => serde_json::from_str::<Row>(&t).unwrap_or_else(|e| {
                    Row::error(
                        &spec.name,
                        &spec.group,
                        &format!("unreadable row.json: {e}"),
                    )
                }),
                Err(_) => Row::error(
                    &spec.name,
                    &spec.group,
                    "no outputs: the record's shard has not run",
                ),
            },
        };
        rows.push(row);
    }
    let mut notes = Vec::new();
    let labels = apply_labels(&plan, &mut rows, &mut notes)?;
    let shared = match shared::build(out, &plan, &rows) {
        Ok(s) => Some(s),
        Err(e) => {
            notes.push(format!("shared embedding not made: {e}"));
            None
        }
    };
    if let Some(s) = &shared {
        notes.extend(s.notes.iter().cloned());
    }
    io::write_atomic(&out.join("cohort.csv"), table::table_csv(&rows).as_bytes())?;
    table::write_h5(&rows, &out.join("cohort.h5"))?;
    let page = page::render(
        &rows,
        &page::PageParts {
            shared: shared.as_ref(),
            notes: &notes,
            labels: labels
                .as_ref()
                .map(|(sc, map, unscored)| (sc, map.clone(), *unscored)),
        },
    );
    io::write_atomic(&out.join("cohort.html"), page.as_bytes())?;
    Ok(MergeSummary {
        rows,
        shared,
        notes,
        labels: labels.map(|l| l.0),
    })
}

/// Give every row its label from the plan and score the verdicts of the labelled, analysed
/// records against them: `(score, label map, analysed records not scored)`.
fn apply_labels(
    plan: &Plan,
    rows: &mut [Row],
    notes: &mut Vec<String>,
) -> Result<Option<(LabelScore, String, usize)>> {
    let Some(l) = &plan.labels else {
        return Ok(None);
    };
    let map = LabelMap::parse(&l.map)?;
    let by_name: std::collections::HashMap<&str, &str> = l
        .labels
        .iter()
        .map(|(n, x)| (n.as_str(), x.as_str()))
        .collect();
    let mut pairs = Vec::new();
    let mut unscored = 0;
    let mut found = 0;
    for r in rows.iter_mut() {
        if let Some(label) = by_name.get(r.name.as_str()) {
            r.label = label.to_string();
            found += 1;
        }
        if r.status != Status::Ok {
            continue;
        }
        match (map.class_of(&r.label), VerdictClass::parse(&r.verdict)) {
            (Some(t), Some(v)) => pairs.push((t, v)),
            _ => unscored += 1,
        }
    }
    if found < l.labels.len() {
        notes.push(format!(
            "{} labelled records are not in the cohort",
            l.labels.len() - found
        ));
    }
    Ok(Some((
        LabelScore::from_pairs(&pairs),
        map.describe(),
        unscored,
    )))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shards_partition_every_list() {
        for n in [0usize, 1, 2, 7, 50] {
            for count in 1..=6 {
                let mut seen = vec![0usize; n];
                for index in 0..count {
                    for i in shard_positions(n, Some(Shard { index, count })) {
                        seen[i] += 1;
                    }
                }
                assert!(seen.iter().all(|&k| k == 1), "n {n} count {count}");
            }
        }
    }

    #[test]
    fn shard_parse_checks_range() {
        assert_eq!(Shard::parse("1/3").unwrap(), Shard { index: 1, count: 3 });
        for bad in ["3/3", "x/2", "1", "0/0", "-1/2"] {
            let e = Shard::parse(bad).unwrap_err().to_string();
            assert!(e.contains("shard"), "{bad}: {e}");
        }
    }

    #[test]
    fn manifest_columns_and_unique_names() {
        let dir = tempfile::tempdir().unwrap();
        let m = dir.path().join("list.csv");
        std::fs::write(
            &m,
            "path,group,lead\n# comment\nb/x.csv,ctl,1\na/x.csv,case,\n\"c,d.csv\",,\n",
        )
        .unwrap();
        let s = list_records(&m).unwrap();
        let names: Vec<&str> = s.iter().map(|r| r.name.as_str()).collect();
        assert_eq!(names, ["x", "x-2", "c,d"]);
        assert_eq!(s[0].group, "case");
        assert_eq!(s[0].lead, None);
        assert_eq!(s[1].lead.as_deref(), Some("1"));
        assert_eq!(s[2].path, dir.path().join("c,d.csv"));
        std::fs::write(&m, "path,colour\nx.csv,red\n").unwrap();
        assert!(list_records(&m).unwrap_err().to_string().contains("colour"));
    }
}
