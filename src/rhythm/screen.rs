//! A windowed irregular-rhythm **research screen** from RR intervals — not a diagnosis, and not
//! an atrial-fibrillation detector.
//!
//! Statistics after Dash, Chon, Lu & Raeder (2009), Ann Biomed Eng 37:1701: in windows of 128
//! beats, the 8 longest and 8 shortest RR intervals are set aside (to blunt isolated ectopic
//! beats), then the normalised RMSSD (RMSSD / mean RR), the Shannon entropy of the RR histogram
//! (16 bins, normalised by ln 16) and the turning-point ratio are computed. A window is irregular
//! when nRMSSD > 0.1 and entropy > 0.7 and TPR lies in 0.54..0.77 (thresholds recalled from the
//! paper, `from memory`; all are parameters). An interval is flagged when the windows covering it
//! vote irregular (see [`ScreenParams::vote_fraction`]), episode edges are refined beat by beat
//! with the local nRMSSD over `edge_beats` intervals on either side of a beat, and runs of irregular beats shorter than
//! `min_episode_s` are dropped.
//!
//! Inside an episode, stretches that are locally regular are cut out
//! ([`ScreenParams::split_regular_s`]): an interval is locally regular when the 16 intervals
//! around it have a coefficient of sample entropy (COSEn, Lake & Moorman 2011, Am J Physiol
//! Heart Circ Physiol 300:H319) at or below −1.4 (`from memory`), after a majority filter over
//! the same 16 intervals. COSEn separates an irregularly irregular rhythm from rhythms whose
//! intervals sit on a few discrete levels (sinus rhythm with dropped beats, bigeminy), which a
//! large nRMSSD alone does not.
//!
//! Atrial veto ([`screen_beats_atrial`]): atrial fibrillation is an irregularly irregular RR
//! *and* no discernible P waves (`common practice`), and some rhythms with P waves (sinus rhythm
//! with frequent atrial premature beats) are as irregular by RR. Given a P-wave presence index
//! per beat ([`super::atrial`], correlation of the pre-QRS segment with the record's own P-wave
//! template, after Babaeizadeh et al. 2009, `from memory`), a run inside an episode where the
//! running median of the index over [`ScreenParams::atrial_beats`] intervals stays at or above
//! [`ScreenParams::atrial_min`] for at least [`ScreenParams::atrial_split_s`] is cut out like a
//! locally regular run. Where the record yields no template the index is NaN and the veto does
//! nothing.

use super::entropy::{shannon_entropy, turning_point_ratio};
use crate::error::{Error, Result};
use crate::params::Checked;
use serde::{Deserialize, Serialize};

/// Parameters of the screen.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct ScreenParams {
    /// Window length in RR intervals (default 128).
    pub window_beats: usize,
    /// Step between windows in RR intervals (default 16).
    pub step_beats: usize,
    /// Number of longest and of shortest intervals set aside per window (default 8).
    pub trim: usize,
    /// nRMSSD threshold (default 0.1).
    pub nrmssd_min: f64,
    /// Normalised Shannon entropy threshold (default 0.7).
    pub entropy_min: f64,
    /// Turning-point ratio range (default 0.54..0.77).
    pub tpr_range: (f64, f64),
    /// Shortest episode kept, seconds (default 30).
    pub min_episode_s: f64,
    /// Longest stretch of time between consecutive intervals (e.g. where intervals next to
    /// ectopic beats were set aside) that an episode may bridge, seconds (default 30): the
    /// screen claims nothing about a long stretch it did not see.
    pub max_gap_s: f64,
    /// Set aside intervals next to beats labelled `V` or `Q` before screening (default true;
    /// see [`screen_beats`]).
    pub exclude_ectopic: bool,
    /// An interval is flagged when more than this share of the windows covering it are
    /// irregular (default 0.5, a majority). Windows that straddle an episode edge mix regular
    /// and irregular intervals and mostly fail the entropy test, so a majority vote shrinks
    /// episodes by up to half a window at each edge and a low share grows them: on the open
    /// annotated records of docs/validation.md, 0.15 gave duration Sp 92.8 % and 0.5 gave
    /// 94.9 % at a cost of about 1 point of Se. Episode edges are then grown back with
    /// `grow_fraction`.
    pub vote_fraction: f64,
    /// Hysteresis: an episode found with `vote_fraction` extends over the neighbouring
    /// intervals whose share of irregular windows exceeds this (default 0.15), which restores
    /// the edges a majority vote shrinks.
    pub grow_fraction: f64,
    /// Episode edges are placed beat by beat: within half a long window of each edge, at the
    /// beat where the nRMSSD of the `edge_beats` intervals on one side lies furthest above
    /// `nrmssd_min` while that of the `edge_beats` intervals on the other side lies furthest
    /// below it (default 8; 0 or 1 switches the refinement off).
    pub edge_beats: usize,
    /// Interior split (default 30 s; 0 switches it off): inside an episode, a run of intervals
    /// that are locally regular by the coefficient of sample entropy (see `cosen_min`) and lasts
    /// at least this long is cut out, and the pieces left must each last `min_episode_s`. The
    /// default equals `min_episode_s`: an interruption is reported on the same time scale as an
    /// episode. The 128-interval windows cannot see a regular stretch shorter than a window
    /// between two irregular ones; this beat-level rule can. On the open annotated records of
    /// docs/validation.md, before the atrial veto, 15 / 30 / 45 s gave duration Sp 95.1 / 94.3
    /// / 94.1 % and Se 95.4 / 96.5 / 96.5 % (see its "Sensitivity" table for the current ones).
    pub split_regular_s: f64,
    /// Segment length of the local coefficient of sample entropy, RR intervals (default 16, the
    /// segment length of Lake & Moorman 2011, `from memory`; ≥ 4).
    pub cosen_beats: usize,
    /// A segment whose coefficient of sample entropy is at or below this is locally regular
    /// (default −1.4, the atrial-fibrillation threshold of Lake & Moorman 2011, `from memory`).
    /// Sinus rhythm with RR on a few discrete levels (dropped or blocked beats, bigeminy) gives
    /// many template matches and a low value; atrial fibrillation gives few matches and a high
    /// one.
    pub cosen_min: f64,
    /// Starting tolerance r of the coefficient of sample entropy, seconds (default 0.03, as in
    /// Lake & Moorman 2011, `from memory`); grown by 10 ms until 5 pairs match.
    pub cosen_r_s: f64,
    /// Atrial veto (default true): with a P-wave presence index per beat
    /// ([`super::atrial`], passed to [`screen_beats_atrial`]), runs inside an episode where P
    /// waves are consistently present are cut out. Without an index it does nothing.
    pub atrial_veto: bool,
    /// An interval carries P waves when the running median of the P-wave index over
    /// `atrial_beats` intervals is at least this (default 0.5, dimensionless correlation). The
    /// index is near 1 for beats with the record's P wave and scatters around 0 for
    /// fibrillatory waves, which have no fixed phase relative to the QRS; 0.5 lies midway, and
    /// for an index scattering by ≈ 0.4 per beat around 0 the 16-beat median has a spread near
    /// 0.13, so 0.5 is about 4 spreads above the no-P-wave level.
    pub atrial_min: f64,
    /// Running-median length of the P-wave index, RR intervals (default 16, the COSEn segment
    /// length: the two interior rules look at the same number of beats). A median of 16 keeps
    /// the index high in sinus rhythm with up to 7 premature atrial beats among 16, whose P
    /// waves are early or hidden in the T wave.
    pub atrial_beats: usize,
    /// Shortest run of P-wave-carrying intervals that is cut out of an episode, seconds
    /// (default 30; 0 switches the veto off): an episode of atrial fibrillation is
    /// conventionally one lasting at least 30 s (`common practice`), and a stretch with P waves
    /// is reported on the same time scale, as with `split_regular_s`. The pieces left must each
    /// last `min_episode_s`.
    pub atrial_split_s: f64,
    /// Short windows that nominate episodes shorter than a long window, RR intervals (default
    /// 32; 0 switches them off). A 128-interval window cannot reach a majority over an episode
    /// of 30 s at 60–120 bpm (30–60 intervals); a 32-interval window lasts at most 30 s for
    /// rates from 64 bpm, the time scale of the shortest episode (`common practice`). The same
    /// statistics and thresholds as the long windows apply, with the trim scaled to the window
    /// (`trim` × 32 / 128 = 2 at each end). Intervals most of whose short windows are
    /// irregular join the candidates; the episode edges still come from the beats
    /// (`edge_beats`), and the interior split and atrial veto apply as to any candidate.
    pub short_window_beats: usize,
    /// Step between short windows, RR intervals (default 4: the long windows' step-to-length
    /// ratio, 16/128).
    pub short_step_beats: usize,
}

impl Default for ScreenParams {
    fn default() -> Self {
        ScreenParams {
            window_beats: 128,
            step_beats: 16,
            trim: 8,
            nrmssd_min: 0.1,
            entropy_min: 0.7,
            tpr_range: (0.54, 0.77),
            min_episode_s: 30.0,
            max_gap_s: 30.0,
            exclude_ectopic: true,
            vote_fraction: 0.5,
            grow_fraction: 0.15,
            edge_beats: 8,
            split_regular_s: 30.0,
            cosen_beats: 16,
            cosen_min: -1.4,
            cosen_r_s: 0.03,
            atrial_veto: true,
            atrial_min: 0.5,
            atrial_beats: 16,
            atrial_split_s: 30.0,
            short_window_beats: 32,
            short_step_beats: 4,
        }
    }
}

impl ScreenParams {
    /// Validate.
    pub fn check(&self) -> Result<()> {
        if self.window_beats < 16 || 2 * self.trim + 8 > self.window_beats {
            return Err(Error::param("screen.window_beats / trim", format!("window {} RR intervals must be ≥ 16 and leave ≥ 8 after trimming {} at each end", self.window_beats, self.trim)));
        }
        if self.step_beats == 0 || self.step_beats > self.window_beats {
            return Err(Error::param(
                "screen.step_beats",
                format!("{}; allowed 1..=window_beats", self.step_beats),
            ));
        }
        if !(0.0..1.0).contains(&self.grow_fraction) {
            return Err(Error::param(
                "screen.grow_fraction",
                format!("{}; allowed 0 ≤ f < 1", self.grow_fraction),
            ));
        }
        if !(0.0..1.0).contains(&self.vote_fraction) {
            return Err(Error::param(
                "screen.vote_fraction",
                format!("{}; allowed 0 ≤ f < 1", self.vote_fraction),
            ));
        }
        if !(self.max_gap_s > 0.0) {
            return Err(Error::param("screen.max_gap_s", "must be > 0 s"));
        }
        if !(self.split_regular_s >= 0.0 && self.split_regular_s.is_finite()) {
            return Err(Error::param(
                "screen.split_regular_s",
                format!(
                    "{} s; allowed ≥ 0 s (0 = no interior split)",
                    self.split_regular_s
                ),
            ));
        }
        if !(4..=self.window_beats).contains(&self.cosen_beats) {
            return Err(Error::param(
                "screen.cosen_beats",
                format!(
                    "{} RR intervals; allowed 4..={} (window_beats)",
                    self.cosen_beats, self.window_beats
                ),
            ));
        }
        if !self.cosen_min.is_finite() {
            return Err(Error::param(
                "screen.cosen_min",
                "must be a finite number (dimensionless; default −1.4)",
            ));
        }
        if !(self.cosen_r_s > 0.0 && self.cosen_r_s <= 1.0) {
            return Err(Error::param(
                "screen.cosen_r_s",
                format!("{} s; allowed 0 < r ≤ 1 s", self.cosen_r_s),
            ));
        }
        if !(-1.0..=1.0).contains(&self.atrial_min) {
            return Err(Error::param(
                "screen.atrial_min",
                format!(
                    "{}; allowed −1 ≤ v ≤ 1 (dimensionless correlation; default 0.5)",
                    self.atrial_min
                ),
            ));
        }
        if !(1..=self.window_beats).contains(&self.atrial_beats) {
            return Err(Error::param(
                "screen.atrial_beats",
                format!(
                    "{} RR intervals; allowed 1..={} (window_beats)",
                    self.atrial_beats, self.window_beats
                ),
            ));
        }
        if self.short_window_beats != 0
            && (self.short_window_beats < 16 || self.short_window_beats > self.window_beats)
        {
            return Err(Error::param(
                "screen.short_window_beats",
                format!(
                    "{} RR intervals; allowed 0 (off) or 16..={} (window_beats)",
                    self.short_window_beats, self.window_beats
                ),
            ));
        }
        if self.short_window_beats != 0
            && !(1..=self.short_window_beats).contains(&self.short_step_beats)
        {
            return Err(Error::param(
                "screen.short_step_beats",
                format!(
                    "{}; allowed 1..={} (short_window_beats)",
                    self.short_step_beats, self.short_window_beats
                ),
            ));
        }
        if !(self.atrial_split_s >= 0.0 && self.atrial_split_s.is_finite()) {
            return Err(Error::param(
                "screen.atrial_split_s",
                format!(
                    "{} s; allowed ≥ 0 s (0 = no atrial veto)",
                    self.atrial_split_s
                ),
            ));
        }
        if !(self.min_episode_s >= 0.0) {
            return Err(Error::param("screen.min_episode_s", "must be ≥ 0 s"));
        }
        Ok(())
    }
}

/// Statistics of one window.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ScreenWindow {
    /// First RR index.
    pub start: usize,
    /// One past the last RR index.
    pub end: usize,
    /// RMSSD / mean RR after trimming.
    pub nrmssd: f64,
    /// Normalised Shannon entropy after trimming.
    pub entropy: f64,
    /// Turning-point ratio (on the untrimmed window, which keeps the order).
    pub tpr: f64,
    /// All three criteria met.
    pub irregular: bool,
}

/// An irregular episode, seconds from the record start.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Episode {
    /// Start, s.
    pub start_s: f64,
    /// End, s.
    pub end_s: f64,
}

/// Result of the screen.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Screen {
    /// Window statistics.
    pub windows: Vec<ScreenWindow>,
    /// Statistics of the short windows ([`ScreenParams::short_window_beats`]; empty when off).
    #[serde(default)]
    pub short_windows: Vec<ScreenWindow>,
    /// Per RR interval: flagged irregular after voting and the minimum-duration rule.
    pub irregular: Vec<bool>,
    /// Merged episodes.
    pub episodes: Vec<Episode>,
}

fn window_stats(rr: &[f64], trim: usize) -> (f64, f64, f64) {
    let mut sorted = rr.to_vec();
    sorted.sort_by(f64::total_cmp);
    let lo = sorted[trim];
    let hi = sorted[sorted.len() - 1 - trim];
    let kept: Vec<f64> = rr.iter().copied().filter(|&v| v >= lo && v <= hi).collect();
    let mean = kept.iter().sum::<f64>() / kept.len() as f64;
    let d2: Vec<f64> = kept.windows(2).map(|w| (w[1] - w[0]).powi(2)).collect();
    let rmssd = (d2.iter().sum::<f64>() / d2.len().max(1) as f64).sqrt();
    (
        rmssd / mean,
        shannon_entropy(&kept, 16),
        turning_point_ratio(rr),
    )
}

/// Run the screen on RR intervals `rr_s` whose end times are `t_end_s` (seconds; the time of
/// the beat closing each interval).
pub fn screen(rr_s: &[f64], t_end_s: &[f64], p: &Checked<ScreenParams>) -> Result<Screen> {
    screen_inner(rr_s, t_end_s, &[], p)
}

/// [`screen`] with a P-wave presence index per interval (`atrial`, that of the beat closing
/// the interval; empty for none).
fn screen_inner(
    rr_s: &[f64],
    t_end_s: &[f64],
    atrial: &[f64],
    p: &Checked<ScreenParams>,
) -> Result<Screen> {
    if rr_s.len() != t_end_s.len() || !(atrial.is_empty() || atrial.len() == rr_s.len()) {
        return Err(Error::Analysis(
            "RR intervals, their times and their P-wave index differ in length".into(),
        ));
    }
    let n = rr_s.len();
    // Intervals that carry P waves (smoothed index at or above `atrial_min`).
    let p_waves: Vec<bool> = if p.atrial_veto && p.atrial_split_s > 0.0 && !atrial.is_empty() {
        super::atrial::smoothed_index(atrial, p.atrial_beats)
            .iter()
            .map(|&v| v >= p.atrial_min)
            .collect()
    } else {
        Vec::new()
    };
    let (windows, votes) = windowed_votes(rr_s, p.window_beats, p.step_beats, p.trim, p);
    let short_trim = p.trim * p.short_window_beats / p.window_beats;
    let (short_windows, short_votes) = if p.short_window_beats > 0 {
        windowed_votes(
            rr_s,
            p.short_window_beats,
            p.short_step_beats,
            short_trim,
            p,
        )
    } else {
        (Vec::new(), vec![(0, 0); n])
    };
    // Hysteresis: an episode is a run of intervals with a share of irregular windows above
    // `grow_fraction` that holds at least one interval above `vote_fraction`, at either scale.
    let share = |&(y, t): &(u32, u32)| if t > 0 { y as f64 / t as f64 } else { 0.0 };
    let strong: Vec<bool> = votes
        .iter()
        .zip(&short_votes)
        .map(|(v, w)| share(v) > p.vote_fraction || share(w) > p.vote_fraction)
        .collect();
    let grow = p.grow_fraction.min(p.vote_fraction);
    let mut irregular: Vec<bool> = votes
        .iter()
        .zip(&short_votes)
        .map(|(v, w)| share(v) > grow || share(w) > grow)
        .collect();
    // Episodes: runs of flagged intervals, from the start of the first interval to the end of
    // the last; runs without a strong interval or shorter than the minimum are cleared.
    let mut episodes = Vec::new();
    let mut i = 0;
    while i < n {
        if !irregular[i] {
            i += 1;
            continue;
        }
        // The run ends at the first unflagged interval or at a gap in time.
        let j = (i + 1..n)
            .find(|&k| !irregular[k] || t_end_s[k] - rr_s[k] - t_end_s[k - 1] > p.max_gap_s)
            .unwrap_or(n);
        let has_core = strong[i..j].iter().any(|&s| s);
        // Edges at beat level: within half a window of each edge, at the beat between the most
        // clearly regular and the most clearly irregular `edge_beats` intervals.
        let (a, b) = if p.edge_beats >= 2 && has_core {
            refine_edges(rr_s, i, j, p)
        } else {
            (i, j)
        };
        irregular[i..a].iter_mut().for_each(|v| *v = false);
        irregular[b..j].iter_mut().for_each(|v| *v = false);
        let mut pieces = if a < b && has_core {
            split_regular_runs(rr_s, t_end_s, a, b, p)
        } else {
            Vec::new()
        };
        if !p_waves.is_empty() {
            pieces = pieces
                .into_iter()
                .flat_map(|(c, d)| cut_runs(&p_waves[c..d], rr_s, t_end_s, c, d, p.atrial_split_s))
                .collect();
        }
        let mut kept_to = a;
        for (c, d) in pieces {
            let (start_s, end_s) = (t_end_s[c] - rr_s[c], t_end_s[d - 1]);
            if end_s - start_s >= p.min_episode_s {
                irregular[kept_to..c].iter_mut().for_each(|v| *v = false);
                kept_to = d;
                episodes.push(Episode { start_s, end_s });
            }
        }
        irregular[kept_to..b.max(kept_to)]
            .iter_mut()
            .for_each(|v| *v = false);
        i = j;
    }
    Ok(Screen {
        windows,
        short_windows,
        irregular,
        episodes,
    })
}

/// Windows of `len` intervals every `step` (the last one ends at the series end), their
/// statistics with `trim` intervals set aside at each end, and per interval the (irregular,
/// total) count of the windows covering it. No windows when the series is shorter than `len`.
fn windowed_votes(
    rr_s: &[f64],
    len: usize,
    step: usize,
    trim: usize,
    p: &ScreenParams,
) -> (Vec<ScreenWindow>, Vec<(u32, u32)>) {
    let n = rr_s.len();
    let mut windows = Vec::new();
    let mut votes = vec![(0u32, 0u32); n];
    if len == 0 || n < len {
        return (windows, votes);
    }
    let mut s = 0;
    loop {
        let e = s + len;
        let (nrmssd, entropy, tpr) = window_stats(&rr_s[s..e], trim);
        let irregular = nrmssd > p.nrmssd_min
            && entropy > p.entropy_min
            && tpr > p.tpr_range.0
            && tpr < p.tpr_range.1;
        for v in &mut votes[s..e] {
            v.1 += 1;
            if irregular {
                v.0 += 1;
            }
        }
        windows.push(ScreenWindow {
            start: s,
            end: e,
            nrmssd,
            entropy,
            tpr,
            irregular,
        });
        if e == n {
            break;
        }
        s = (s + step).min(n - len);
    }
    (windows, votes)
}

/// Local nRMSSD (RMSSD / mean) of `rr`; NaN for fewer than two intervals.
fn local_nrmssd(rr: &[f64]) -> f64 {
    if rr.len() < 2 {
        return f64::NAN;
    }
    let mean = rr.iter().sum::<f64>() / rr.len() as f64;
    let ms = rr.windows(2).map(|w| (w[1] - w[0]).powi(2)).sum::<f64>() / (rr.len() - 1) as f64;
    ms.sqrt() / mean
}

/// Place the edges of an episode `[i, j)` of intervals at the beats where the RR changes from
/// regular to irregular most clearly, by the screen's own threshold: the start is the `k` within
/// half a long window of `i` that maximises the margin min(nRMSSD(after) − `nrmssd_min`,
/// `nrmssd_min` − nRMSSD(before)), with "after" the `edge_beats` intervals from `k` and "before"
/// the `edge_beats` intervals before it (none before the record start: nRMSSD 0); the end,
/// symmetrically, maximises min(nRMSSD(before) − `nrmssd_min`, `nrmssd_min` − nRMSSD(after)).
/// The first threshold crossing of a window that starts at `k` lands up to `edge_beats`
/// intervals early (one large difference at the window's far end is enough), and the largest
/// change of irregularity can fall on a calmer stretch inside an episode; the two-sided margin
/// needs regular intervals on one side and irregular ones on the other. Returns `[a, b)`.
fn refine_edges(rr: &[f64], i: usize, j: usize, p: &ScreenParams) -> (usize, usize) {
    let m = p.edge_beats;
    let n = rr.len();
    let reach = (p.window_beats / 2).min(j - i);
    let level = |s: &[f64]| {
        if s.len() < 2 {
            0.0
        } else {
            local_nrmssd(s)
        }
    };
    let thr = p.nrmssd_min;
    // Highest margin; the later beat on ties.
    let best = |cands: &mut dyn Iterator<Item = (usize, f64)>| {
        cands
            .filter(|c| c.1.is_finite())
            .fold(None, |acc: Option<(usize, f64)>, c| match acc {
                Some(b) if b.1 > c.1 => Some(b),
                _ => Some(c),
            })
            .map(|c| c.0)
    };
    let a = best(&mut (i..i + reach).map(|k| {
        let after = level(&rr[k..(k + m).min(n)]);
        let before = level(&rr[k.saturating_sub(m)..k]);
        (k, (after - thr).min(thr - before))
    }))
    .unwrap_or(i);
    let b = best(&mut (j.saturating_sub(reach).max(a + 1)..=j).map(|e| {
        let before = level(&rr[e.saturating_sub(m)..e]);
        let after = level(&rr[e..(e + m).min(n)]);
        (e, (before - thr).min(thr - after))
    }))
    .unwrap_or(j);
    (a, b.max(a))
}

/// Coefficient of sample entropy of Lake & Moorman (2011): SampEn(m = 1, r) + ln(2r) − ln(mean
/// RR), r in seconds. r starts at `r0_s` and grows by 10 ms until at least 5 pairs match at
/// length 2 (at most 20 steps); NaN when no pair matches then.
pub(crate) fn cosen(rr: &[f64], r0_s: f64) -> f64 {
    let n = rr.len();
    if n < 3 {
        return f64::NAN;
    }
    let mean = rr.iter().sum::<f64>() / n as f64;
    let mut r = r0_s;
    for _ in 0..=20 {
        let (mut b, mut a) = (0u32, 0u32);
        for i in 0..n - 1 {
            for j in i + 1..n - 1 {
                if (rr[i] - rr[j]).abs() <= r {
                    b += 1;
                    if (rr[i + 1] - rr[j + 1]).abs() <= r {
                        a += 1;
                    }
                }
            }
        }
        if a >= 5 {
            return -(a as f64 / b as f64).ln() + (2.0 * r).ln() - mean.ln();
        }
        r += 0.010;
    }
    f64::NAN
}

/// Split the episode `[a, b)` around its locally regular runs. Interval `k` is locally regular
/// when the `cosen_beats` intervals centred on it have a coefficient of sample entropy at or
/// below `cosen_min`; runs of locally regular intervals lasting at least `split_regular_s` are
/// cut out. Returns the remaining pieces `[c, d)` in order.
fn split_regular_runs(
    rr: &[f64],
    t_end: &[f64],
    a: usize,
    b: usize,
    p: &ScreenParams,
) -> Vec<(usize, usize)> {
    let m = p.cosen_beats;
    if p.split_regular_s <= 0.0 || b - a < m {
        return vec![(a, b)];
    }
    let raw: Vec<bool> = (a..b)
        .map(|k| {
            let s = k.saturating_sub(m / 2).max(a).min(b - m);
            let c = cosen(&rr[s..s + m], p.cosen_r_s);
            c.is_finite() && c <= p.cosen_min
        })
        .collect();
    // Majority (median) filter over `cosen_beats` intervals, so that a pattern break or an
    // ectopic beat inside a regular stretch does not end the run.
    let h = m / 2;
    let regular: Vec<bool> = (0..raw.len())
        .map(|k| {
            let w = &raw[k.saturating_sub(h)..(k + h + 1).min(raw.len())];
            2 * w.iter().filter(|&&v| v).count() > w.len()
        })
        .collect();
    cut_runs(&regular, rr, t_end, a, b, p.split_regular_s)
}

/// Cut out of `[a, b)` the runs of intervals with `mask[k − a]` set that last at least `min_s`
/// seconds; returns the remaining pieces `[c, d)` in order.
fn cut_runs(
    mask: &[bool],
    rr: &[f64],
    t_end: &[f64],
    a: usize,
    b: usize,
    min_s: f64,
) -> Vec<(usize, usize)> {
    let mut pieces = Vec::new();
    let mut piece_start = a;
    let mut k = a;
    while k < b {
        if !mask.get(k - a).copied().unwrap_or(false) {
            k += 1;
            continue;
        }
        let e = (k..b)
            .find(|&q| !mask.get(q - a).copied().unwrap_or(false))
            .unwrap_or(b);
        if t_end[e - 1] - (t_end[k] - rr[k]) >= min_s {
            if k > piece_start {
                pieces.push((piece_start, k));
            }
            piece_start = e;
        }
        k = e;
    }
    if b > piece_start {
        pieces.push((piece_start, b));
    }
    pieces
}

/// Reference rhythm labels counted as irregular: beatfold's synthetic label and the atrial
/// fibrillation and flutter labels of open annotated databases.
pub const IRREGULAR_LABELS: [&str; 3] = [crate::record::RHYTHM_IRREGULAR, "AFIB", "AFL"];

/// The reference intervals whose label is in [`IRREGULAR_LABELS`], as `(start_s, end_s)`.
pub fn irregular_reference(ann: &crate::record::Annotations) -> Vec<(f64, f64)> {
    ann.rhythms
        .iter()
        .filter(|r| IRREGULAR_LABELS.contains(&r.label.as_str()))
        .map(|r| (r.start_s, r.end_s))
        .collect()
}

/// Run the screen on detected beats: `samples` at `fs_hz`, `rr_s` their RR intervals and
/// `labels` their beat labels (one per beat, or empty).
///
/// With [`ScreenParams::exclude_ectopic`] (default) the intervals that begin or end at a beat
/// labelled `V` or `Q` are set aside first, as NN series are formed for variability (Task Force
/// of ESC/NASPE 1996): runs of premature ventricular beats (bigeminy, trigeminy) are then not
/// mistaken for an irregular rhythm. Window indices and `irregular` refer to `rr_s` either way
/// (set-aside intervals are never flagged).
pub fn screen_beats(
    samples: &[usize],
    rr_s: &[f64],
    labels: &[char],
    fs_hz: f64,
    p: &Checked<ScreenParams>,
) -> Result<Screen> {
    screen_beats_atrial(samples, rr_s, labels, &[], fs_hz, p)
}

/// [`screen_beats`] with the atrial veto: `atrial` holds a P-wave presence index per beat
/// ([`super::atrial::p_wave_index`]; same length as `samples`, or empty for no veto). Each
/// interval takes the index of the beat that closes it (its P wave lies in that interval).
/// With [`ScreenParams::atrial_veto`], runs inside an episode where the running median of the
/// index over [`ScreenParams::atrial_beats`] intervals stays at or above
/// [`ScreenParams::atrial_min`] for at least [`ScreenParams::atrial_split_s`] are cut out, and
/// the pieces left shorter than `min_episode_s` are dropped. NaN index values count as "no P
/// wave", so a record without a P-wave template is screened as by [`screen_beats`].
pub fn screen_beats_atrial(
    samples: &[usize],
    rr_s: &[f64],
    labels: &[char],
    atrial: &[f64],
    fs_hz: f64,
    p: &Checked<ScreenParams>,
) -> Result<Screen> {
    if !(atrial.is_empty() || atrial.len() == samples.len()) {
        return Err(Error::Analysis(format!(
            "P-wave index has {} values for {} beats",
            atrial.len(),
            samples.len()
        )));
    }
    let t_end: Vec<f64> = samples.iter().skip(1).map(|&s| s as f64 / fs_hz).collect();
    // The index of the beat closing each interval (empty without an index).
    let per_interval: &[f64] = atrial.get(1..).unwrap_or(&[]);
    if !p.exclude_ectopic || labels.len() != samples.len() || rr_s.len() != t_end.len() {
        return screen_inner(rr_s, &t_end, per_interval, p);
    }
    let normal = |c: char| c == 'N' || c == 'A';
    let kept: Vec<usize> = (0..rr_s.len())
        .filter(|&i| normal(labels[i]) && normal(labels[i + 1]))
        .collect();
    let rr: Vec<f64> = kept.iter().map(|&i| rr_s[i]).collect();
    let te: Vec<f64> = kept.iter().map(|&i| t_end[i]).collect();
    let at: Vec<f64> = if per_interval.is_empty() {
        Vec::new()
    } else {
        kept.iter().map(|&i| per_interval[i]).collect()
    };
    let mut sc = screen_inner(&rr, &te, &at, p)?;
    let mut irregular = vec![false; rr_s.len()];
    for (k, &i) in kept.iter().enumerate() {
        irregular[i] = sc.irregular.get(k).copied().unwrap_or(false);
    }
    for w in sc.windows.iter_mut().chain(sc.short_windows.iter_mut()) {
        w.start = kept.get(w.start).copied().unwrap_or(rr_s.len());
        w.end = kept
            .get(w.end.saturating_sub(1))
            .map_or(rr_s.len(), |&i| i + 1);
    }
    sc.irregular = irregular;
    Ok(sc)
}

impl Screen {
    /// Total duration of the irregular episodes, seconds (0 without episodes).
    pub fn irregular_s(&self) -> f64 {
        self.episodes
            .iter()
            .map(|e| (e.end_s - e.start_s).max(0.0))
            .sum::<f64>()
            + 0.0
    }

    /// Episodes as `(start_s, end_s)` pairs.
    pub fn episode_bounds(&self) -> Vec<(f64, f64)> {
        self.episodes.iter().map(|e| (e.start_s, e.end_s)).collect()
    }
}

/// Duration agreement of detected episodes with reference intervals over `[0, duration_s)`:
/// (reference irregular seconds, detected irregular seconds, duration Se, duration Sp), where
/// Se = overlap / reference time and Sp = (time neither) / (time not in the reference).
pub fn duration_agreement(
    reference: &[(f64, f64)],
    detected: &[(f64, f64)],
    duration_s: f64,
) -> (f64, f64, f64, f64) {
    let len = |v: &[(f64, f64)]| -> f64 {
        v.iter()
            .map(|(a, b)| (b.min(duration_s) - a.max(0.0)).max(0.0))
            .sum()
    };
    let mut overlap = 0.0;
    for &(a, b) in reference {
        for &(c, d) in detected {
            overlap += (b.min(d) - a.max(c)).max(0.0);
        }
    }
    let r = len(reference);
    let d = len(detected);
    let neg = duration_s - r;
    let true_neg = duration_s - r - d + overlap;
    let se = if r > 0.0 { overlap / r } else { f64::NAN };
    let sp = if neg > 0.0 { true_neg / neg } else { f64::NAN };
    (r, d, se, sp)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};

    fn series(seed: u64) -> (Vec<f64>, Vec<f64>) {
        // 400 regular intervals (0.8 s ± 2 % smooth modulation), 400 irregular (uniform 0.4–1.0
        // s), 400 regular: a synthetic test series of our own.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
        let mut rr = Vec::new();
        for i in 0..1200 {
            if (400..800).contains(&i) {
                rr.push(rng.gen_range(0.4..1.0));
            } else {
                rr.push(0.8 + 0.016 * (i as f64 * 0.3).sin());
            }
        }
        let mut t = 0.0;
        let times = rr
            .iter()
            .map(|r| {
                t += r;
                t
            })
            .collect();
        (rr, times)
    }

    #[test]
    fn irregular_stretch_is_found_with_sharp_enough_edges() {
        for seed in 1..6 {
            check_seed(seed);
        }
    }

    fn check_seed(seed: u64) {
        let (rr, t) = series(seed);
        let s = screen(&rr, &t, &crate::params::Checked::default()).unwrap();
        assert_eq!(s.episodes.len(), 1, "{:?}", s.episodes);
        let truth = [(t[399], t[799])];
        let det: Vec<(f64, f64)> = s.episodes.iter().map(|e| (e.start_s, e.end_s)).collect();
        let (_, _, se, sp) = duration_agreement(&truth, &det, t[1199]);
        // With 15 % of the covering windows required, each edge moves by a few steps of 16
        // intervals at most; over 400 irregular and 800 regular intervals that stays within the
        // 95 % duration Se/Sp asked of the screen. Several seeds.
        assert!(se > 0.95 && sp > 0.95, "Se {se} Sp {sp}");
    }

    #[test]
    fn agreement_arithmetic() {
        let (r, d, se, sp) = duration_agreement(&[(10.0, 20.0)], &[(15.0, 30.0)], 100.0);
        assert_eq!((r, d), (10.0, 15.0));
        assert!((se - 0.5).abs() < 1e-12);
        assert!((sp - 80.0 / 90.0).abs() < 1e-12);
    }

    #[test]
    fn short_series_give_no_windows() {
        let s = screen(&[0.8; 50], &[1.0; 50], &crate::params::Checked::default()).unwrap();
        assert!(s.windows.is_empty() && s.episodes.is_empty());
        assert!(screen(&[0.8; 5], &[1.0; 4], &crate::params::Checked::default()).is_err());
    }
}

#[cfg(test)]
mod edge_tests {
    use super::*;
    use rand::{Rng, SeedableRng};

    #[test]
    fn refined_edges_land_within_a_few_beats_of_the_change() {
        // 300 regular intervals (0.8 s ± 1 %), 300 irregular ones (uniform 0.4–1.0 s), 300
        // regular: the episode found must start and end within 8 intervals (the refinement's
        // local window) of the true change points. Seeded.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(4);
        let mut rr = Vec::new();
        for k in 0..900 {
            rr.push(if (300..600).contains(&k) {
                rng.gen_range(0.4..1.0)
            } else {
                0.8 * (1.0 + rng.gen_range(-0.01..0.01))
            });
        }
        let mut t = Vec::new();
        let mut acc = 0.0;
        for r in &rr {
            acc += r;
            t.push(acc);
        }
        let sc = screen(&rr, &t, &crate::params::Checked::default()).unwrap();
        assert_eq!(sc.episodes.len(), 1, "{:?}", sc.episodes);
        let first = sc.irregular.iter().position(|&v| v).unwrap();
        let last = sc.irregular.iter().rposition(|&v| v).unwrap();
        assert!(first.abs_diff(300) <= 8, "starts at {first}");
        assert!(last.abs_diff(599) <= 8, "ends at {last}");
        // Without the refinement the edges spill (the hysteresis growth reaches further out).
        let loose = ScreenParams {
            edge_beats: 0,
            ..ScreenParams::default()
        };
        let sc0 = screen(&rr, &t, &crate::params::ck(loose.clone())).unwrap();
        let f0 = sc0.irregular.iter().position(|&v| v).unwrap();
        assert!(f0 < first, "unrefined start {f0}, refined {first}");
    }
}

#[cfg(test)]
mod split_tests {
    use super::*;
    use rand::{Rng, SeedableRng};

    fn times(rr: &[f64]) -> Vec<f64> {
        let mut acc = 0.0;
        rr.iter()
            .map(|r| {
                acc += r;
                acc
            })
            .collect()
    }

    /// 400 irregular intervals (uniform 0.4–1.0 s), then `middle`, then 400 irregular ones.
    fn sandwich(seed: u64, middle: &[f64]) -> Vec<f64> {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
        let mut rr: Vec<f64> = (0..400).map(|_| rng.gen_range(0.4..1.0)).collect();
        rr.extend_from_slice(middle);
        rr.extend((0..400).map(|_| rng.gen_range(0.4..1.0)));
        rr
    }

    #[test]
    fn cosen_of_a_constant_series() {
        // Source: Lake & Moorman (2011), COSEn = SampEn(1, r) + ln(2r) − ln(mean RR) (formula
        // from memory). 16 equal intervals: every pair matches at both lengths, SampEn = 0.
        let c = cosen(&[0.8; 16], 0.03);
        assert!((c - ((0.06f64).ln() - (0.8f64).ln())).abs() < 1e-12, "{c}");
        // Too short a series has no value.
        assert!(cosen(&[0.8, 0.9], 0.03).is_nan());
    }

    #[test]
    fn regular_stretch_inside_an_irregular_series_is_split_out() {
        // 60 regular intervals (0.8 s ± 1 %, 48 s ≥ split_regular_s) between two irregular
        // stretches: the 128-interval windows all stay irregular across it, so only the interior
        // split can separate it. Both episode edges next to it must land within 12 intervals
        // (the 16-interval COSEn segment plus its majority filter reach 8 + 8 intervals at most;
        // measured 3 and 3–4 when written) of the change points 400 and 460. Several seeds.
        for seed in 1..5 {
            let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(100 + seed);
            let middle: Vec<f64> = (0..60)
                .map(|_| 0.8 * (1.0 + rng.gen_range(-0.01..0.01)))
                .collect();
            let rr = sandwich(seed, &middle);
            let t = times(&rr);
            let sc = screen(&rr, &t, &crate::params::Checked::default()).unwrap();
            assert_eq!(sc.episodes.len(), 2, "seed {seed}: {:?}", sc.episodes);
            let last_first = (0..460).rev().find(|&k| sc.irregular[k]).unwrap();
            let first_second = (400..rr.len()).find(|&k| sc.irregular[k]).unwrap();
            eprintln!("split seed {seed}: ends {last_first} resumes {first_second}");
            assert!(
                last_first.abs_diff(399) <= 12,
                "seed {seed}: ends {last_first}"
            );
            assert!(
                first_second.abs_diff(460) <= 12,
                "seed {seed}: resumes {first_second}"
            );
            // Without the split the stretch stays inside one episode.
            let off = ScreenParams {
                split_regular_s: 0.0,
                ..ScreenParams::default()
            };
            let sc0 = screen(&rr, &t, &crate::params::ck(off.clone())).unwrap();
            assert_eq!(sc0.episodes.len(), 1, "seed {seed}: {:?}", sc0.episodes);
        }
    }

    #[test]
    fn rr_on_two_discrete_levels_is_not_irregular() {
        // Sinus rhythm with dropped beats: intervals of 0.8 s or 1.6 s (± 1 %) in random order
        // (30 % long), 100 intervals (≈ 104 s). Its nRMSSD is far above 0.1, but its intervals
        // sit on two levels, so COSEn is low (≈ −2.3 by the formula) and the stretch is cut out
        // of the surrounding irregular episode (common practice: a "regularly irregular" rhythm
        // is not an irregularly irregular one). At most 40 of its 100 intervals may stay flagged:
        // next to uniform irregular intervals the 16-interval COSEn segment and its 16-interval
        // majority filter can move each edge by up to 20 intervals (measured when written: 21,
        // 0, 36, 16 flagged for seeds 1–4; 52, 68, 36, 52 without the split). Over the seeds, the split
        // must unflag some of them; that is checked with the beat-level edge placement off, which
        // on its own already keeps most of the stretch out (33 flagged in all with or without
        // the split, measured when the margin edges were written).
        let (mut total, mut total_off) = (0, 0);
        for seed in 1..5 {
            let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(200 + seed);
            let middle: Vec<f64> = (0..100)
                .map(|_| {
                    let level = if rng.gen_bool(0.3) { 1.6 } else { 0.8 };
                    level * (1.0 + rng.gen_range(-0.01..0.01))
                })
                .collect();
            assert!(local_nrmssd(&middle) > 0.3);
            let rr = sandwich(seed, &middle);
            let t = times(&rr);
            let sc = screen(&rr, &t, &crate::params::Checked::default()).unwrap();
            let flagged = sc.irregular[400..500].iter().filter(|&&v| v).count();
            eprintln!("two levels seed {seed}: {flagged} flagged");
            assert!(flagged <= 40, "seed {seed}: {flagged} of 100 flagged");
            let no_edges = ScreenParams {
                edge_beats: 0,
                ..ScreenParams::default()
            };
            let off = ScreenParams {
                split_regular_s: 0.0,
                ..no_edges.clone()
            };
            let sc1 = screen(&rr, &t, &crate::params::ck(no_edges.clone())).unwrap();
            let flagged1 = sc1.irregular[400..500].iter().filter(|&&v| v).count();
            let sc0 = screen(&rr, &t, &crate::params::ck(off.clone())).unwrap();
            let flagged0 = sc0.irregular[400..500].iter().filter(|&&v| v).count();
            eprintln!("two levels seed {seed}: {flagged1} / {flagged0} flagged with / without split (edges off)");
            total += flagged1;
            total_off += flagged0;
        }
        assert!(
            total < total_off,
            "{total} flagged with the split, {total_off} without"
        );
    }

    #[test]
    fn an_irregular_series_is_not_split() {
        // 1000 uniform irregular intervals (0.4–1.0 s): the split must leave one episode that
        // covers at least 95 % of the series (the screen's duration Se target). Several seeds.
        for seed in 1..5 {
            let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(300 + seed);
            let rr: Vec<f64> = (0..1000).map(|_| rng.gen_range(0.4..1.0)).collect();
            let t = times(&rr);
            let sc = screen(&rr, &t, &crate::params::Checked::default()).unwrap();
            assert_eq!(sc.episodes.len(), 1, "seed {seed}: {:?}", sc.episodes);
            let covered = sc.episodes[0].end_s - sc.episodes[0].start_s;
            eprintln!("irregular seed {seed}: {:.4}", covered / t[999]);
            assert!(
                covered >= 0.95 * t[999],
                "seed {seed}: {covered} of {}",
                t[999]
            );
        }
    }

    #[test]
    fn new_parameters_are_checked() {
        let bad = [
            ScreenParams {
                split_regular_s: -1.0,
                ..ScreenParams::default()
            },
            ScreenParams {
                cosen_beats: 3,
                ..ScreenParams::default()
            },
            ScreenParams {
                cosen_min: f64::NAN,
                ..ScreenParams::default()
            },
            ScreenParams {
                cosen_r_s: 0.0,
                ..ScreenParams::default()
            },
        ];
        for p in &bad {
            assert!(p.check().is_err(), "{p:?}");
        }
        assert!(ScreenParams::default().check().is_ok());
    }
}

#[cfg(test)]
mod atrial_tests {
    use super::*;
    use crate::rhythm::atrial::p_wave_index;
    use crate::rhythm::atrial::test_signals::{fibrillation, lead, FS};
    use rand::{Rng, SeedableRng};

    /// A synthetic lead of our own: 150 regular beats with P waves (0.8 s ± 2 %), 300 irregular
    /// beats without P waves over fibrillatory waves (three 4–9 Hz sinusoids, ≈ 0.1 mV, random
    /// phases), 100 irregular beats with P waves (RR uniform 0.6–1.1 s, as in sinus rhythm
    /// with frequent premature beats), 300 irregular beats without P waves. QRS 1 mV (σ 12 ms),
    /// T 0.3 mV (σ 50 ms, 300 ms after R), P 0.15 mV (σ 25 ms, 160 ms before R), white noise
    /// 0.01 mV RMS. Returns the lead and the R samples.
    fn record(seed: u64) -> (Vec<f64>, Vec<usize>) {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
        let mut rr = Vec::new();
        let mut has_p = Vec::new();
        for k in 0..850 {
            let (r, pw) = match k {
                0..=149 => (0.8 * (1.0 + rng.gen_range(-0.02..0.02)), true),
                450..=549 => (rng.gen_range(0.6..1.1), true),
                _ => (rng.gen_range(0.45..1.0), false),
            };
            rr.push(r);
            has_p.push(pw);
        }
        let (mut x, r_samples) = lead(&rr, &has_p, 0.01, seed);
        // The same fibrillatory waves (one seed) over every beat without a P wave.
        for k in 1..850 {
            if !has_p[k] {
                let t = r_samples[k] as f64 / FS;
                fibrillation(&mut x, t - rr[k - 1], t, 0.1, seed + 100);
            }
        }
        (x, r_samples)
    }

    #[test]
    fn veto_cuts_a_p_wave_stretch_and_keeps_fibrillation() {
        // The P-wave stretch (intervals 449..549, ≈ 85 s ≥ atrial_split_s) is irregular by RR,
        // so the windows flag it with its neighbours; with the veto at most 20 % of it may stay
        // flagged (the 16-interval running median moves each edge by up to 8 intervals, 16 of
        // 100), while at least 90 % of the stretches without P waves stay flagged (windows and
        // edge refinement at the record's outer edges lose a few intervals). Without the veto
        // (or without an index) most of the P-wave stretch stays flagged: definition of atrial
        // fibrillation, common practice: irregular RR *and* no P waves. Several seeds.
        for seed in 1..4u64 {
            let (x, s) = record(seed);
            let rr: Vec<f64> = s.windows(2).map(|w| (w[1] - w[0]) as f64 / FS).collect();
            let labels = vec!['N'; s.len()];
            let atrial = p_wave_index(&x, &s, FS).unwrap();
            let p = ScreenParams::default();
            let sc =
                screen_beats_atrial(&s, &rr, &labels, &atrial, FS, &crate::params::ck(p.clone()))
                    .unwrap();
            let share = |v: &[bool]| v.iter().filter(|&&b| b).count() as f64 / v.len() as f64;
            let in_p = share(&sc.irregular[449..549]);
            let in_af = share(&[&sc.irregular[150..449], &sc.irregular[550..849]].concat());
            let off = ScreenParams {
                atrial_veto: false,
                ..p.clone()
            };
            let sc0 = screen_beats_atrial(
                &s,
                &rr,
                &labels,
                &atrial,
                FS,
                &crate::params::ck(off.clone()),
            )
            .unwrap();
            let in_p0 = share(&sc0.irregular[449..549]);
            let plain = screen_beats(&s, &rr, &labels, FS, &crate::params::ck(p.clone())).unwrap();
            eprintln!(
                "veto seed {seed}: P stretch {in_p:.2} flagged (off {in_p0:.2}), AF {in_af:.3}, {} episodes",
                sc.episodes.len()
            );
            assert!(in_p <= 0.2, "seed {seed}: {in_p}");
            assert!(in_af >= 0.9, "seed {seed}: {in_af}");
            assert!(in_p0 >= 0.8, "seed {seed}: {in_p0}");
            assert_eq!(sc.episodes.len(), 2, "seed {seed}: {:?}", sc.episodes);
            assert_eq!(plain, sc0, "seed {seed}");
        }
    }

    #[test]
    fn atrial_parameters_and_lengths_are_checked() {
        let bad = [
            ScreenParams {
                atrial_min: 1.5,
                ..ScreenParams::default()
            },
            ScreenParams {
                atrial_beats: 0,
                ..ScreenParams::default()
            },
            ScreenParams {
                atrial_split_s: f64::INFINITY,
                ..ScreenParams::default()
            },
        ];
        for p in &bad {
            assert!(p.check().is_err(), "{p:?}");
        }
        let s = [0usize, 200, 400];
        let rr = [0.8, 0.8];
        let p = ScreenParams::default();
        assert!(
            screen_beats_atrial(&s, &rr, &[], &[0.5; 2], FS, &crate::params::ck(p.clone()))
                .is_err()
        );
        // All-NaN index: same as no index.
        let a = screen_beats_atrial(
            &s,
            &rr,
            &[],
            &[f64::NAN; 3],
            FS,
            &crate::params::ck(p.clone()),
        )
        .unwrap();
        assert_eq!(
            a,
            screen_beats(&s, &rr, &[], FS, &crate::params::ck(p.clone())).unwrap()
        );
    }
}
