//! **Successive RR differences of short records**: three measures of the ΔRR scatter that stay
//! meaningful on 10–60 s (some 10–80 intervals), used by the irregular-rhythm score
//! ([`super::verdict::IrregularScore`]).
//!
//! In: RR intervals in seconds (finite, > 0). Out: [`DeltaRr`], NaN where too few intervals.
//!
//! Method. Sinus rhythm, even with isolated ectopic beats, keeps most successive differences
//! near zero; an irregularly irregular rhythm spreads them. On the plot of ΔRR(i) against
//! ΔRR(i − 1) (the ΔRR scatter of Sarkar, Ritscher & Mehra 2008, IEEE TBME 55:1219, whose
//! "AF evidence" counts occupied histogram bins and the points near the origin; their
//! segmentation of the plane and their fixed 2-minute windows are not used here):
//! - `median_rel`: the median |ΔRR| over the median RR (a robust relative successive
//!   difference, insensitive to a few missed or extra beats);
//! - `occupancy`: the number of distinct square bins of [`BIN_S`] (bins centred on the origin)
//!   that the points occupy, over the number of points (a short record cannot fill many bins,
//!   so the count is made relative);
//! - `origin_share`: the share of the points with both coordinates within ±[`ORIGIN_HALF_S`].
//!
//! Bin width `from memory` of Sarkar et al. (40 ms); the origin half-width is half a bin.

use serde::{Deserialize, Serialize};

/// Bin width of the ΔRR scatter, seconds (Sarkar et al. 2008, `from memory`).
pub const BIN_S: f64 = 0.04;
/// Half-width of the origin square of the ΔRR scatter, seconds (half a bin).
pub const ORIGIN_HALF_S: f64 = 0.02;
/// Fewest points (pairs of successive differences, i.e. intervals − 2) for the scatter measures.
pub const MIN_POINTS: usize = 3;

/// ΔRR measures of a record (see the module documentation).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct DeltaRr {
    /// Median |ΔRR| over the median RR.
    pub median_rel: f64,
    /// Distinct occupied bins of the ΔRR scatter over its number of points.
    pub occupancy: f64,
    /// Share of the scatter's points near the origin.
    pub origin_share: f64,
}

impl DeltaRr {
    /// Every measure NaN.
    pub const NONE: DeltaRr = DeltaRr {
        median_rel: f64::NAN,
        occupancy: f64::NAN,
        origin_share: f64::NAN,
    };
}

impl Default for DeltaRr {
    fn default() -> Self {
        DeltaRr::NONE
    }
}

/// The ΔRR measures of `rr` (seconds). Never fails: a non-finite or non-positive interval, or
/// fewer than `MIN_POINTS + 2` intervals, gives NaN measures (fewer than 3 intervals: all NaN).
pub fn delta_rr(rr: &[f64]) -> DeltaRr {
    if rr.len() < 3 || rr.iter().any(|r| !(r.is_finite() && *r > 0.0)) {
        return DeltaRr::NONE;
    }
    let d: Vec<f64> = rr.windows(2).map(|w| w[1] - w[0]).collect();
    let median_rel =
        crate::stats::median(d.iter().map(|v| v.abs())) / crate::stats::median(rr.iter().copied());
    let points: Vec<(f64, f64)> = d.windows(2).map(|w| (w[1], w[0])).collect();
    if points.len() < MIN_POINTS {
        return DeltaRr {
            median_rel,
            ..DeltaRr::NONE
        };
    }
    let mut bins: Vec<(i64, i64)> = points
        .iter()
        .map(|(a, b)| ((a / BIN_S).round() as i64, (b / BIN_S).round() as i64))
        .collect();
    bins.sort_unstable();
    bins.dedup();
    let n = points.len() as f64;
    let near = points
        .iter()
        .filter(|(a, b)| a.abs() <= ORIGIN_HALF_S && b.abs() <= ORIGIN_HALF_S)
        .count();
    DeltaRr {
        median_rel,
        occupancy: bins.len() as f64 / n,
        origin_share: near as f64 / n,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};

    #[test]
    fn exact_values_on_simple_series() {
        // A constant cycle: every difference 0, one bin, every point at the origin.
        let c = delta_rr(&[0.8; 12]);
        assert_eq!(c.median_rel, 0.0);
        assert_eq!(c.occupancy, 1.0 / 10.0);
        assert_eq!(c.origin_share, 1.0);
        // Alternating 0.6 / 1.0 s (bigeminy-like): |ΔRR| 0.4 s, median RR 0.8 s → 0.5; the
        // points alternate between (0.4, −0.4) and (−0.4, 0.4): two bins, none at the origin.
        let b: Vec<f64> = (0..12)
            .map(|k| if k % 2 == 0 { 0.6 } else { 1.0 })
            .collect();
        let v = delta_rr(&b);
        assert!((v.median_rel - 0.5).abs() < 1e-12, "{v:?}");
        assert_eq!(v.occupancy, 2.0 / 10.0);
        assert_eq!(v.origin_share, 0.0);
    }

    #[test]
    fn irregular_rr_spreads_the_scatter() {
        // Uniform RR over 0.4–1.1 s (irregularly irregular, common practice) against sinus
        // rhythm 0.8 s ± 1 % (every difference within 16 ms, so inside the origin square): the irregular series occupies more bins and has fewer points at
        // the origin, over several seeds.
        for seed in 0..5u64 {
            let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
            let af: Vec<f64> = (0..40).map(|_| rng.gen_range(0.4..1.1)).collect();
            let sinus: Vec<f64> = (0..40)
                .map(|_| 0.8 * (1.0 + rng.gen_range(-0.01..0.01)))
                .collect();
            let (a, s) = (delta_rr(&af), delta_rr(&sinus));
            assert!(a.occupancy > 0.6 && s.occupancy < 0.2, "{a:?} {s:?}");
            assert!(a.origin_share < 0.1 && s.origin_share == 1.0, "{a:?} {s:?}");
            assert!(a.median_rel > 5.0 * s.median_rel, "{a:?} {s:?}");
        }
    }

    #[test]
    fn bad_input_gives_nan() {
        assert!(delta_rr(&[]).median_rel.is_nan());
        assert!(delta_rr(&[0.8, 0.8]).median_rel.is_nan());
        assert!(delta_rr(&[0.8, f64::NAN, 0.8, 0.8, 0.8]).occupancy.is_nan());
        assert!(delta_rr(&[0.8, 0.0, 0.8, 0.8, 0.8]).occupancy.is_nan());
        // Four intervals: 2 points, too few for the scatter; the median difference is defined.
        let v = delta_rr(&[0.8, 0.9, 0.8, 0.9]);
        assert!(v.median_rel.is_finite() && v.occupancy.is_nan());
    }
}
