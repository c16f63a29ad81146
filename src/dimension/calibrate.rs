//! Finite-sample correction of the dimension estimators against reference samples of known
//! dimension.
//!
//! Every neighbour-based estimator reads low when the dimension is high compared with the number
//! of points: neighbourhoods of k points in a d-dimensional set reach its boundary and do not
//! fill their ball (Eckmann & Ruelle 1992 give the bound for the correlation dimension,
//! d < 2·log₁₀ N). The correction follows the calibration idea of Camastra & Vinciarelli (2002),
//! who map a correlation-dimension estimate through its values on uniform hypercubes, and of the
//! MiND and DANCo estimators (Rozza et al. 2012; Ceruti et al. 2014), which compare statistics of
//! the data with those of reference samples of known dimension drawn at the same N and k.
//!
//! Rule (ours, from those sources): for an estimator with the suite's settings and m points, its
//! reference curve g(δ) is the raw estimate on m points drawn uniformly from the unit cube
//! [0, 1]^δ (seeded by m and δ only, so the same data always get the same correction; TwoNN and
//! the MLE read the neighbour distances of the first [`REFERENCE_ROWS`] of the m points, found
//! among all m, and the correlation sum counts the pairs of at most ⌈[`REFERENCE_PAIRS`] /
//! (m − 1)⌉ reference points, which keeps the density and the boundary of an m-point sample
//! at a fraction of the cost when m is large; below 5000 points nothing is cut), for δ on
//! the ladder 1, 2, …, 12, then ×1.12 (rounded up), ending at the ambient dimension D (a set in
//! D coordinates cannot have a larger dimension). g is made non-decreasing (running maximum). A
//! raw value r maps to the δ where g(δ) = r by linear interpolation between ladder steps; below
//! g(1) to r / g(1); above g(D) to D, marked `at_cap`. The ladder stops early once every raw
//! value and interval end lies below g(δ). Reference estimates are cached in memory for the life
//! of the process (keyed by m, δ and the estimator settings), so a second call costs nothing.
//! When the environment variable `BEATFOLD_CACHE_DIR` names a directory, they are also kept on
//! disk there, one JSON file per (m, settings) whose name carries the reference seed, the cache
//! format version, m and a hash of the settings (`dimension-ref-<seed>-v<version>-m<m>-<hash>.json`,
//! written via a temporary file and a rename), so later processes skip the reference cubes. The
//! values are deterministic, so a cached value equals a recomputed one; [`CACHE_VERSION`] changes
//! whenever an estimator's code does.
//!
//! The reference is a cube because the benchmark sets and real point clouds are bounded; a ball
//! (the DANCo choice) has less boundary and would correct less.

use super::suite::{raw_estimate, Method, MethodEstimate, SuiteParams, Tables};
use crate::error::Result;
use crate::points::Points;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde::{Deserialize, Serialize};
use std::collections::HashMap;
use std::sync::{Mutex, OnceLock};

/// How an estimate was corrected.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub struct Correction {
    /// The reference calibration was applied.
    pub applied: bool,
    /// The raw estimate exceeded the reference value at the ambient dimension, so the corrected
    /// value is the ambient dimension (a lower bound, not an estimate).
    pub at_cap: bool,
}

type CacheKey = (Method, usize, usize, String);

/// Version of the on-disk reference values; bumped whenever an estimator's raw value changes.
pub const CACHE_VERSION: u32 = 3;
/// Points of a reference sample whose neighbour distances enter TwoNN and the MLE (their
/// neighbours are searched among all m points, so the sample keeps the data's density).
pub const REFERENCE_ROWS: usize = 5000;
/// Pairs the correlation sum of a reference sample counts at least: its reference points are
/// cut from `correlation_refs` to ⌈this / (m − 1)⌉ when that is fewer (every pair with a
/// reference point stays an unbiased draw of the m-point sample's pairs).
pub const REFERENCE_PAIRS: usize = 5_000_000;

/// The settings the reference samples run with: the suite's, with the correlation sum's
/// reference points cut as [`REFERENCE_PAIRS`] says.
fn reference_params(p: &SuiteParams, m: usize) -> SuiteParams {
    SuiteParams {
        correlation_refs: p
            .correlation_refs
            .min(REFERENCE_PAIRS.div_ceil(m.saturating_sub(1).max(1)))
            .max(2),
        ..p.clone()
    }
}
/// Base of the reference cubes' seeds (each cube's seed also mixes in m and δ).
const REFERENCE_SEED: u64 = 0x00C0_FFEE;

fn cache() -> &'static Mutex<HashMap<CacheKey, Option<f64>>> {
    static CACHE: OnceLock<Mutex<HashMap<CacheKey, Option<f64>>>> = OnceLock::new();
    CACHE.get_or_init(|| Mutex::new(HashMap::new()))
}

/// The settings an estimator's raw value depends on (besides m and δ), as a cache key.
fn settings_key(p: &SuiteParams) -> String {
    format!(
        "{}|{}|{}|{:?}|{}|{}|{}|{:?}|{}",
        p.twonn_discard,
        p.mle_k1,
        p.mle_k2,
        p.mle_curve_ks,
        p.correlation_refs,
        p.correlation_radii,
        p.local_pca_centres,
        p.local_pca_ks,
        p.local_pca_ratio
    )
}

/// Ladder of reference dimensions up to `ambient` (see the module notes).
pub(crate) fn ladder(ambient: usize) -> Vec<usize> {
    let mut out = Vec::new();
    let mut d = 1usize;
    while d < ambient {
        out.push(d);
        d = if d < 12 {
            d + 1
        } else {
            ((d as f64) * 1.12).ceil() as usize
        };
    }
    out.push(ambient.max(1));
    out
}

/// m points uniform in [0, 1]^δ, seeded by m and δ.
pub(crate) fn reference_cube(m: usize, delta: usize) -> Points {
    let seed = REFERENCE_SEED ^ ((m as u64) << 20) ^ (delta as u64);
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let data = (0..m * delta).map(|_| rng.gen::<f64>()).collect();
    // Shape is consistent by construction.
    Points::new(m, delta, data).expect("reference cube shape")
}

/// The on-disk cache file for m points and settings `key`, when `BEATFOLD_CACHE_DIR` is set.
fn disk_file(m: usize, key: &str) -> Option<std::path::PathBuf> {
    use sha2::{Digest, Sha256};
    let dir = std::env::var_os("BEATFOLD_CACHE_DIR").filter(|d| !d.is_empty())?;
    let hash = Sha256::digest(key.as_bytes());
    let hex: String = hash[..8].iter().map(|b| format!("{b:02x}")).collect();
    Some(std::path::PathBuf::from(dir).join(format!(
        "dimension-ref-{REFERENCE_SEED:x}-v{CACHE_VERSION}-m{m}-{hex}.json"
    )))
}

/// Load the disk cache for (m, key) into the memory cache (once per process and file).
fn load_disk(m: usize, key: &str) {
    static LOADED: OnceLock<Mutex<std::collections::HashSet<(usize, String)>>> = OnceLock::new();
    let loaded = LOADED.get_or_init(|| Mutex::new(Default::default()));
    if !loaded
        .lock()
        .unwrap_or_else(|e| e.into_inner())
        .insert((m, key.to_string()))
    {
        return;
    }
    let Some(path) = disk_file(m, key) else {
        return;
    };
    let Ok(text) = std::fs::read_to_string(&path) else {
        return;
    };
    // A damaged or foreign file is ignored (the values are recomputed and the file rewritten).
    let Ok(entries) = serde_json::from_str::<Vec<(Method, usize, Option<f64>)>>(&text) else {
        return;
    };
    let mut c = cache().lock().unwrap_or_else(|e| e.into_inner());
    for (x, delta, v) in entries {
        c.entry((x, m, delta, key.to_string())).or_insert(v);
    }
}

/// Write every cached value for (m, key) to the disk cache (temporary file, then rename);
/// failures are ignored: the cache only saves time.
fn save_disk(m: usize, key: &str) {
    let Some(path) = disk_file(m, key) else {
        return;
    };
    let mut entries: Vec<(Method, usize, Option<f64>)> = {
        let c = cache().lock().unwrap_or_else(|e| e.into_inner());
        c.iter()
            .filter(|((_, mm, _, k), _)| *mm == m && k == key)
            .map(|((x, _, delta, _), v)| (*x, *delta, *v))
            .collect()
    };
    entries.sort_by(|a, b| a.1.cmp(&b.1).then(a.0.name().cmp(b.0.name())));
    let Ok(text) = serde_json::to_string(&entries) else {
        return;
    };
    if let Some(dir) = path.parent() {
        let _ = std::fs::create_dir_all(dir);
    }
    let _ = crate::io::write_atomic(&path, text.as_bytes());
}

/// Raw estimates of `methods` on the reference cube of dimension δ with m points (cached).
fn reference_values(
    methods: &[Method],
    m: usize,
    delta: usize,
    p: &SuiteParams,
) -> Result<Vec<Option<f64>>> {
    let key = settings_key(p);
    load_disk(m, &key);
    let missing: Vec<Method> = {
        let c = cache().lock().unwrap_or_else(|e| e.into_inner());
        methods
            .iter()
            .copied()
            .filter(|&x| !c.contains_key(&(x, m, delta, key.clone())))
            .collect()
    };
    if !missing.is_empty() {
        let pts = reference_cube(m, delta);
        let table = Tables::build_rows(&missing, p, &pts, REFERENCE_ROWS)?;
        let q = reference_params(p, m);
        let mut found = Vec::new();
        for &x in &missing {
            let v = raw_estimate(x, &pts, table.as_ref(), &q)
                .ok()
                .filter(|v| v.is_finite());
            found.push((x, v));
        }
        {
            let mut c = cache().lock().unwrap_or_else(|e| e.into_inner());
            for (x, v) in found {
                c.insert((x, m, delta, key.clone()), v);
            }
        }
        save_disk(m, &key);
    }
    let c = cache().lock().unwrap_or_else(|e| e.into_inner());
    Ok(methods
        .iter()
        .map(|&x| c.get(&(x, m, delta, key.clone())).copied().flatten())
        .collect())
}

/// Map `r` through the reference curve (δ ascending, g non-decreasing). Returns (value, at_cap).
pub(crate) fn invert(deltas: &[f64], g: &[f64], r: f64) -> (f64, bool) {
    if !r.is_finite() || g.is_empty() {
        return (r, false);
    }
    if r <= g[0] {
        return (if g[0] > 0.0 { r / g[0] * deltas[0] } else { r }, false);
    }
    for i in 1..g.len() {
        if r <= g[i] {
            let t = if g[i] > g[i - 1] {
                (r - g[i - 1]) / (g[i] - g[i - 1])
            } else {
                0.0
            };
            return (deltas[i - 1] + t * (deltas[i] - deltas[i - 1]), false);
        }
    }
    (deltas[deltas.len() - 1], true)
}

/// Correct the calibrated estimates in place (`m` points used, `ambient` coordinates).
pub(crate) fn correct_estimates(
    estimates: &mut [MethodEstimate],
    m: usize,
    ambient: usize,
    p: &SuiteParams,
) -> Result<()> {
    let methods: Vec<Method> = estimates
        .iter()
        .map(|e| e.method)
        .filter(|x| x.calibrated())
        .collect();
    if methods.is_empty() || m < 20 {
        return Ok(());
    }
    // Largest raw value each method must reach on the ladder.
    let target: Vec<f64> = methods
        .iter()
        .map(|&x| {
            let e = estimates.iter().find(|e| e.method == x);
            e.map_or(0.0, |e| {
                [e.d, e.ci95[0], e.ci95[1]]
                    .into_iter()
                    .filter(|v| v.is_finite())
                    .fold(0.0, f64::max)
            })
        })
        .collect();
    let mut deltas = Vec::new();
    let mut curves: Vec<Vec<f64>> = vec![Vec::new(); methods.len()];
    for delta in ladder(ambient) {
        let vals = reference_values(&methods, m, delta, p)?;
        deltas.push(delta as f64);
        for (c, v) in curves.iter_mut().zip(vals) {
            let last = c.last().copied().unwrap_or(0.0);
            c.push(v.unwrap_or(last).max(last));
        }
        if curves.iter().zip(&target).all(|(c, &t)| c[c.len() - 1] > t) {
            break;
        }
    }
    for e in estimates.iter_mut() {
        let Some(i) = methods.iter().position(|&x| x == e.method) else {
            continue;
        };
        let g = &curves[i];
        let (d, at_cap) = invert(&deltas, g, e.d);
        e.corrected_d = d;
        e.corrected_ci95 = [
            invert(&deltas, g, e.ci95[0]).0,
            invert(&deltas, g, e.ci95[1]).0,
        ];
        e.correction = Correction {
            applied: true,
            at_cap,
        };
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reference_cuts_only_large_samples() {
        let p = SuiteParams::default();
        for m in [100, 2500, 5000] {
            assert_eq!(reference_params(&p, m).correlation_refs, p.correlation_refs);
        }
        assert_eq!(reference_params(&p, 20_000).correlation_refs, 251);
        assert!(reference_params(&p, 20_000).correlation_refs * 19_999 >= REFERENCE_PAIRS);
    }

    #[test]
    fn ladder_and_inversion() {
        assert_eq!(ladder(3), vec![1, 2, 3]);
        let l = ladder(70);
        assert_eq!(l[..12], (1..=12).collect::<Vec<_>>()[..]);
        assert_eq!(*l.last().unwrap(), 70);
        assert!(l.windows(2).all(|w| w[1] > w[0]));
        let deltas = [1.0, 2.0, 3.0];
        let g = [0.9, 1.8, 2.4];
        assert!((invert(&deltas, &g, 0.45).0 - 0.5).abs() < 1e-12);
        assert!((invert(&deltas, &g, 2.1).0 - 2.5).abs() < 1e-12);
        assert_eq!(invert(&deltas, &g, 2.5), (3.0, true));
    }
}
