//! Two detectors on one or two leads: which beat list the pipeline uses, and how a second lead
//! helps.
//!
//! In: the raw samples of one or more leads at `fs_hz`, the parameters of both detectors and a
//! [`DetectorChoice`]. Out: [`LeadDetection`] — the primary detector's beats, the other
//! detector's beats and, per window, the beat agreement bSQI of the two (Li, Mark & Clifford
//! 2008) and the lead the beats came from.
//!
//! Primary detector: by default the method of Elgendi, Jonkman & De Boer (2013), which scored
//! higher than our Pan & Tompkins (1985) on the open annotated records of `docs/validation.md`;
//! Pan–Tompkins is then the independent second opinion, and either can be made primary.
//!
//! Several leads, [`FuseMethod::Choose`] (default, "choose per window", our rule): both detectors
//! run on every lead; in each agreement window (default 10 s) the beats are taken from the lead
//! whose two detectors agree best, and a lead other than the preferred one must beat the
//! preferred lead's bSQI by `fuse_margin` (default 0.2) so that a noise-free window never
//! switches. Beats closer than the refractory period across a window edge are merged (the
//! earlier kept).
//!
//! Several leads, [`FuseMethod::Vote`] (vote fusion, see [`VoteParams`]): both detectors run on every lead, and per
//! agreement window (default 10 s) a clean window (the preferred lead's two detectors agree,
//! bSQI ≥ 0.9) keeps the preferred lead's beats; otherwise a lead whose bSQI beats the preferred
//! one's by `fuse_margin` (default 0.2) gives its beats, and failing that a beat needs a majority
//! (3 of 4) of the detector × lead lists; a beat without a majority, or outside clean windows, that splits a normal RR
//! interval into two short ones is dropped. Beats closer than the refractory period are merged
//! (the earlier kept). Then a beat outside clean windows that comes early and does not resemble
//! the recent clean-window beats or a beat shape seen in clean windows (template correlation on
//! every lead, each lead weighted by its detectors' agreement) is dropped, and a long RR interval
//! is searched back for a candidate of at least two lists that does resemble them, the parts of
//! a filled interval again while they are still long.
//!
//! Records sampled at 500 Hz or more are detected after zero-phase decimation to 250–500 Hz
//! (`signal::resample`), and each beat is then placed on the full-rate signal.
//!
//! The detectors and leads run concurrently (rayon); results do not depend on the thread count.

use serde::{Deserialize, Serialize};

use super::{agreement_windows, elgendi, pan_tompkins, DetectParams, ElgendiParams};
use crate::error::{Error, Result};
use crate::params::Checked;
use crate::signal::fill_non_finite;
use crate::signal::resample::{decimate, detection_factor};

/// Which detector's beats the pipeline uses; the other one gives the agreement index.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum DetectorChoice {
    /// Elgendi, Jonkman & De Boer (2013) primary, Pan & Tompkins (1985) second (default).
    #[default]
    Elgendi,
    /// Pan & Tompkins (1985) primary, Elgendi et al. (2013) second.
    PanTompkins,
}

impl DetectorChoice {
    /// Display name of the primary detector.
    pub fn primary_name(self) -> &'static str {
        match self {
            DetectorChoice::Elgendi => "Elgendi et al. (2013)",
            DetectorChoice::PanTompkins => "Pan & Tompkins (1985)",
        }
    }

    /// Display name of the second detector.
    pub fn second_name(self) -> &'static str {
        match self {
            DetectorChoice::Elgendi => "Pan & Tompkins (1985)",
            DetectorChoice::PanTompkins => "Elgendi et al. (2013)",
        }
    }
}

/// How several leads are combined by [`detect_leads`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum FuseMethod {
    /// Per window, the lead whose two detectors agree best (a lead other than the preferred one
    /// must be better by `fuse_margin`). Default: it keeps the most beats on noisy records.
    #[default]
    Choose,
    /// The vote fusion of [`VoteParams`]: fewer false detections in noise, a few more missed
    /// beats (docs/validation-noise.md).
    Vote,
}

/// Parameters of [`detect_leads`].
#[derive(Debug, Clone, PartialEq)]
pub struct FusionParams<'a> {
    /// How several leads are combined.
    pub method: FuseMethod,
    /// Pan & Tompkins parameters.
    pub pan_tompkins: &'a Checked<DetectParams>,
    /// Elgendi parameters.
    pub elgendi: &'a Checked<ElgendiParams>,
    /// Primary detector.
    pub primary: DetectorChoice,
    /// Beat matching window for the agreement, seconds (EC57: 0.150).
    pub match_window_s: f64,
    /// Agreement window length, seconds.
    pub window_s: f64,
    /// bSQI margin by which another lead must beat the preferred one to be used, 0..1.
    pub fuse_margin: f64,
}

/// Beats of one record from one lead or from several leads chosen window by window.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct LeadDetection {
    /// Primary detector's R-peak samples, increasing.
    pub primary: Vec<usize>,
    /// Second detector's R-peak samples, increasing.
    pub second: Vec<usize>,
    /// Per agreement window: (start in seconds, bSQI of the chosen lead, chosen lead index into
    /// the `leads` argument).
    pub windows: Vec<(f64, f64, usize)>,
}

/// Primary and second detector's beats of one lead.
type BeatPair = (Vec<usize>, Vec<usize>);

fn run_both(x: &[f64], fs_hz: f64, p: &FusionParams) -> Result<BeatPair> {
    // Records sampled far above the detectors' design rate are detected after decimation, and
    // the beats are placed back on the full-rate signal.
    let q = detection_factor(fs_hz);
    let (pt, el) = if q > 1 {
        let filled;
        let input: &[f64] = if x.iter().all(|v| v.is_finite()) {
            x
        } else {
            filled = fill_non_finite(x)?;
            &filled
        };
        let low = decimate(input, fs_hz, q)?;
        let rate = fs_hz / q as f64;
        let (pt, el) = rayon::join(
            || pan_tompkins(&low, rate, p.pan_tompkins),
            || elgendi(&low, rate, p.elgendi),
        );
        (
            refine_full_rate(input, &pt?.samples, q, fs_hz),
            refine_full_rate(input, &el?, q, fs_hz),
        )
    } else {
        let (pt, el) = rayon::join(
            || pan_tompkins(x, fs_hz, p.pan_tompkins),
            || elgendi(x, fs_hz, p.elgendi),
        );
        (pt?.samples, el?)
    };
    Ok(match p.primary {
        DetectorChoice::Elgendi => (el, pt),
        DetectorChoice::PanTompkins => (pt, el),
    })
}

/// Place beats found at the decimated rate (sample `k` ↔ full-rate `k·q`) on the full-rate
/// signal: within ±2q samples, the sample farthest from the median of the surrounding ±60 ms
/// (the local baseline, so a polarity-free extreme as in the detectors' own refinement).
fn refine_full_rate(x: &[f64], low: &[usize], q: usize, fs_hz: f64) -> Vec<usize> {
    let wide = ((0.06 * fs_hz) as usize).max(2 * q);
    let mut buf: Vec<f64> = Vec::new();
    let mut out: Vec<usize> = Vec::with_capacity(low.len());
    for &k in low {
        let c = k * q;
        let (wlo, whi) = (c.saturating_sub(wide), (c + wide + 1).min(x.len()));
        let Some(seg) = x.get(wlo..whi) else { continue };
        buf.clear();
        buf.extend_from_slice(seg);
        let med = crate::stats::median_of_finite(&mut buf);
        let (lo, hi) = (c.saturating_sub(2 * q), (c + 2 * q + 1).min(x.len()));
        let best = (lo..hi).max_by(|&a, &b| (x[a] - med).abs().total_cmp(&(x[b] - med).abs()));
        if let Some(r) = best {
            if out.last().is_none_or(|&prev| r > prev) {
                out.push(r);
            }
        }
    }
    out
}

/// Detect beats on `leads` (all the same length, at `fs_hz`). With one lead, both detectors run
/// on it. With several, the first lead is the preferred one and each window's beats come from
/// the best-agreeing lead (see the module notes).
pub fn detect_leads(leads: &[&[f64]], fs_hz: f64, p: &FusionParams) -> Result<LeadDetection> {
    detect_leads_with(leads, fs_hz, p, &Checked::default())
}

/// [`detect_leads`] with the vote fusion's parameters given.
pub fn detect_leads_with(
    leads: &[&[f64]],
    fs_hz: f64,
    p: &FusionParams,
    vote: &Checked<VoteParams>,
) -> Result<LeadDetection> {
    let Some(first) = leads.first() else {
        return Err(Error::Analysis("no lead to detect beats on".into()));
    };
    if !(0.0..=1.0).contains(&p.fuse_margin) {
        return Err(Error::param(
            "fuse_margin",
            format!("{} is outside [0, 1] (a bSQI difference)", p.fuse_margin),
        ));
    }
    let n = first.len();
    if leads.iter().any(|l| l.len() != n) {
        return Err(Error::Analysis(
            "leads of different lengths cannot be combined".into(),
        ));
    }
    let per_lead: Vec<BeatPair> = {
        use rayon::prelude::*;
        leads
            .par_iter()
            .map(|x| run_both(x, fs_hz, p))
            .collect::<Result<_>>()?
    };
    let win: Vec<Vec<(f64, f64)>> = per_lead
        .iter()
        .map(|(a, b)| agreement_windows(a, b, fs_hz, p.match_window_s, p.window_s, n))
        .collect();
    let n_win = win.first().map_or(0, Vec::len);
    let mut windows = Vec::with_capacity(n_win);
    for k in 0..n_win {
        let start = win[0][k].0;
        let mut best = (win[0][k].1, 0usize);
        for (li, w) in win.iter().enumerate().skip(1) {
            let q = w.get(k).map_or(f64::NAN, |x| x.1);
            if q > best.0 + p.fuse_margin && q > 0.0 {
                best = (q, li);
            }
        }
        windows.push((start, best.0, best.1));
    }
    if per_lead.len() == 1 {
        let (primary, second) = per_lead.into_iter().next().unwrap_or_default();
        return Ok(LeadDetection {
            primary,
            second,
            windows,
        });
    }
    if p.method == FuseMethod::Vote {
        return Ok(vote_fusion(leads, &per_lead, &win, fs_hz, p, vote, n));
    }
    let len = ((p.window_s * fs_hz).round() as usize).max(1);
    let refractory = (p.elgendi.refractory_s.max(p.pan_tompkins.refractory_s) * fs_hz) as usize;
    let stitch = |pick: fn(&BeatPair) -> &Vec<usize>| -> Vec<usize> {
        let mut out: Vec<usize> = Vec::new();
        for (k, &(_, _, li)) in windows.iter().enumerate() {
            let src = per_lead.get(li).map(pick);
            let (lo, hi) = (k * len, (k + 1) * len);
            for &s in src.into_iter().flatten() {
                if s < lo || s >= hi {
                    continue;
                }
                if out.last().is_none_or(|&prev| s >= prev + refractory.max(1)) {
                    out.push(s);
                }
            }
        }
        out
    };
    Ok(LeadDetection {
        primary: stitch(|x| &x.0),
        second: stitch(|x| &x.1),
        windows,
    })
}

/// Parameters of the two-lead vote fusion ([`detect_leads`] with several leads).
///
/// Chosen on MIT-BIH records with synthetic electrode-motion-like, recorded muscle and
/// baseline, and beat-like motion noise added (not on the noise stress test records) under the
/// constraint that MIT-BIH pooled Se and +P stay ≥ 99.6 % on the clean records other than 118
/// and 119; see scripts/fusion_dev/README.md and docs/validation-noise.md.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct VoteParams {
    /// A window whose preferred-lead bSQI reaches this is clean: its beats are the preferred
    /// lead's primary beats, untouched. Default 0.9.
    pub clean_bsqi: f64,
    /// Elsewhere (no lead better by `fuse_margin`), a beat is kept when at least this fraction of
    /// the detector × lead beat lists found it within `cluster_s`. Default 0.75 (3 of 4).
    pub min_vote_fraction: f64,
    /// Beats of the lists closer than this to a cluster's first beat vote together, seconds.
    /// Default 0.1.
    pub cluster_s: f64,
    /// RR context: a beat whose two RR intervals are both below this fraction of the local
    /// median RR, while the RR without it stays below `rr_merge_ratio` of the median, is an
    /// artefact between two beats and is dropped, unless it lies in a clean window and has a
    /// majority of the lists. 0 switches the test off. Default 0.8.
    pub rr_short_ratio: f64,
    /// See `rr_short_ratio`. Default 1.3.
    pub rr_merge_ratio: f64,
    /// Morphology check: a beat outside clean windows, one of whose RR intervals is below
    /// `morph_rr_ratio` of the local median RR, is dropped when its similarity to the recent
    /// clean-window beats (the mean over the leads of the best correlation with any of the last
    /// `morph_bank` of them) is below this. 0 switches the check off. Default 0.8.
    pub morph_similarity: f64,
    /// See `morph_similarity`. Default 0.9.
    pub morph_rr_ratio: f64,
    /// Split check in clean windows: a clean-window beat that splits its RR interval into two
    /// parts both below `rr_short_ratio` of the local median, while the interval without it
    /// stays below `rr_merge_ratio` of the median, is dropped when its similarity to the earlier
    /// clean beats is below `morph_similarity` (the RR-context test reaches such beats only
    /// without a majority of the lists; an artefact shaped like a beat on both leads has one).
    /// Default true.
    pub morph_clean_split: bool,
    /// Half-length of the compared beat segment, seconds. Default 0.08.
    pub morph_half_s: f64,
    /// Largest shift tried when comparing a beat with a template, seconds. Default 0.02.
    pub morph_lag_s: f64,
    /// Clean-window beats per lead that serve as templates. Default 16.
    pub morph_bank: usize,
    /// Beat shapes per lead kept from all clean-window beats as further templates (see
    /// `Morphology`); 0 switches them off. Default 0 (see [`VoteParams::dev_best`]).
    pub morph_classes: usize,
    /// Clean-window beats of one shape needed before the shape serves as a template. Default 3.
    pub morph_class_min: usize,
    /// Weight each lead's correlation by the agreement bSQI of its two detectors in the window.
    /// Default true.
    pub morph_quality_weight: bool,
    /// Search-back: in an RR interval longer than this multiple of the local median RR, the
    /// candidate with the highest similarity (at least `searchback_similarity`) among the beats
    /// found by at least `searchback_lists` lists, 0.3 median RR or more from both ends, is
    /// added. 0 switches it off. Default 1.5.
    pub searchback_ratio: f64,
    /// See `searchback_ratio`. Default 2.
    pub searchback_lists: usize,
    /// See `searchback_ratio`. Default 0.8.
    pub searchback_similarity: f64,
    /// After a candidate fills a long RR interval, its two parts are searched again while they
    /// are still longer than `searchback_ratio` times the median, down to this many candidates
    /// per interval (1: one candidate per interval). Default 8.
    pub searchback_depth: usize,
}

impl Default for VoteParams {
    fn default() -> Self {
        VoteParams {
            clean_bsqi: 0.9,
            min_vote_fraction: 0.75,
            cluster_s: 0.1,
            rr_short_ratio: 0.8,
            rr_merge_ratio: 1.3,
            morph_similarity: 0.8,
            morph_rr_ratio: 0.9,
            morph_clean_split: true,
            morph_half_s: 0.08,
            morph_lag_s: 0.02,
            morph_bank: 16,
            morph_classes: 0,
            morph_class_min: 3,
            morph_quality_weight: true,
            searchback_ratio: 1.5,
            searchback_lists: 2,
            searchback_similarity: 0.8,
            searchback_depth: 8,
        }
    }
}

impl VoteParams {
    /// The setting with the fewest false plus missed beats on the first two development noises
    /// of `scripts/fusion_dev/` (`morph3.py`): search-back 4 candidates deep, up to 8 beat
    /// shapes of at least 3 clean beats, leads weighted by their bSQI, no split check in clean
    /// windows. Not the default: on the noise stress test it trades false detections for missed
    /// beats beyond the +P target (docs/validation-noise.md).
    pub fn dev_best() -> Self {
        VoteParams {
            morph_clean_split: false,
            searchback_depth: 4,
            morph_classes: 8,
            morph_class_min: 3,
            morph_quality_weight: true,
            ..VoteParams::default()
        }
    }

    /// Validate the parameters.
    pub fn check(&self) -> Result<()> {
        let unit = |name: &str, v: f64, lo: f64, hi: f64| -> Result<()> {
            if !(v.is_finite() && (lo..=hi).contains(&v)) {
                return Err(Error::param(
                    name,
                    format!("{v} is outside the allowed range [{lo}, {hi}]"),
                ));
            }
            Ok(())
        };
        unit("clean_bsqi", self.clean_bsqi, 0.0, 1.0)?;
        unit("min_vote_fraction", self.min_vote_fraction, 0.0, 1.0)?;
        unit("cluster_s", self.cluster_s, 0.01, 0.5)?;
        unit("rr_short_ratio", self.rr_short_ratio, 0.0, 1.0)?;
        unit("rr_merge_ratio", self.rr_merge_ratio, 1.0, 3.0)?;
        unit("morph_similarity", self.morph_similarity, 0.0, 1.0)?;
        unit("morph_rr_ratio", self.morph_rr_ratio, 0.0, 2.0)?;
        unit("morph_half_s", self.morph_half_s, 0.02, 0.3)?;
        unit("morph_lag_s", self.morph_lag_s, 0.0, 0.1)?;
        unit("morph_bank", self.morph_bank as f64, 1.0, 256.0)?;
        unit("morph_classes", self.morph_classes as f64, 0.0, 64.0)?;
        unit("morph_class_min", self.morph_class_min as f64, 1.0, 64.0)?;
        if self.searchback_ratio != 0.0 {
            unit("searchback_ratio", self.searchback_ratio, 1.0, 5.0)?;
        }
        unit("searchback_lists", self.searchback_lists as f64, 1.0, 64.0)?;
        unit("searchback_depth", self.searchback_depth as f64, 1.0, 64.0)?;
        unit(
            "searchback_similarity",
            self.searchback_similarity,
            0.0,
            1.0,
        )
    }
}

/// Where a window's beats come from in [`vote_fusion`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Source {
    /// The preferred lead's primary detector (a clean window).
    Clean,
    /// Another lead's primary detector, beats confirmed by a second list.
    Lead(usize),
    /// Majority vote of all detector × lead lists.
    Vote,
}

/// Two-lead fusion by window quality and voting (our combination of published parts):
///
/// - the bSQI of Li, Mark & Clifford (2008) between the two detectors of each lead, per window;
/// - a clean window (preferred lead's bSQI ≥ `clean_bsqi`) keeps the preferred lead's beats, so
///   a noise-free record is detected exactly as on one lead;
/// - otherwise, when another lead's bSQI beats the preferred one's by `fuse_margin`, that lead's
///   primary beats confirmed by at least one other list (the per-window lead choice of
///   multi-lead detectors, e.g. Johnson et al. 2015, "Multimodal heart beat detection using
///   signal quality indices");
/// - otherwise a beat needs a majority of the detector × lead lists (lead-wise voting of QRS
///   detectors, in the spirit of the multi-channel fusion of Johnson et al. 2015);
/// - then the RR context of Hamilton & Tompkins (1986), turned around: a beat without a majority
///   of the lists, or outside clean windows, that splits a normal RR interval into two short ones
///   is removed (a ventricular beat of bigeminy, followed by its compensatory pause, is kept);
/// - then the morphology check ([`Morphology`]): outside clean windows, an early beat unlike the
///   recent clean beats and the beat shapes of earlier clean beats is removed (noise artefacts
///   do not resemble a recent beat, while a recurring ectopic beat does once it has appeared in
///   clean windows), each lead's correlation weighted by its window bSQI;
/// - with `morph_clean_split`, a clean-window beat that splits a normal RR interval into two
///   short ones is removed too when it is unlike the earlier clean beats;
/// - then the search-back of Pan & Tompkins (1985) in RR intervals longer than
///   `searchback_ratio` times the local median, among the beats of at least `searchback_lists`
///   lists, taking the one most like the recent clean beats, and again in the two parts of a
///   filled interval while they are still that long.
fn vote_fusion(
    leads: &[&[f64]],
    per_lead: &[BeatPair],
    win: &[Vec<(f64, f64)>],
    fs_hz: f64,
    p: &FusionParams,
    v: &VoteParams,
    n: usize,
) -> LeadDetection {
    let len = ((p.window_s * fs_hz).round() as usize).max(1);
    let n_win = win.first().map_or(0, Vec::len);
    let q = |li: usize, k: usize| win.get(li).and_then(|w| w.get(k)).map_or(f64::NAN, |x| x.1);
    let mut source = Vec::with_capacity(n_win);
    let mut windows = Vec::with_capacity(n_win);
    for (k, &(start, q0)) in win.first().into_iter().flatten().enumerate() {
        if q0 >= v.clean_bsqi {
            source.push(Source::Clean);
            windows.push((start, q0, 0));
            continue;
        }
        let mut best = (q0, 0usize);
        for li in 1..per_lead.len() {
            let ql = q(li, k);
            if ql > best.0 + p.fuse_margin && ql > 0.0 {
                best = (ql, li);
            }
        }
        if best.1 == 0 {
            source.push(Source::Vote);
        } else {
            source.push(Source::Lead(best.1));
        }
        windows.push((start, best.0, best.1));
    }
    let win_of = |s: usize| source.get(s / len).copied().unwrap_or(Source::Clean);

    // Every beat of every list, in time order, clustered: (sample, list index).
    let mut all: Vec<(usize, usize)> = per_lead
        .iter()
        .flat_map(|(a, b)| [a, b])
        .enumerate()
        .flat_map(|(li, l)| l.iter().map(move |&s| (s, li)))
        .collect();
    all.sort_unstable();
    let n_lists = 2 * per_lead.len();
    let need = ((v.min_vote_fraction * n_lists as f64).ceil() as usize).max(1);
    let tol = (v.cluster_s * fs_hz).round() as usize;
    // Output: (sample, protected from the RR-context test: a clean window's beat with a majority).
    let mut primary: Vec<(usize, bool)> = Vec::new();
    // Search-back candidates: (placed sample, lists that found it).
    let mut candidates: Vec<usize> = Vec::new();
    let mut i = 0;
    while i < all.len() {
        let first = all[i].0;
        let mut j = i;
        let mut lists = 0u64;
        while j < all.len() && all[j].0 - first <= tol {
            lists |= 1 << all[j].1.min(63);
            j += 1;
        }
        let cluster = &all[i..j];
        let votes = lists.count_ones() as usize;
        let of_list = |li: usize| cluster.iter().find(|x| x.1 == li).map(|x| x.0);
        // Placed by the first primary detector that found it, else the earliest beat.
        let placed = (0..per_lead.len())
            .find_map(|l| of_list(2 * l))
            .unwrap_or(first);
        if votes >= v.searchback_lists {
            candidates.push(placed);
        }
        let keep = match win_of(first) {
            Source::Clean => of_list(0).map(|s| (s, votes >= need)),
            Source::Lead(l) => of_list(2 * l).filter(|_| votes >= 2).map(|s| (s, false)),
            Source::Vote => (votes >= need).then_some((placed, false)),
        };
        if let Some(b) = keep {
            primary.push(b);
        }
        i = j;
    }
    primary.sort_unstable();
    let refractory = (p.elgendi.refractory_s.max(p.pan_tompkins.refractory_s) * fs_hz) as usize;
    primary.dedup_by(|b, a| b.0 < a.0 + refractory.max(1));
    let primary = rr_context(&primary, v);
    let clean: Vec<usize> = primary
        .iter()
        .copied()
        .filter(|&s| win_of(s) == Source::Clean)
        .collect();
    let morph = Morphology::new(leads, &clean, fs_hz, v, win, len);
    let primary = clean_split_check(&primary, |s| win_of(s) == Source::Clean, &morph, v);
    let primary = morphology_check(&primary, |s| win_of(s) == Source::Clean, &morph, v);
    candidates.sort_unstable();
    let primary = search_back(primary, &candidates, &morph, v);

    // The second detector's beats of the same source, for the agreement index.
    let mut second: Vec<usize> = Vec::new();
    for (k, src) in source.iter().enumerate() {
        let li = match src {
            Source::Lead(l) => *l,
            _ => 0,
        };
        let (lo, hi) = (k * len, ((k + 1) * len).min(n.max(1)));
        for &s in per_lead.get(li).map(|x| &x.1).into_iter().flatten() {
            if s >= lo
                && s < hi
                && second
                    .last()
                    .is_none_or(|&prev| s >= prev + refractory.max(1))
            {
                second.push(s);
            }
        }
    }
    LeadDetection {
        primary,
        second,
        windows,
    }
}

/// Remove the unprotected beats that split a normal RR interval into two short ones
/// (all decisions taken on the input list; the local median is over up to 16 neighbouring RR).
fn rr_context(beats: &[(usize, bool)], v: &VoteParams) -> Vec<usize> {
    let b: Vec<usize> = beats.iter().map(|x| x.0).collect();
    if v.rr_short_ratio <= 0.0 || b.len() < 5 {
        return b;
    }
    let rr: Vec<f64> = b.windows(2).map(|w| (w[1] - w[0]) as f64).collect();
    let mut buf = Vec::with_capacity(16);
    let mut out = Vec::with_capacity(b.len());
    for i in 0..b.len() {
        if i == 0 || i + 1 == b.len() || beats[i].1 {
            out.push(b[i]);
            continue;
        }
        buf.clear();
        buf.extend_from_slice(&rr[i.saturating_sub(8)..(i + 8).min(rr.len())]);
        let med = crate::stats::median_of_finite(&mut buf);
        let (a, c) = ((b[i] - b[i - 1]) as f64, (b[i + 1] - b[i]) as f64);
        let split = a < v.rr_short_ratio * med
            && c < v.rr_short_ratio * med
            && ((b[i + 1] - b[i - 1]) as f64) < v.rr_merge_ratio * med;
        if !split {
            out.push(b[i]);
        }
    }
    out
}

/// Beat shape against recent clean beats: the template matching of QRS detectors with a beat
/// classifier (e.g. Hamilton & Tompkins 1986), here as a bank of the last clean-window beats per
/// lead and the Pearson correlation of linearly detrended segments (common practice).
///
/// The bank also holds, per lead, up to `morph_classes` beat shapes seen in clean windows (a
/// clean beat unlike every stored shape, correlation below [`CLASS_SAME`], starts a shape; it
/// becomes a template once `morph_class_min` clean beats have had it), so that a recurring ectopic
/// beat is recognised after a run of normal beats (template beat classes; common practice, and
/// so are the thresholds). With `morph_quality_weight`, each lead's correlation is
/// weighted by the agreement bSQI of its two detectors in the window (Li, Mark & Clifford 2008),
/// so the cleaner lead counts more.
struct Morphology<'a> {
    leads: &'a [&'a [f64]],
    half: usize,
    lag: usize,
    bank: usize,
    /// Clean-window beats, increasing.
    clean: &'a [usize],
    /// Per lead, the normalised segment of each clean-window beat (None near the edges).
    segs: Vec<Vec<Option<Vec<f64>>>>,
    /// Per lead, the beat shapes: (template, number of clean beats before which it is usable).
    classes: Vec<Vec<(Vec<f64>, usize)>>,
    /// Per lead, the agreement bSQI of each window (empty: leads weighted equally).
    quality: &'a [Vec<(f64, f64)>],
    /// Agreement window length, samples.
    window: usize,
}

/// A clean beat whose correlation with a stored beat shape reaches this has that shape.
const CLASS_SAME: f64 = 0.9;

/// Per lead, the beat shapes of the clean beats in time order (see [`Morphology`]).
fn beat_classes(segs: &[Option<Vec<f64>>], max: usize, need: usize) -> Vec<(Vec<f64>, usize)> {
    // (template, count, usable from)
    let mut cls: Vec<(Vec<f64>, usize, usize)> = Vec::new();
    if max == 0 {
        return Vec::new();
    }
    for (k, s) in segs.iter().enumerate() {
        let Some(s) = s else { continue };
        let mut best: Option<(f64, usize)> = None;
        for (ci, c) in cls.iter().enumerate() {
            let r: f64 = c.0.iter().zip(s).map(|(a, b)| a * b).sum();
            if best.is_none_or(|(br, _)| r > br) {
                best = Some((r, ci));
            }
        }
        match best {
            Some((r, ci)) if r >= CLASS_SAME => {
                let c = &mut cls[ci];
                c.1 += 1;
                if c.1 == need {
                    c.2 = k + 1;
                }
            }
            _ if cls.len() < max => {
                let from = if need <= 1 { k + 1 } else { usize::MAX };
                cls.push((s.clone(), 1, from));
            }
            _ => {}
        }
    }
    cls.into_iter().map(|(t, _, from)| (t, from)).collect()
}

impl<'a> Morphology<'a> {
    fn new(
        leads: &'a [&'a [f64]],
        clean: &'a [usize],
        fs_hz: f64,
        v: &VoteParams,
        quality: &'a [Vec<(f64, f64)>],
        window: usize,
    ) -> Self {
        let half = ((v.morph_half_s * fs_hz) as usize).max(2);
        let lag = (v.morph_lag_s * fs_hz) as usize;
        let segs: Vec<Vec<Option<Vec<f64>>>> = leads
            .iter()
            .map(|x| clean.iter().map(|&p| segment(x, p, half, 0)).collect())
            .collect();
        let classes = segs
            .iter()
            .map(|s| beat_classes(s, v.morph_classes, v.morph_class_min))
            .collect();
        Morphology {
            leads,
            half,
            lag,
            bank: v.morph_bank.max(1),
            clean,
            segs,
            classes,
            quality: if v.morph_quality_weight { quality } else { &[] },
            window: window.max(1),
        }
    }

    /// Mean over the leads (weighted by their window bSQI, floored at 0.05, when asked) of the
    /// best correlation (over shifts up to `lag`) of the segment at `p` with the last `bank`
    /// clean-window beats before `p` and the beat shapes known by then; a lead without
    /// templates counts 1.
    fn similarity(&self, p: usize) -> f64 {
        let k = self.clean.partition_point(|&c| c < p);
        let (mut total, mut weights) = (0.0, 0.0);
        for (li, (x, segs)) in self.leads.iter().zip(&self.segs).enumerate() {
            let w = match self.quality.get(li) {
                Some(q) if !q.is_empty() => {
                    let i = (p / self.window).min(q.len() - 1);
                    q[i].1.max(0.05)
                }
                _ => 1.0,
            };
            weights += w;
            let classes = self.classes.get(li).into_iter().flatten();
            let bank: Vec<&Vec<f64>> = segs[k.saturating_sub(self.bank)..k]
                .iter()
                .flatten()
                .chain(classes.filter(|c| c.1 <= k).map(|c| &c.0))
                .collect();
            if bank.is_empty() {
                total += w;
                continue;
            }
            let mut best = -1.0f64;
            for lag in -(self.lag as isize)..=(self.lag as isize) {
                let Some(s) = segment(x, p, self.half, lag) else {
                    continue;
                };
                for t in &bank {
                    let r: f64 = t.iter().zip(&s).map(|(a, b)| a * b).sum();
                    best = best.max(r);
                }
            }
            total += w * best;
        }
        if weights > 0.0 {
            total / weights
        } else {
            1.0
        }
    }
}

/// Samples `p - half + lag ..= p + half + lag` with the least-squares line removed, scaled to
/// unit norm; None outside the record, with a non-finite sample, or when flat.
fn segment(x: &[f64], p: usize, half: usize, lag: isize) -> Option<Vec<f64>> {
    let lo = (p as isize) - (half as isize) + lag;
    let hi = (p as isize) + (half as isize) + lag + 1;
    if lo < 0 || hi as usize > x.len() {
        return None;
    }
    let s = &x[lo as usize..hi as usize];
    if s.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let n = s.len() as f64;
    let tm = (n - 1.0) / 2.0;
    let ym = s.iter().sum::<f64>() / n;
    let (mut sty, mut stt) = (0.0, 0.0);
    for (i, &y) in s.iter().enumerate() {
        let t = i as f64 - tm;
        sty += t * (y - ym);
        stt += t * t;
    }
    let slope = if stt > 0.0 { sty / stt } else { 0.0 };
    let mut out: Vec<f64> = s
        .iter()
        .enumerate()
        .map(|(i, &y)| y - ym - slope * (i as f64 - tm))
        .collect();
    let norm = out.iter().map(|v| v * v).sum::<f64>().sqrt();
    if !(norm > 1e-12 * (1.0 + ym.abs())) {
        return None;
    }
    out.iter_mut().for_each(|v| *v /= norm);
    Some(out)
}

/// Median of the RR intervals `rr[i-8 .. i+8]` (clamped), the local base cycle.
fn local_median(rr: &[f64], i: usize, buf: &mut Vec<f64>) -> f64 {
    buf.clear();
    buf.extend_from_slice(&rr[i.saturating_sub(8)..(i + 8).min(rr.len())]);
    crate::stats::median_of_finite(buf)
}

/// The split check in clean windows (`morph_clean_split`): drop the clean-window beats that
/// split a normal RR interval into two short ones (the RR-context test of Hamilton & Tompkins
/// 1986, turned around, as in [`rr_context`]) and do not resemble the earlier clean beats (all
/// decisions on the input list).
fn clean_split_check(
    b: &[usize],
    is_clean: impl Fn(usize) -> bool,
    m: &Morphology,
    v: &VoteParams,
) -> Vec<usize> {
    if !v.morph_clean_split || v.morph_similarity <= 0.0 || v.rr_short_ratio <= 0.0 || b.len() < 5 {
        return b.to_vec();
    }
    let rr: Vec<f64> = b.windows(2).map(|w| (w[1] - w[0]) as f64).collect();
    let mut buf = Vec::with_capacity(16);
    let mut out = Vec::with_capacity(b.len());
    for (i, &p) in b.iter().enumerate() {
        if i == 0 || i + 1 == b.len() || !is_clean(p) {
            out.push(p);
            continue;
        }
        let med = local_median(&rr, i, &mut buf);
        let split = rr[i - 1] < v.rr_short_ratio * med
            && rr[i] < v.rr_short_ratio * med
            && rr[i - 1] + rr[i] < v.rr_merge_ratio * med;
        if !(split && m.similarity(p) < v.morph_similarity) {
            out.push(p);
        }
    }
    out
}

/// Drop the beats outside clean windows that come early (an RR interval below `morph_rr_ratio`
/// of the local median) and do not resemble the recent clean beats (all decisions on the input
/// list).
fn morphology_check(
    b: &[usize],
    is_clean: impl Fn(usize) -> bool,
    m: &Morphology,
    v: &VoteParams,
) -> Vec<usize> {
    if v.morph_similarity <= 0.0 || b.len() < 5 {
        return b.to_vec();
    }
    let rr: Vec<f64> = b.windows(2).map(|w| (w[1] - w[0]) as f64).collect();
    let mut buf = Vec::with_capacity(16);
    let mut out = Vec::with_capacity(b.len());
    for (i, &p) in b.iter().enumerate() {
        if i == 0 || i + 1 == b.len() || is_clean(p) {
            out.push(p);
            continue;
        }
        let med = local_median(&rr, i, &mut buf);
        let early = rr[i - 1].min(rr[i]) < v.morph_rr_ratio * med;
        if !(early && m.similarity(p) < v.morph_similarity) {
            out.push(p);
        }
    }
    out
}

/// Search-back for missed beats in long RR intervals (after Pan & Tompkins 1985), the candidate
/// chosen by its resemblance to the recent clean beats. A filled interval's two parts are
/// searched again while they are still long, up to `searchback_depth` candidates deep, so that
/// a run of several missed beats is filled beat by beat.
fn search_back(b: Vec<usize>, candidates: &[usize], m: &Morphology, v: &VoteParams) -> Vec<usize> {
    if v.searchback_ratio <= 0.0 || b.len() < 5 {
        return b;
    }
    let rr: Vec<f64> = b.windows(2).map(|w| (w[1] - w[0]) as f64).collect();
    let mut buf = Vec::with_capacity(16);
    let mut add = Vec::new();
    for i in 0..rr.len() {
        let med = local_median(&rr, i, &mut buf);
        fill_gap(b[i], b[i + 1], med, 0, candidates, m, v, &mut add);
    }
    let mut out = b;
    out.extend(add);
    out.sort_unstable();
    out
}

/// One search-back step between the beats `a` and `z` (local median RR `med`, samples): the
/// best candidate, then the two parts on either side of it.
#[allow(clippy::too_many_arguments)]
fn fill_gap(
    a: usize,
    z: usize,
    med: f64,
    depth: usize,
    candidates: &[usize],
    m: &Morphology,
    v: &VoteParams,
    add: &mut Vec<usize>,
) {
    if depth >= v.searchback_depth || ((z - a) as f64) <= v.searchback_ratio * med {
        return;
    }
    let (lo, hi) = (a as f64 + 0.3 * med, z as f64 - 0.3 * med);
    let from = candidates.partition_point(|&c| (c as f64) <= lo);
    let mut best: Option<(f64, usize)> = None;
    for &c in candidates[from..].iter().take_while(|&&c| (c as f64) < hi) {
        let s = m.similarity(c);
        if s >= v.searchback_similarity && best.is_none_or(|(bs, _)| s > bs) {
            best = Some((s, c));
        }
    }
    if let Some((_, c)) = best {
        add.push(c);
        fill_gap(a, c, med, depth + 1, candidates, m, v, add);
        fill_gap(c, z, med, depth + 1, candidates, m, v, add);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::beats::testsig::synth;

    fn params<'a>(
        pt: &'a Checked<DetectParams>,
        el: &'a Checked<ElgendiParams>,
    ) -> FusionParams<'a> {
        FusionParams {
            method: FuseMethod::Choose,
            pan_tompkins: pt,
            elgendi: el,
            primary: DetectorChoice::Elgendi,
            match_window_s: 0.15,
            window_s: 10.0,
            fuse_margin: 0.2,
        }
    }

    #[test]
    fn a_noisy_second_half_is_taken_from_the_clean_lead() {
        let fs = 250.0;
        let (clean, truth) = synth(72.0, 90, fs, 0.02, 5);
        // Lead 0: the same beats, but its second half is drowned in white noise (seeded) that
        // the two detectors trip over in different ways.
        use rand::SeedableRng;
        use rand_distr::{Distribution, Normal};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(9);
        let normal = Normal::new(0.0, 0.6).unwrap();
        let mut noisy = clean.clone();
        // From 40 s on, a whole number of 10 s agreement windows.
        let half = (40.0 * fs) as usize;
        for v in noisy.iter_mut().skip(half) {
            *v += normal.sample(&mut rng);
        }
        let (pt, el) = (Checked::default(), Checked::default());
        let p = params(&pt, &el);
        let single = detect_leads(&[&noisy], fs, &p).unwrap();
        let fused = detect_leads(&[&noisy, &clean], fs, &p).unwrap();
        let s1 = crate::beats::score(&truth, &single.primary, fs, 0.15);
        let s2 = crate::beats::score(&truth, &fused.primary, fs, 0.15);
        // The fused list is at least as good, and perfect on this construction (EC57 window).
        assert!(s1.fp + s1.fn_ > 0, "the noise must hurt the single lead");
        assert_eq!((s2.fp, s2.fn_), (0, 0), "fused {s2:?}");
        // Windows of the noisy part chose lead 1; the clean first 40 s stayed on lead 0.
        assert_eq!(fused.windows.first().map(|w| w.2), Some(0));
        assert_eq!(fused.windows.last().map(|w| w.2), Some(1));
        let lead_of: Vec<usize> = fused.windows.iter().map(|w| w.2).collect();
        assert_eq!(&lead_of[..4], &[0, 0, 0, 0]);
    }

    #[test]
    fn high_rate_records_are_detected_after_decimation_at_full_precision() {
        // The same pulse train at 1000 Hz (decimated by 4 for detection) and at 250 Hz (native):
        // every beat found at both rates, and the 1000 Hz beats are placed at least as close to
        // the true R peaks (in seconds) as the native 250 Hz ones, give or take one 250 Hz sample.
        let (pt, el) = (Checked::default(), Checked::default());
        let p = params(&pt, &el);
        let worst_s = |fs: f64| {
            let (x, truth) = synth(75.0, 80, fs, 0.0, 12);
            let d = detect_leads(&[&x], fs, &p).unwrap();
            let s = crate::beats::score(&truth, &d.primary, fs, 0.15);
            assert_eq!((s.fp, s.fn_), (0, 0), "{fs} Hz: {s:?}");
            truth
                .iter()
                .filter_map(|&t| d.primary.iter().map(|&b| b.abs_diff(t)).min())
                .max()
                .unwrap() as f64
                / fs
        };
        let (hi, lo) = (worst_s(1000.0), worst_s(250.0));
        assert!(
            hi <= lo + 0.004,
            "worst offset {hi} s at 1000 Hz, {lo} s at 250 Hz"
        );
    }

    #[test]
    fn rr_context_drops_a_split_beat_and_keeps_bigeminy() {
        let v = VoteParams::default();
        // Regular 1 s rhythm at 250 Hz with one extra beat half-way: dropped (both RR 0.5 of the
        // median, the RR without it equal to the median).
        let mut b: Vec<(usize, bool)> = (0..20).map(|k| (k * 250, false)).collect();
        b.insert(11, (10 * 250 + 125, false));
        let out = rr_context(&b, &v);
        assert_eq!(out.len(), 20);
        assert!(!out.contains(&(10 * 250 + 125)));
        // The same beat protected (clean window with a majority of the lists): kept.
        b[11].1 = true;
        assert_eq!(rr_context(&b, &v).len(), 21);
        // Ventricular bigeminy: coupling 0.6 s, pause 1.4 s; every beat kept (the RR without a
        // V beat is twice the median, not a normal interval).
        let mut t = 0;
        let big: Vec<(usize, bool)> = (0..30)
            .map(|k| {
                let s = t;
                t += if k % 2 == 0 { 150 } else { 350 };
                (s, false)
            })
            .collect();
        assert_eq!(rr_context(&big, &v).len(), 30);
        // Switched off: nothing dropped.
        let off = VoteParams {
            rr_short_ratio: 0.0,
            ..VoteParams::default()
        };
        b[11].1 = false;
        assert_eq!(rr_context(&b, &off).len(), 21);
        assert!(VoteParams {
            clean_bsqi: 1.5,
            ..VoteParams::default()
        }
        .check()
        .is_err());
    }

    #[test]
    fn a_voted_window_drops_artefacts_seen_on_one_lead_only() {
        // Two leads with the same beats; each lead gets QRS-like biphasic artefacts (seeded) in
        // different places, strong enough that both detectors of that lead take some of them.
        // Fused, an artefact has at most two of the four lists, so it is voted out (a synthetic
        // check of the voting rule; common practice).
        use rand::{Rng, SeedableRng};
        let fs = 250.0;
        let (clean, truth) = synth(70.0, 120, fs, 0.02, 3);
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(21);
        let mut leads = [clean.clone(), clean.clone()];
        for (li, lead) in leads.iter_mut().enumerate() {
            for _ in 0..40 {
                let at = rng.gen_range(500..clean.len() - 500);
                let sigma = rng.gen_range(0.012..0.03) * fs;
                let amp = if li == 0 { 1.2 } else { -1.2 } * rng.gen_range(0.6..1.4);
                for (k, y) in lead.iter_mut().enumerate().take(at + 40).skip(at - 40) {
                    let u = (k as f64 - at as f64) / sigma;
                    *y += amp * -u * (-0.5 * u * u).exp();
                }
            }
        }
        let (pt, el) = (Checked::default(), Checked::default());
        let p = FusionParams {
            method: FuseMethod::Vote,
            ..params(&pt, &el)
        };
        let single = detect_leads(&[&leads[0]], fs, &p).unwrap();
        let fused = detect_leads(&[&leads[0], &leads[1]], fs, &p).unwrap();
        let s1 = crate::beats::score(&truth, &single.primary, fs, 0.15);
        let s2 = crate::beats::score(&truth, &fused.primary, fs, 0.15);
        assert!(s1.fp >= 15, "the artefacts must hurt one lead: {s1:?}");
        // At most a third of lead 0's false detections, and no more missed beats.
        assert!(s2.fp * 3 <= s1.fp, "fused {s2:?} vs lead 0 {s1:?}");
        assert!(s2.fn_ <= s1.fn_, "fused {s2:?} vs lead 0 {s1:?}");
    }

    #[test]
    fn morphology_drops_an_unlike_early_beat_and_search_back_restores_a_like_one() {
        // Synthetic check of the two rules (common practice): lead beats from `synth`; an
        // artefact (a slow biphasic wave, 60 ms sigma) half-way between two beats on both leads.
        let fs = 250.0;
        let (clean, truth) = synth(70.0, 60, fs, 0.01, 4);
        let mut x = clean.clone();
        let at = (truth[30] + truth[31]) / 2;
        for (k, y) in x.iter_mut().enumerate().take(at + 60).skip(at - 60) {
            let u = (k as f64 - at as f64) / (0.06 * fs);
            *y += 1.5 * -u * (-0.5 * u * u).exp();
        }
        let leads: [&[f64]; 2] = [&x, &x];
        let v = VoteParams::default();
        let m = Morphology::new(&leads, &truth, fs, &v, &[], 2500);
        assert!(
            m.similarity(truth[40]) > 0.95,
            "{}",
            m.similarity(truth[40])
        );
        assert!(
            m.similarity(at) < v.morph_similarity,
            "{}",
            m.similarity(at)
        );
        let mut b = truth.clone();
        b.insert(31, at);
        // Nothing clean: the artefact goes, every beat stays.
        assert_eq!(morphology_check(&b, |_| false, &m, &v), truth);
        // In a clean window it is kept; switched off, it is kept.
        assert_eq!(morphology_check(&b, |s| s == at, &m, &v).len(), 61);
        let off = VoteParams {
            morph_similarity: 0.0,
            ..VoteParams::default()
        };
        assert_eq!(morphology_check(&b, |_| false, &m, &off).len(), 61);
        // Search-back: beat 20 missing; the artefact cannot fill a gap, the beat can.
        let mut gap = truth.clone();
        gap.remove(20);
        let cands = vec![truth[20] - 40, truth[20], at];
        let back = search_back(gap.clone(), &cands, &m, &v);
        assert_eq!(back, truth);
        let mut no_beat = truth.clone();
        no_beat.remove(31);
        no_beat.remove(30);
        let back = search_back(no_beat.clone(), &[at], &m, &v);
        assert_eq!(back, no_beat);
        // Three beats missing in a row: the parts of a filled interval are searched again, so
        // all three return; one candidate per interval (depth 1) returns only one.
        let mut run = truth.clone();
        run.drain(40..43);
        let deep = VoteParams {
            searchback_depth: 4,
            ..VoteParams::default()
        };
        let back = search_back(run.clone(), &truth[40..43], &m, &deep);
        assert_eq!(back, truth);
        let one = VoteParams {
            searchback_depth: 1,
            ..VoteParams::default()
        };
        assert_eq!(search_back(run.clone(), &truth[40..43], &m, &one).len(), 58);
    }

    #[test]
    fn a_split_beat_in_a_clean_window_goes_when_unlike_and_stays_when_like() {
        // Synthetic check of the split check in clean windows: beats from `synth` at 70/min; an
        // artefact (slow biphasic wave, 60 ms sigma) half-way between beats 30 and 31, and a
        // QRS of the same shape as the beats (an interpolated beat) half-way between beats 45
        // and 46, both on both leads, both in clean windows.
        use crate::beats::testsig::gauss;
        let fs = 250.0;
        let (clean, truth) = synth(70.0, 60, fs, 0.01, 4);
        let mut x = clean.clone();
        let at = (truth[30] + truth[31]) / 2;
        for (k, y) in x.iter_mut().enumerate().take(at + 60).skip(at - 60) {
            let u = (k as f64 - at as f64) / (0.06 * fs);
            *y += 1.5 * -u * (-0.5 * u * u).exp();
        }
        let like = (truth[45] + truth[46]) / 2;
        for (k, y) in x.iter_mut().enumerate().take(like + 30).skip(like - 30) {
            let t = (k as f64 - like as f64) / fs;
            *y += -0.15 * gauss(t, -0.025, 0.008) + gauss(t, 0.0, 0.010)
                - 0.2 * gauss(t, 0.025, 0.008);
        }
        let leads: [&[f64]; 2] = [&x, &x];
        let on = VoteParams {
            morph_clean_split: true,
            ..VoteParams::default()
        };
        let m = Morphology::new(&leads, &truth, fs, &on, &[], 2500);
        assert!(
            m.similarity(at) < on.morph_similarity,
            "{}",
            m.similarity(at)
        );
        assert!(m.similarity(like) > 0.95, "{}", m.similarity(like));
        let mut b = truth.clone();
        b.insert(46, like);
        b.insert(31, at);
        let out = clean_split_check(&b, |_| true, &m, &on);
        let mut want = truth.clone();
        want.insert(46, like);
        assert_eq!(out, want);
        // Outside clean windows the check does nothing (the morphology check's domain), and
        // switched off it keeps every beat.
        assert_eq!(clean_split_check(&b, |_| false, &m, &on), b);
        let off = VoteParams {
            morph_clean_split: false,
            ..VoteParams::default()
        };
        assert_eq!(clean_split_check(&b, |_| true, &m, &off), b);
        // An early unlike beat followed by a long pause (coupling 0.6, pause 1.4 of the cycle,
        // the RR without it twice the cycle) is not a split: kept.
        let early = truth[19] + (6 * (truth[20] - truth[19])) / 10;
        assert!(m.similarity(early) < on.morph_similarity);
        let mut pvc = truth.clone();
        pvc[20] = early;
        assert_eq!(clean_split_check(&pvc, |_| true, &m, &on), pvc);
    }

    #[test]
    fn a_recurring_ectopic_shape_is_remembered_beyond_the_recent_bank() {
        // Synthetic check (common practice): narrow beats every second at 250 Hz; beats 5 to 7
        // and beat 50 have a wide biphasic shape. At beat 50 the last 16 clean beats are all
        // narrow, so only the stored beat shapes recognise it (beats 5, 6 and 7: three clean
        // beats of the shape, the default `morph_class_min`).
        let fs = 250.0;
        let beats: Vec<usize> = (1..60).map(|k| k * 250).collect();
        let mut x = vec![0.0; 61 * 250];
        for (i, &b) in beats.iter().enumerate() {
            let wide = matches!(i, 5..=7 | 50);
            for (k, y) in x.iter_mut().enumerate().take(b + 60).skip(b - 60) {
                let t = (k as f64 - b as f64) / fs;
                *y += if wide {
                    let u = t / 0.04;
                    -u * (-0.5 * u * u).exp()
                } else {
                    (-0.5 * (t / 0.01).powi(2)).exp()
                };
            }
        }
        let leads: [&[f64]; 2] = [&x, &x];
        let with = VoteParams::dev_best();
        let without = VoteParams::default();
        let sim = |v: &VoteParams| {
            Morphology::new(&leads, &beats, fs, v, &[], 2500).similarity(beats[50])
        };
        assert!(sim(&with) > 0.95, "{}", sim(&with));
        assert!(sim(&without) < with.morph_similarity, "{}", sim(&without));
        // A shape seen twice only is not a template.
        let mut once = beats.clone();
        once.remove(7);
        let m = Morphology::new(&leads, &once, fs, &with, &[], 2500);
        assert!(m.similarity(beats[50]) < with.morph_similarity);
        // Lead weighting: lead 1 buried in seeded white noise, its window bSQI 0 (weight floored at
        // 0.05) against 1 on lead 0: the similarity follows lead 0; unweighted it does not.
        use rand::SeedableRng;
        use rand_distr::{Distribution, Normal};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(3);
        let normal = Normal::new(0.0, 1.0).unwrap();
        let q = vec![vec![(0.0, 1.0); 25], vec![(0.0, 0.0); 25]];
        let noisy: Vec<f64> = x.iter().map(|v| v + normal.sample(&mut rng)).collect();
        let mixed: [&[f64]; 2] = [&x, &noisy];
        let weighted = Morphology::new(&mixed, &beats, fs, &with, &q, 2500).similarity(beats[40]);
        let plain = VoteParams {
            morph_quality_weight: false,
            ..VoteParams::dev_best()
        };
        let equal = Morphology::new(&mixed, &beats, fs, &plain, &q, 2500).similarity(beats[40]);
        assert!(weighted > 0.9 && equal < 0.8, "{weighted} {equal}");
    }

    #[test]
    fn refuses_bad_margin_and_unequal_leads() {
        let (pt, el) = (Checked::default(), Checked::default());
        let mut p = params(&pt, &el);
        let a = vec![0.0; 100];
        let b = vec![0.0; 99];
        assert!(detect_leads(&[&a, &b], 250.0, &p).is_err());
        p.fuse_margin = 1.5;
        assert!(detect_leads(&[&a], 250.0, &p).is_err());
        assert!(detect_leads(&[], 250.0, &params(&pt, &el)).is_err());
    }
}
