//! The two protocols: within-record (each record scored on itself, leave-one-out) and
//! inter-patient (fit on one set of records, score the beats of another).
//!
//! In: [`LabelledBeats`] of the records and checked [`SeparateParams`]. Out: a [`Separation`]:
//! per feature set and space, the nearest-neighbour vote scores ([`super::vote`]).
//!
//! Spaces of a feature set: `features` (the rows as they are), `pca` (scores on the leading
//! principal axes of the fit beats, as many as diffusion components) and `diffusion` (the
//! diffusion map of the fit beats, Coifman & Lafon 2006, with new beats placed by its Nyström
//! extension). Within one record a beat is classified by its k nearest other beats of the same
//! record; across patients, a test beat by its k nearest fit beats (de Chazal, O'Dwyer & Reilly
//! 2004 describe the record split; the classifier here is the neighbour vote, not theirs).

use super::beats::{BeatCounts, LabelledBeats};
use super::classes::BeatClass;
use super::neighbours;
use super::vote::{self, SpaceScore};
use crate::embed::{self, DiffusionParams, Pca};
use crate::error::{Error, Result};
use crate::params::Checked;
use crate::pipeline::{AnalyzeParams, MIN_BEATS_FOR_GEOMETRY};
use crate::points::Points;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use std::time::Instant;

/// A space in which beats are compared.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Space {
    /// The feature rows as they are.
    Features,
    /// Leading principal axes of the fit beats.
    Pca,
    /// Diffusion coordinates of the fit beats.
    Diffusion,
}

impl Space {
    /// Every space, in report order.
    pub const ALL: [Space; 3] = [Space::Diffusion, Space::Pca, Space::Features];

    /// Name used in JSON and on the command line.
    pub fn name(self) -> &'static str {
        match self {
            Space::Features => "features",
            Space::Pca => "pca",
            Space::Diffusion => "diffusion",
        }
    }

    /// Parse `diffusion`, `pca`, `features` or `all` (comma-separated lists allowed).
    pub fn parse_list(s: &str) -> Result<Vec<Space>> {
        let mut out = Vec::new();
        for w in s.split(',').map(str::trim) {
            let add: Vec<Space> = match w {
                "all" => Space::ALL.to_vec(),
                "diffusion" => vec![Space::Diffusion],
                "pca" => vec![Space::Pca],
                "features" => vec![Space::Features],
                _ => {
                    return Err(Error::param(
                        "space",
                        format!("`{w}`; allowed diffusion, pca, features or all"),
                    ))
                }
            };
            for a in add {
                if !out.contains(&a) {
                    out.push(a);
                }
            }
        }
        Ok(out)
    }
}

/// How a feature table combines with the built-in beat windows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum TableMode {
    /// The table's columns alone form the `table` feature set (scored next to `builtin`).
    Replace,
    /// The table's columns are appended to the built-in ones: the `joined` set.
    Join,
}

/// Parameters of the separation bench.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SeparateParams {
    /// Neighbours k of the vote (default 5).
    pub vote_neighbors: usize,
    /// Spaces scored (default all three).
    pub spaces: Vec<Space>,
    /// With a feature table: replace (default) or join the built-in features.
    pub table_mode: TableMode,
    /// Largest number of beats the diffusion map is fitted on (default
    /// [`DEFAULT_FIT_LANDMARKS`]; 0 = every beat). With more fit beats, landmark mode: the map
    /// is fitted on a seeded random subset of this many beats and the others are placed by
    /// Nyström extension, like the test beats.
    pub fit_landmarks: usize,
}

/// Default landmark count of the diffusion fit. Chosen on synthetic data only (20 resting
/// records of 30 min with 10 % ectopic beats, 10 fitted, 21 023 fit beats;
/// `cargo run --release --example validate_separate -- --landmark-study`): the smallest of 1000, 2000, 5000, 10 000 whose Nyström error against a
/// direct fit on 1000 held-out beats ([`crate::embed::landmark_error`]) is under 5 % (0.27,
/// 0.13, 0.047, 0.067); V F1 was 1.000 at every count.
pub const DEFAULT_FIT_LANDMARKS: usize = 5000;

impl Default for SeparateParams {
    fn default() -> Self {
        SeparateParams {
            vote_neighbors: 5,
            spaces: Space::ALL.to_vec(),
            table_mode: TableMode::Replace,
            fit_landmarks: DEFAULT_FIT_LANDMARKS,
        }
    }
}

impl SeparateParams {
    /// Validate: `vote_neighbors` in 1..=100; at least one space; `fit_landmarks` 0 or
    /// 100..=10 000 000.
    pub fn check(&self) -> Result<&Self> {
        if !(1..=100).contains(&self.vote_neighbors) {
            return Err(Error::param(
                "vote_neighbors",
                format!("{}; allowed 1 to 100 neighbours", self.vote_neighbors),
            ));
        }
        if self.spaces.is_empty() {
            return Err(Error::param("spaces", "at least one space is needed"));
        }
        if self.fit_landmarks != 0 && !(100..=10_000_000).contains(&self.fit_landmarks) {
            return Err(Error::param(
                "fit_landmarks",
                format!(
                    "{}; allowed 0 (every beat) or 100 to 10 000 000",
                    self.fit_landmarks
                ),
            ));
        }
        Ok(self)
    }
}

/// Which protocol produced a result.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Protocol {
    /// Every record scored on its own beats (leave-one-out): says little about new patients.
    WithinRecord,
    /// Fit on one record set, scored on another.
    InterPatient,
}

impl Protocol {
    /// Name used in JSON.
    pub fn name(self) -> &'static str {
        match self {
            Protocol::WithinRecord => "within-record",
            Protocol::InterPatient => "inter-patient",
        }
    }
}

/// The test beats of an inter-patient run in the fitted diffusion map (first two coordinates),
/// with the fit beats, for the cohort figure.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MapView {
    /// Fit beats: (ψ1, ψ2) and class.
    pub fit: Vec<(f64, f64, BeatClass)>,
    /// Test beats placed by Nyström extension: (ψ1, ψ2) and class.
    pub test: Vec<(f64, f64, BeatClass)>,
}

/// Result of a separation run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Separation {
    /// The protocol.
    pub protocol: Protocol,
    /// Neighbours of the vote.
    pub vote_neighbors: usize,
    /// Scores keyed `space` (built-in features) or `set-space` (a feature table's set).
    pub spaces: Vec<(String, SpaceScore)>,
    /// Records fitted on (inter-patient) or scored one by one (within-record).
    pub fit_records: Vec<String>,
    /// Records scored (inter-patient; empty within-record).
    pub test_records: Vec<String>,
    /// What could not be scored, and why.
    pub notes: Vec<String>,
    /// The fitted map with the test beats (inter-patient, built-in features, diffusion).
    pub map: Option<MapView>,
    /// What happened to the beats of every record read (fit records first).
    pub records: Vec<(String, BeatCounts)>,
    /// Wall time of each phase in seconds (`set-space fit`, `… place`, `… vote`), for speed
    /// reports only: never part of the JSON, page or files, which must not change between runs.
    #[serde(skip)]
    pub timings: Vec<(String, f64)>,
}

/// A feature set's fit and query matrices.
struct SetData {
    key_prefix: &'static str,
    fit: Points,
    test: Option<Points>,
}

fn concat(parts: &[&Points]) -> Result<Points> {
    let dim = parts.first().map_or(0, |p| p.dim);
    if parts.iter().any(|p| p.dim != dim) {
        return Err(Error::Analysis(
            "feature rows of different lengths across records".into(),
        ));
    }
    let n = parts.iter().map(|p| p.n).sum();
    let data = parts.iter().flat_map(|p| p.data.iter().copied()).collect();
    Points::new(n, dim, data)
}

use crate::features::table::{column_stats, hstack, join_scale, standardise};

/// The feature sets of a run. Built-in features are used as they are (their columns share the
/// signal's unit by construction). Table columns are z-scored with the fit beats' mean and SD
/// (common practice for distance-based methods on columns of different units); when joined,
/// they are further scaled so that the table block's total variance on the fit beats equals the
/// built-in block's, so neither block outweighs the other by its units alone.
fn feature_sets(
    fit: &[&LabelledBeats],
    test: Option<&[&LabelledBeats]>,
    mode: TableMode,
) -> Result<Vec<SetData>> {
    let b_fit = concat(&fit.iter().map(|l| &l.builtin).collect::<Vec<_>>())?;
    let b_test = test
        .map(|t| concat(&t.iter().map(|l| &l.builtin).collect::<Vec<_>>()))
        .transpose()?;
    let has_table = fit.iter().all(|l| l.table.is_some());
    let mut sets = Vec::new();
    if has_table {
        let tables = |ls: &[&LabelledBeats]| -> Result<Points> {
            concat(
                &ls.iter()
                    .filter_map(|l| l.table.as_ref())
                    .collect::<Vec<_>>(),
            )
        };
        let t_fit = tables(fit)?;
        let t_test = test.map(tables).transpose()?;
        let (mean, sd) = column_stats(&t_fit);
        let scale = match mode {
            TableMode::Replace => 1.0,
            TableMode::Join => join_scale(&b_fit, t_fit.dim),
        };
        let z_fit = standardise(&t_fit, &mean, &sd, scale);
        let z_test = t_test.map(|t| standardise(&t, &mean, &sd, scale));
        match mode {
            TableMode::Replace => sets.push(SetData {
                key_prefix: "table-",
                fit: z_fit,
                test: z_test,
            }),
            TableMode::Join => sets.push(SetData {
                key_prefix: "joined-",
                fit: hstack(&b_fit, &z_fit),
                test: match (&b_test, &z_test) {
                    (Some(b), Some(z)) => Some(hstack(b, z)),
                    _ => None,
                },
            }),
        }
    }
    sets.insert(
        0,
        SetData {
            key_prefix: "",
            fit: b_fit,
            test: b_test,
        },
    );
    Ok(sets)
}

/// The diffusion parameters `analyze` would use for `n` beats (the dense kernel for small sets,
/// the kNN graph otherwise, see `AnalyzeParams::dense_kernel_max_beats`), fitted on at most
/// `landmarks` beats (0: no limit).
fn diffusion_params_for(n: usize, p: &AnalyzeParams, landmarks: usize) -> DiffusionParams {
    let mut d = if n <= p.dense_kernel_max_beats && p.diffusion.neighbors > 0 {
        DiffusionParams {
            neighbors: 0,
            max_fit_points: n.clamp(p.diffusion.components + 2, 5000),
            ..p.diffusion.clone()
        }
    } else {
        p.diffusion.clone()
    };
    if landmarks > 0 {
        d.max_fit_points = d
            .max_fit_points
            .min(landmarks.max(p.diffusion.components + 2));
    }
    d
}

/// Fit and query coordinates of one space, with the wall times of the fit and of placing the
/// queries. For the diffusion space the model is fitted on `fit` and `test` is placed by
/// Nyström extension.
fn space_coords(
    space: Space,
    fit: &Points,
    test: Option<&Points>,
    p: &AnalyzeParams,
    landmarks: usize,
) -> Result<(Points, Option<Points>, [f64; 2])> {
    let t0 = Instant::now();
    match space {
        Space::Features => Ok((fit.clone(), test.cloned(), [0.0; 2])),
        Space::Pca => {
            let pca = Pca::fit(fit)?;
            let c = p.diffusion.components.min(fit.dim);
            let f = pca.project(fit, c)?;
            let t_fit = t0.elapsed().as_secs_f64();
            let t = test.map(|t| pca.project(t, c)).transpose()?;
            Ok((f, t, [t_fit, t0.elapsed().as_secs_f64() - t_fit]))
        }
        Space::Diffusion => {
            let dp = diffusion_params_for(fit.n, p, landmarks);
            // A new block (the fit set's size decides kernel and landmarks): checked here.
            let e = embed::diffusion_map(fit, &Checked::new(dp)?)?;
            let c = e.components;
            let f = Points::new(e.n, c, e.coords)?;
            let t_fit = t0.elapsed().as_secs_f64();
            let t = match (test, &e.model) {
                (Some(t), Some(m)) => Some(Points::new(t.n, c, m.extend(t)?)?),
                (Some(_), None) => {
                    return Err(Error::Analysis(
                        "diffusion map returned no model to extend".into(),
                    ))
                }
                _ => None,
            };
            Ok((f, t, [t_fit, t0.elapsed().as_secs_f64() - t_fit]))
        }
    }
}

/// Votes of the query beats (the fit beats themselves, leave-one-out, when `test` is None).
fn space_votes(
    fit: &Points,
    fit_class: &[BeatClass],
    test: Option<&Points>,
    k: usize,
) -> Result<Votes> {
    match test {
        Some(t) => {
            let k = k.min(fit.n);
            let nb = neighbours::nearest(fit, t, k)?;
            Ok(vote::votes(&nb, fit_class, k, false))
        }
        None => {
            let k = k.min(fit.n.saturating_sub(1)).max(1);
            let nb = neighbours::nearest(fit, fit, (k + 1).min(fit.n))?;
            Ok(vote::votes(&nb, fit_class, k, true))
        }
    }
}

/// One vote per beat: the voted class and the share of neighbours in each class.
type Votes = Vec<(BeatClass, [f64; 5])>;

fn counts_of<'a>(r: impl Iterator<Item = &'a LabelledBeats>) -> Vec<(String, BeatCounts)> {
    r.map(|l| (l.record.clone(), l.counts.clone())).collect()
}

fn distinct_classes(c: &[BeatClass]) -> usize {
    let mut seen = [false; 5];
    for x in c {
        seen[x.index()] = true;
    }
    seen.iter().filter(|&&s| s).count()
}

/// Within-record protocol: each record with at least [`MIN_BEATS_FOR_GEOMETRY`] labelled beats
/// is embedded on its own and every beat is voted on by its k nearest other beats of the same
/// record; votes are pooled over records. Such numbers say little about patients never seen.
///
/// Errors: bad parameters; no record with enough beats; a single class over all scored beats.
pub fn within_record(
    records: &[LabelledBeats],
    p: &Checked<AnalyzeParams>,
    sp: &Checked<SeparateParams>,
) -> Result<Separation> {
    let mut notes = Vec::new();
    let scored: Vec<&LabelledBeats> = records
        .iter()
        .filter(|r| {
            let ok = r.class.len() >= MIN_BEATS_FOR_GEOMETRY;
            if !ok {
                notes.push(format!(
                    "record `{}`: {} labelled beats, fewer than {MIN_BEATS_FOR_GEOMETRY}; not scored",
                    r.record,
                    r.class.len()
                ));
            }
            ok
        })
        .collect();
    if scored.is_empty() {
        return Err(Error::Analysis(format!(
            "no record has at least {MIN_BEATS_FOR_GEOMETRY} labelled beats"
        )));
    }
    let truth: Vec<BeatClass> = scored.iter().flat_map(|r| r.class.clone()).collect();
    if distinct_classes(&truth) < 2 {
        return Err(Error::Analysis(format!(
            "all {} labelled beats are of class {}; separation needs at least two classes",
            truth.len(),
            truth.first().map_or("?", |c| c.name())
        )));
    }
    // Per record: the feature sets and, per set and space, the votes.
    let per_record: Vec<Vec<(String, Votes)>> = scored
        .par_iter()
        .map(|r| -> Result<Vec<(String, Votes)>> {
            let mut out = Vec::new();
            for set in feature_sets(&[r], None, sp.table_mode)? {
                for &space in &sp.spaces {
                    let (f, _, _) = space_coords(space, &set.fit, None, p, sp.fit_landmarks)
                        .map_err(|e| Error::Analysis(format!("record `{}`: {e}", r.record)))?;
                    let v = space_votes(&f, &r.class, None, sp.vote_neighbors)?;
                    out.push((format!("{}{}", set.key_prefix, space.name()), v));
                }
            }
            Ok(out)
        })
        .collect::<Result<_>>()?;
    let keys: Vec<String> = per_record[0].iter().map(|(k, _)| k.clone()).collect();
    let spaces = keys
        .iter()
        .enumerate()
        .map(|(i, key)| {
            let votes: Vec<_> = per_record
                .iter()
                .flat_map(|r| r[i].1.iter().copied())
                .collect();
            (key.clone(), vote::score(&truth, &votes))
        })
        .collect();
    Ok(Separation {
        protocol: Protocol::WithinRecord,
        vote_neighbors: sp.vote_neighbors,
        spaces,
        fit_records: scored.iter().map(|r| r.record.clone()).collect(),
        test_records: Vec::new(),
        notes,
        map: None,
        records: counts_of(records.iter()),
        timings: Vec::new(),
    })
}

/// Inter-patient protocol: every space is fitted on the beats of `fit` (PCA axes, diffusion
/// map, table standardisation), the beats of `test` are placed in it (projection, Nyström
/// extension) and voted on by their k nearest fit beats.
///
/// Errors: bad parameters; a record in both sets; empty sets; fewer than two classes among the
/// fit beats; no labelled test beat.
pub fn inter_patient(
    fit: &[LabelledBeats],
    test: &[LabelledBeats],
    p: &Checked<AnalyzeParams>,
    sp: &Checked<SeparateParams>,
) -> Result<Separation> {
    if let Some(r) = fit
        .iter()
        .find(|f| test.iter().any(|t| t.record == f.record))
    {
        return Err(Error::param(
            "test",
            format!(
                "record `{}` is in both the fit and the test set; the sets must not share patients",
                r.record
            ),
        ));
    }
    let fit_class: Vec<BeatClass> = fit.iter().flat_map(|r| r.class.clone()).collect();
    let truth: Vec<BeatClass> = test.iter().flat_map(|r| r.class.clone()).collect();
    if fit_class.len() < p.diffusion.components + 2 {
        return Err(Error::Analysis(format!(
            "the fit records hold {} labelled beats; at least {} are needed",
            fit_class.len(),
            p.diffusion.components + 2
        )));
    }
    if distinct_classes(&fit_class) < 2 {
        return Err(Error::Analysis(format!(
            "all {} labelled fit beats are of class {}; separation needs at least two classes",
            fit_class.len(),
            fit_class.first().map_or("?", |c| c.name())
        )));
    }
    if truth.is_empty() {
        return Err(Error::Analysis(
            "the test records hold no labelled beat".into(),
        ));
    }
    let fr: Vec<&LabelledBeats> = fit.iter().collect();
    let tr: Vec<&LabelledBeats> = test.iter().collect();
    let mut spaces = Vec::new();
    let mut map = None;
    let mut timings = Vec::new();
    for set in feature_sets(&fr, Some(&tr), sp.table_mode)? {
        for &space in &sp.spaces {
            let key = format!("{}{}", set.key_prefix, space.name());
            let (f, t, [t_fit, t_place]) =
                space_coords(space, &set.fit, set.test.as_ref(), p, sp.fit_landmarks)?;
            let t = t.ok_or_else(|| Error::Analysis("no test coordinates".into()))?;
            let t0 = Instant::now();
            let v = space_votes(&f, &fit_class, Some(&t), sp.vote_neighbors)?;
            timings.push((format!("{key} fit"), t_fit));
            timings.push((format!("{key} place"), t_place));
            timings.push((format!("{key} vote"), t0.elapsed().as_secs_f64()));
            if space == Space::Diffusion && set.key_prefix.is_empty() && f.dim >= 2 {
                let xy = |pts: &Points, cls: &[BeatClass]| {
                    pts.rows()
                        .zip(cls)
                        .map(|(r, &c)| (r[0], r[1], c))
                        .collect::<Vec<_>>()
                };
                map = Some(MapView {
                    fit: xy(&f, &fit_class),
                    test: xy(&t, &truth),
                });
            }
            spaces.push((key, vote::score(&truth, &v)));
        }
    }
    Ok(Separation {
        protocol: Protocol::InterPatient,
        vote_neighbors: sp.vote_neighbors,
        spaces,
        fit_records: fit.iter().map(|r| r.record.clone()).collect(),
        test_records: test.iter().map(|r| r.record.clone()).collect(),
        notes: Vec::new(),
        map,
        records: counts_of(fit.iter().chain(test)),
        timings,
    })
}

/// Within-record separation of one analysed record from what `analyze` already computed: its
/// feature rows, their diffusion coordinates and PCA baseline scores (row i ↔ feature row i),
/// the detected beat samples (`beat_index` of the rows refers to them) and the reference beats
/// of `rec`. No space is refitted; space names get the prefix `set` (`table-` or `joined-` when
/// the rows came from a user's feature table). `None` when fewer than [`MIN_BEATS_FOR_GEOMETRY`] rows are labelled or
/// they hold a single class.
pub fn within_analysed(
    rec: &crate::record::Record,
    beat_samples: &[usize],
    window_s: f64,
    features: &crate::features::Features,
    embedding: &crate::embed::Embedding,
    vote_neighbors: usize,
    set: &str,
) -> Result<Option<Separation>> {
    let (record, reference, fs_hz) = (&rec.name, &rec.annotations.beats, rec.fs_hz);
    if reference.is_empty() || features.points.n == 0 {
        return Ok(None);
    }
    let cls = super::classes::classify_detections(reference, beat_samples, fs_hz, window_s);
    let rows: Vec<usize> = (0..features.points.n)
        .filter(|&r| {
            features
                .beat_index
                .get(r)
                .and_then(|&b| cls.class.get(b).copied().flatten())
                .is_some()
        })
        .collect();
    let truth: Vec<BeatClass> = rows
        .iter()
        .filter_map(|&r| cls.class[features.beat_index[r]])
        .collect();
    if truth.len() < MIN_BEATS_FOR_GEOMETRY || distinct_classes(&truth) < 2 {
        return Ok(None);
    }
    let mut spaces = Vec::new();
    let mut add = |name: &str, all: Option<Points>| -> Result<()> {
        if let Some(all) = all {
            let pts = all.select(&rows);
            let v = space_votes(&pts, &truth, None, vote_neighbors)?;
            spaces.push((format!("{set}{name}"), vote::score(&truth, &v)));
        }
        Ok(())
    };
    let e = embedding;
    add(
        "diffusion",
        (e.n == features.points.n && e.components > 0)
            .then(|| Points::new(e.n, e.components, e.coords.clone()))
            .transpose()?,
    )?;
    add(
        "pca",
        (e.n == features.points.n && e.pca_components > 0)
            .then(|| Points::new(e.n, e.pca_components, e.pca_coords.clone()))
            .transpose()?,
    )?;
    add("features", Some(features.points.clone()))?;
    let kept = truth.len();
    Ok(Some(Separation {
        protocol: Protocol::WithinRecord,
        vote_neighbors,
        spaces,
        fit_records: vec![record.clone()],
        test_records: Vec::new(),
        notes: Vec::new(),
        map: None,
        records: vec![(
            record.clone(),
            BeatCounts {
                reference: reference.len(),
                detected: beat_samples.len(),
                kept,
                missed_reference: cls.missed_reference,
                unmatched_detections: cls.unmatched_detections,
                other_codes: cls.other_codes,
                no_window: (0..beat_samples.len())
                    .filter(|&b| cls.class[b].is_some())
                    .count()
                    .saturating_sub(kept),
                ..BeatCounts::default()
            },
        )],
        timings: Vec::new(),
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn landmark_count_is_checked_and_caps_the_diffusion_fit() {
        let ok = |n| {
            SeparateParams {
                fit_landmarks: n,
                ..SeparateParams::default()
            }
            .check()
            .is_ok()
        };
        assert!(ok(0) && ok(100) && ok(DEFAULT_FIT_LANDMARKS));
        assert!(!ok(99) && !ok(10_000_001));
        let e = SeparateParams {
            fit_landmarks: 5,
            ..SeparateParams::default()
        }
        .check()
        .unwrap_err()
        .to_string();
        assert!(e.contains("fit_landmarks"), "{e}");
        let p = AnalyzeParams::default();
        // A large fit set: the sparse kernel on at most the landmark count.
        let d = diffusion_params_for(50_000, &p, 5000);
        assert_eq!(d.max_fit_points, 5000);
        assert_eq!(d.neighbors, p.diffusion.neighbors);
        assert_eq!(
            diffusion_params_for(50_000, &p, 0).max_fit_points,
            p.diffusion.max_fit_points
        );
    }
}
