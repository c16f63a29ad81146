//! One answer from several dimension estimators: the d they agree on over the widest plateau of
//! scales, with the noise scale below it.
//!
//! In: curves of local d against scale ([`ScaleCurve`], any number; an estimator's curve is
//! multiplied by the ratio of its corrected to its raw estimate, so that it passes through the
//! corrected value at the estimator's own scale), the corrected point estimates, the ambient
//! dimension and an optional noise scale found elsewhere. Out: a [`Consensus`]. Another curve
//! (for example a kernel-sum dimension curve of an embedding) joins by adding a [`ScaleCurve`].
//!
//! Rule (ours):
//! 1. A shared axis of [`GRID`] scales, geometrically spaced over the union of the curves'
//!    scales. At every grid scale each curve that spans it gives a value (linear in log scale
//!    between its points); where at least two curves speak, the scale's value is their median
//!    m(s), and the curves agree there when every value lies within ±[`AGREE`] of m(s).
//! 2. The plateau is the longest run of neighbouring agreeing grid scales whose m(s) all lie
//!    within ±[`FLAT`] of the run's median (ties: the coarser run). Its median is `plateau_d`.
//! 3. The members are the largest group of corrected estimates that all lie within ±[`AGREE`]
//!    of the group's median (among groups of equal size, the one with the smallest relative
//!    range). d is that median, or the corrected TwoNN when TwoNN is a member and lies below
//!    it (the lower of the two). So d is a value most estimators agree on, and one estimator
//!    with a known bias on a given shape (the correlation dimension on paraboloids, the integer
//!    local-PCA count on a helix) cannot pull it. Why the lower of the two: TwoNN uses the two
//!    nearest neighbours only, so curvature, which lifts estimates from wider neighbourhoods
//!    (Facco et al. 2017 make this point for TwoNN), lifts it least; noise lifts it most, and
//!    then the group median is the lower value. This choice was made on benchmark seeds 0
//!    and 1 (docs/validation-dimension.md). The interval runs from the smaller of (median
//!    of their lower ends, smallest member) to the larger of (median of their upper ends,
//!    largest member), so it covers both the resampling spread and the spread between
//!    estimators.
//! 4. The noise scale is the coarsest grid scale below the plateau where m(s) (or the only curve
//!    there) exceeds [`NOISE_FACTOR`]·d; if none, the noise scale given by the caller when it
//!    lies below the plateau.
//! 5. `resolved` only when: a plateau of at least [`MIN_PLATEAU`] grid scales exists and its
//!    median is within ±[`AGREE`] of d; at least two calibrated estimates ran and every one is a
//!    member; none ran out of reference dimensions; with resampling, the interval's half width
//!    is at most [`AGREE`]·d; the answer does not hinge on the finite-sample correction: the
//!    median raw estimate of the members is within ±[`AGREE`] of d (a larger correction depends
//!    on how well the reference cubes stand for the data, which the data cannot tell); and no
//!    noise band: the local-PCA (Fukunaga–Olsen) count at its smallest neighbourhood does not
//!    reach the ambient dimension D − ½ (then every coordinate carries variance at the finest
//!    scale the sample shows: noise of that size and a set that truly fills the space look the
//!    same, and whether a lower d holds at coarser scales cannot be told from these data).
//!    Otherwise `unresolved` with the first failed condition as the reason.
//! 6. Uniformity guard ([`uniformity_guard`], applied by the suite to a resolved answer):
//!    `unresolved` when the spread S of the pointwise local dimensions
//!    ([`super::local_spread`]: interquartile range of their logs) exceeds
//!    [`SPREAD_RATIO_MAX`] times that of a uniform cube of m points at δ = d rounded. A density
//!    that changes strongly within neighbourhoods (piled towards a corner) biases every
//!    calibrated estimator the same way, so they agree on a wrong value; parts of different
//!    dimension averaged together do the same. The guard changes the status only, never d.
//!    Its threshold was chosen on the development family of scripts/dimension_density_study.py,
//!    not on the benchmark (docs/validation-dimension.md).

use super::suite::{Method, MethodEstimate};
use super::ScalePoint;
use serde::{Deserialize, Serialize};

/// Grid scales of the shared axis.
pub const GRID: usize = 40;
/// Relative distance from the median within which values agree.
pub const AGREE: f64 = 0.2;
/// Relative range of the median over a plateau.
pub const FLAT: f64 = 0.15;
/// Fewest grid scales of a plateau for a resolved answer (a factor of about 1.6 in scale when
/// the curves span three decades).
pub const MIN_PLATEAU: usize = 3;
/// Factor over d above which a fine scale counts as noise-dominated.
pub const NOISE_FACTOR: f64 = 1.5;
/// Largest ratio of the spread of the pointwise local dimensions to a uniform cube's at d for a
/// resolved answer (rule 6).
pub const SPREAD_RATIO_MAX: f64 = 1.15;

/// A curve of local dimension against scale, for the shared axis.
#[derive(Debug, Clone, PartialEq)]
pub struct ScaleCurve {
    /// Name of the curve (an estimator's name).
    pub name: String,
    /// Points in any order; non-finite or non-positive scales are ignored.
    pub points: Vec<ScalePoint>,
    /// Factor applied to every d of the curve.
    pub factor: f64,
}

impl ScaleCurve {
    /// An estimator's curve, scaled by corrected / raw estimate.
    pub fn of_estimate(e: &MethodEstimate) -> ScaleCurve {
        let factor = if e.d > 0.0 && e.corrected_d.is_finite() {
            e.corrected_d / e.d
        } else {
            1.0
        };
        ScaleCurve {
            name: e.method.name().to_string(),
            points: e.curve.clone(),
            factor,
        }
    }

    /// Value at scale `s` when the curve spans it.
    fn at(&self, s: f64) -> Option<f64> {
        let mut pts: Vec<(f64, f64)> = self
            .points
            .iter()
            .filter(|p| p.scale > 0.0 && p.scale.is_finite() && p.d.is_finite())
            .map(|p| (p.scale.ln(), p.d))
            .collect();
        pts.sort_by(|a, b| a.0.total_cmp(&b.0));
        let x = s.ln();
        if pts.len() < 2 || x < pts[0].0 || x > pts[pts.len() - 1].0 {
            return None;
        }
        let i = pts.partition_point(|p| p.0 < x).clamp(1, pts.len() - 1);
        let (a, b) = (pts[i - 1], pts[i]);
        let t = if b.0 > a.0 {
            (x - a.0) / (b.0 - a.0)
        } else {
            0.0
        };
        Some(self.factor * (a.1 + t * (b.1 - a.1)))
    }
}

/// Whether the estimators agree.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Status {
    /// They agree over a plateau of scales.
    Resolved,
    /// They do not; d is still the best value.
    Unresolved,
}

/// The consensus answer (see the module notes).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Consensus {
    /// Best value of d.
    pub d: f64,
    /// Interval of d (NaN ends without resampling and a single member).
    pub ci95: [f64; 2],
    /// Plateau [lo, hi] in the points' units, when found.
    pub scale_range: Option<[f64; 2]>,
    /// Median of the curves over the plateau.
    pub plateau_d: Option<f64>,
    /// Scale below which noise dominates, when found.
    pub noise_scale: Option<f64>,
    /// Resolved or not.
    pub status: Status,
    /// Why (for unresolved) or what was agreed (for resolved).
    pub reason: String,
    /// Estimators whose corrected estimates make up d.
    pub members: Vec<String>,
    /// The shared scale axis and the median of the curves there (NaN where fewer than two
    /// curves speak).
    pub axis: Vec<ScalePoint>,
    /// Spread S of the pointwise local dimensions of the data and of a uniform cube at d (rule
    /// 6), when measured.
    #[serde(default)]
    pub local_spread: Option<[f64; 2]>,
}

impl Consensus {
    /// One sentence for a reader, e.g. "d ≈ 2.0 over scales 0.3–1.2; below 0.1 noise
    /// dominates (resolved)".
    pub fn sentence(&self) -> String {
        let mut s = format!("d ≈ {:.1}", self.d);
        if let Some([lo, hi]) = self.scale_range {
            s += &format!(" over scales {}–{}", short(lo), short(hi));
        }
        if let Some(n) = self.noise_scale {
            s += &format!("; below {} noise dominates", short(n));
        }
        match self.status {
            Status::Resolved => s += " (estimators agree)",
            Status::Unresolved => s += &format!(" (unresolved: {})", self.reason),
        }
        s
    }
}

/// A scale with two significant digits.
fn short(x: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        return format!("{x}");
    }
    let digits = (1 - x.abs().log10().floor() as i32).max(0) as usize;
    format!("{x:.digits$}")
}

fn median(mut v: Vec<f64>) -> f64 {
    crate::stats::median_of_finite(&mut v)
}

/// The largest group of corrected estimates within ±[`AGREE`] of its median (ties: smallest
/// relative range, then the earlier estimators), and that median.
fn agreeing_group<'a>(cal: &[&'a MethodEstimate]) -> (f64, Vec<&'a MethodEstimate>) {
    let n = cal.len().min(16);
    let mut best: Option<(usize, f64, f64, u32)> = None;
    for mask in 1u32..(1u32 << n) {
        let vals: Vec<f64> = (0..n)
            .filter(|i| mask & (1 << i) != 0)
            .map(|i| cal[i].corrected_d)
            .collect();
        let med = median(vals.clone());
        if !(med > 0.0) || vals.iter().any(|v| (v / med - 1.0).abs() > AGREE) {
            continue;
        }
        let (lo, hi) = vals
            .iter()
            .fold((f64::INFINITY, 0.0f64), |(a, b), &v| (a.min(v), b.max(v)));
        let spread = (hi - lo) / med;
        let size = vals.len();
        if best.is_none_or(|(bs, bsp, _, _)| size > bs || (size == bs && spread < bsp)) {
            best = Some((size, spread, med, mask));
        }
    }
    match best {
        Some((_, _, med, mask)) => (
            med,
            (0..n)
                .filter(|i| mask & (1 << i) != 0)
                .map(|i| cal[i])
                .collect(),
        ),
        None => (
            median(cal.iter().map(|e| e.corrected_d).collect()),
            cal.to_vec(),
        ),
    }
}

/// The local-PCA count at the finest scale when it reaches D − ½ (see rule 5).
fn noise_band(estimates: &[MethodEstimate], ambient: usize) -> Option<f64> {
    let full = ambient as f64 - 0.5;
    if ambient < 2 {
        return None;
    }
    // The finest neighbourhood only: at coarse ones curvature alone can fill the coordinates.
    estimates
        .iter()
        .filter(|e| e.method == Method::LocalPca)
        .filter_map(|e| {
            e.curve
                .iter()
                .filter(|p| p.scale.is_finite() && p.d.is_finite())
                .min_by(|a, b| a.scale.total_cmp(&b.scale))
                .map(|p| p.d)
        })
        .find(|&v| v >= full)
}

/// The consensus of `curves` and `estimates` (see the module notes); None when no calibrated
/// estimate ran.
pub fn consensus(
    curves: &[ScaleCurve],
    estimates: &[MethodEstimate],
    ambient: usize,
    noise_hint: Option<f64>,
) -> Option<Consensus> {
    let cal: Vec<&MethodEstimate> = estimates
        .iter()
        .filter(|e| e.method.calibrated() && e.corrected_d.is_finite())
        .collect();
    if cal.is_empty() {
        return None;
    }
    // 1. Shared axis.
    let scales: Vec<f64> = curves
        .iter()
        .flat_map(|c| c.points.iter().map(|p| p.scale))
        .filter(|s| *s > 0.0 && s.is_finite())
        .collect();
    let (lo, hi) = scales
        .iter()
        .fold((f64::INFINITY, 0.0f64), |(a, b), &s| (a.min(s), b.max(s)));
    let mut axis = Vec::new();
    let mut agree = Vec::new();
    let mut single = Vec::new();
    if lo < hi {
        for g in 0..GRID {
            let s = lo * (hi / lo).powf(g as f64 / (GRID - 1) as f64);
            let vals: Vec<f64> = curves.iter().filter_map(|c| c.at(s)).collect();
            let m = if vals.len() >= 2 {
                median(vals.clone())
            } else {
                f64::NAN
            };
            agree.push(m > 0.0 && vals.iter().all(|v| (v / m - 1.0).abs() <= AGREE));
            single.push(vals.first().copied().unwrap_or(f64::NAN));
            axis.push(ScalePoint { scale: s, d: m });
        }
    }
    // 2. Plateau: longest flat run of agreeing scales (coarser wins ties).
    let mut best: Option<(usize, usize)> = None;
    for i in 0..axis.len() {
        let mut j = i;
        while j < axis.len() && agree[j] {
            let run: Vec<f64> = axis[i..=j].iter().map(|p| p.d).collect();
            let med = median(run.clone());
            if run.iter().any(|v| (v / med - 1.0).abs() > FLAT) {
                break;
            }
            j += 1;
        }
        if j > i && best.is_none_or(|(a, b)| j - i >= b - a) {
            best = Some((i, j));
        }
    }
    let plateau_d = best.map(|(i, j)| median(axis[i..j].iter().map(|p| p.d).collect()));
    let scale_range = best.map(|(i, j)| [axis[i].scale, axis[j - 1].scale]);
    // 3. Members and d: the largest agreeing group.
    let (med, members) = agreeing_group(&cal);
    let d = members
        .iter()
        .find(|e| e.method == Method::Twonn)
        .map_or(med, |e| e.corrected_d.min(med));
    let used = members.clone();
    let d_min = used
        .iter()
        .map(|e| e.corrected_d)
        .fold(f64::INFINITY, f64::min);
    let d_max = used.iter().map(|e| e.corrected_d).fold(0.0, f64::max);
    let lo_med = median(used.iter().map(|e| e.corrected_ci95[0]).collect());
    let hi_med = median(used.iter().map(|e| e.corrected_ci95[1]).collect());
    let ci95 = if lo_med.is_finite() && hi_med.is_finite() {
        [lo_med.min(d_min).min(d), hi_med.max(d_max).max(d)]
    } else if used.len() >= 2 {
        [d_min.min(d), d_max.max(d)]
    } else {
        [f64::NAN, f64::NAN]
    };
    // 4. Noise scale.
    let below = best.map_or(axis.len(), |(i, _)| i);
    let plateau_lo = scale_range.map_or(f64::INFINITY, |r| r[0]);
    let noise_scale = (0..below)
        .rev()
        .find(|&g| {
            let v = if axis[g].d.is_finite() {
                axis[g].d
            } else {
                single[g]
            };
            v > NOISE_FACTOR * d
        })
        .map(|g| axis[g].scale)
        .or(noise_hint.filter(|&s| s < plateau_lo));
    // 5. Status.
    let names = |v: &[&MethodEstimate]| -> String {
        v.iter()
            .map(|e| format!("{} {:.2}", e.method.name(), e.corrected_d))
            .collect::<Vec<_>>()
            .join(", ")
    };
    let plateau_len = best.map_or(0, |(i, j)| j - i);
    let raw_med = median(used.iter().map(|e| e.d).collect());
    let reason = if plateau_len < MIN_PLATEAU {
        Some(format!(
            "the curves agree over no plateau of at least {MIN_PLATEAU} scales"
        ))
    } else if cal.len() < 2 {
        Some("only one calibrated estimator ran".to_string())
    } else if members.len() < cal.len() {
        Some(format!(
            "the corrected estimates disagree ({}); most agree on {d:.2}",
            names(&cal)
        ))
    } else if plateau_d.is_some_and(|pd| (pd / d - 1.0).abs() > AGREE) {
        Some(format!(
            "the curves' plateau at {:.2} differs from the estimates' {d:.2}",
            plateau_d.unwrap_or(f64::NAN)
        ))
    } else if let Some(full) = noise_band(estimates, ambient) {
        Some(format!(
            "local PCA counts {full:.1} of {ambient} coordinates at its finest scale: noise \
             or a space-filling set, the data cannot tell which"
        ))
    } else if cal.iter().any(|e| e.correction.at_cap) {
        Some(format!(
            "an estimate reached the ambient dimension {ambient}; d may be higher"
        ))
    } else if (raw_med / d - 1.0).abs() > AGREE {
        Some(format!(
            "the finite-sample correction moves the estimate from {raw_med:.2} to {d:.2}, \
             more than ±{:.0} %; it rests on the reference cubes",
            AGREE * 100.0
        ))
    } else if ci95[0].is_finite() && (ci95[1] - ci95[0]) / 2.0 > AGREE * d {
        Some(format!(
            "the interval [{:.2}, {:.2}] is wider than ±{:.0} % of d",
            ci95[0],
            ci95[1],
            AGREE * 100.0
        ))
    } else {
        None
    };
    let (status, reason) = match reason {
        Some(r) => (Status::Unresolved, r),
        None => (
            Status::Resolved,
            format!("{} agree within ±{:.0} %", names(&cal), AGREE * 100.0),
        ),
    };
    Some(Consensus {
        d,
        ci95,
        scale_range,
        plateau_d,
        noise_scale,
        status,
        reason,
        members: members
            .iter()
            .map(|e| e.method.name().to_string())
            .collect(),
        axis,
        local_spread: None,
    })
}

/// Rule 6: record the spread `data_s` of the data's pointwise local dimensions and `cube_s` of a
/// uniform cube's at d, and refuse `resolved` when their ratio exceeds [`SPREAD_RATIO_MAX`]. d
/// and the other fields stay.
pub fn uniformity_guard(c: &mut Consensus, data_s: f64, cube_s: f64) {
    c.local_spread = Some([data_s, cube_s]);
    let ratio = data_s / cube_s;
    if c.status == Status::Resolved && cube_s > 0.0 && ratio > SPREAD_RATIO_MAX {
        c.status = Status::Unresolved;
        c.reason = format!(
            "the local dimension varies from point to point {ratio:.2} times as much as in a \
             uniform sample of d = {:.0} (interquartile range of its log {data_s:.3} against \
             {cube_s:.3}): a density that changes strongly within neighbourhoods, or parts of \
             different dimension; every estimator is biased the same way (low where the \
             density piles up), so their agreement does not show the error",
            c.d.round().max(1.0)
        );
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::dimension::calibrate::Correction;

    fn est(method: Method, d: f64, curve: Vec<(f64, f64)>) -> MethodEstimate {
        MethodEstimate {
            method,
            d,
            ci95: [d * 0.95, d * 1.05],
            curve: curve
                .into_iter()
                .map(|(scale, d)| ScalePoint { scale, d })
                .collect(),
            corrected_d: d,
            corrected_ci95: [d * 0.95, d * 1.05],
            correction: Correction {
                applied: true,
                at_cap: false,
            },
        }
    }

    #[test]
    fn flat_curves_resolve_and_a_rise_is_noise() {
        // Invented curves: d = 2 from scale 0.1 to 10, rising to 6 below 0.05.
        let c = |m| {
            est(
                m,
                2.0,
                vec![
                    (0.01, 6.0),
                    (0.05, 5.0),
                    (0.1, 2.05),
                    (1.0, 1.95),
                    (10.0, 2.0),
                ],
            )
        };
        let ests = vec![c(Method::Twonn), c(Method::Mle), c(Method::Correlation)];
        let curves: Vec<ScaleCurve> = ests.iter().map(ScaleCurve::of_estimate).collect();
        let k = consensus(&curves, &ests, 5, None).unwrap();
        assert_eq!(k.status, Status::Resolved, "{}", k.reason);
        assert!((k.d - 2.0).abs() < 1e-9);
        let [lo, hi] = k.scale_range.unwrap();
        assert!(lo > 0.05 && lo < 0.2 && hi == 10.0, "{lo} {hi}");
        let n = k.noise_scale.unwrap();
        assert!(n < lo && n >= 0.01, "{n}");
        assert!(
            k.sentence().starts_with("d ≈ 2.0 over scales"),
            "{}",
            k.sentence()
        );
        // One estimator at 4: unresolved, d stays with the agreeing pair.
        let mut ests2 = ests.clone();
        ests2[2] = est(Method::Correlation, 4.0, vec![(0.01, 4.0), (10.0, 4.0)]);
        let curves2: Vec<ScaleCurve> = ests2.iter().map(ScaleCurve::of_estimate).collect();
        let k2 = consensus(&curves2, &ests2, 5, None).unwrap();
        assert_eq!(k2.status, Status::Unresolved);
        assert!(!k2.reason.is_empty());
        assert!((k2.d - 2.0).abs() < 1e-9, "{}", k2.d);
        // Invented: a local-PCA curve that counts all 3 coordinates at its finest scale while the
        // others read 2 (a noise band): the answer stays 2 but is not resolved.
        let mut ests3 = ests.clone();
        ests3.push(est(Method::LocalPca, 2.0, vec![(0.01, 3.0), (10.0, 2.0)]));
        let curves3: Vec<ScaleCurve> = ests3.iter().map(ScaleCurve::of_estimate).collect();
        let k3 = consensus(&curves3, &ests3, 3, None).unwrap();
        assert_eq!(k3.status, Status::Unresolved, "{}", k3.reason);
        assert_eq!(noise_band(&ests3, 3), Some(3.0));
        assert_eq!(noise_band(&ests3, 4), None);
        assert!((k3.d - 2.0).abs() < 1e-9);
    }

    #[test]
    fn twonn_member_below_the_median_gives_d() {
        // Invented values: the rule of the module notes (rule 3), both directions.
        let flat = |m, d: f64| est(m, d, vec![(0.1, d), (1.0, d), (10.0, d)]);
        let ests = vec![
            flat(Method::Twonn, 9.0),
            flat(Method::Mle, 10.0),
            flat(Method::Correlation, 10.4),
        ];
        let curves: Vec<ScaleCurve> = ests.iter().map(ScaleCurve::of_estimate).collect();
        let k = consensus(&curves, &ests, 12, None).unwrap();
        assert!((k.d - 9.0).abs() < 1e-9, "{}", k.d);
        assert!(k.ci95[0] <= 9.0 && k.ci95[1] >= 10.4, "{:?}", k.ci95);
        // TwoNN above the median (noise lifts the finest scale most): the median.
        let mut up = ests.clone();
        up[0] = flat(Method::Twonn, 11.0);
        let curves: Vec<ScaleCurve> = up.iter().map(ScaleCurve::of_estimate).collect();
        let k = consensus(&curves, &up, 12, None).unwrap();
        assert!((k.d - 10.4).abs() < 1e-9, "{}", k.d);
        // TwoNN outside the agreeing group: the group's median.
        let mut out = ests.clone();
        out[0] = flat(Method::Twonn, 5.0);
        let curves: Vec<ScaleCurve> = out.iter().map(ScaleCurve::of_estimate).collect();
        let k = consensus(&curves, &out, 12, None).unwrap();
        assert!((k.d - 10.2).abs() < 1e-9, "{}", k.d);
    }
}
