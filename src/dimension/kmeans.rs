//! k-means clustering: k-means++ seeding and Lloyd iterations, best of several restarts.
//!
//! In: [`Points`], the number of centres k, restarts, an iteration cap and a seed. Out: a
//! [`KmeansFit`] (centres, inertia, labels).
//! Methods: k-means++ seeding (Arthur & Vassilvitskii 2007): the first centre uniformly at
//! random, each next one drawn with probability proportional to the squared distance to the
//! nearest centre chosen so far; then Lloyd's iterations (Lloyd 1982): assign every point to its
//! nearest centre (in parallel), move each centre to the mean of its points, until no
//! assignment changes, the summed squared centre movement falls below 10⁻⁴ × the mean
//! per-coordinate variance (scikit-learn's `KMeans` default rule), or `max_iter` is reached.
//! The assignments are exact; Hamerly's (2010) distance bounds only skip distance computations
//! that cannot change them. An emptied cluster is re-seeded at the point farthest from its
//! centre. Sums are accumulated in fixed chunks and added in order, so results do not depend on
//! the thread count.

use crate::error::{Error, Result};
use crate::points::Points;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

/// Points per chunk for the parallel centre sums (fixed, so sums are reproducible).
const CHUNK: usize = 2048;
/// Convergence tolerance: iterations stop when the summed squared centre movement falls below
/// this times the mean per-coordinate variance of the points (the rule and default of
/// scikit-learn's `KMeans(tol=1e-4)`), or when no assignment changes.
const SHIFT_TOL: f64 = 1e-4;

/// Mean over coordinates of the variance of the points (population variance).
fn mean_feature_variance(points: &Points) -> f64 {
    let (n, dim) = (points.n.max(1) as f64, points.dim.max(1));
    let mut mean = vec![0.0; dim];
    for row in points.rows() {
        mean.iter_mut().zip(row).for_each(|(m, v)| *m += v / n);
    }
    let mut var = 0.0;
    for row in points.rows() {
        var += Points::dist2(row, &mean);
    }
    var / n / dim as f64
}

/// A k-means solution.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct KmeansFit {
    /// The k centres, one per row.
    pub centres: Points,
    /// Sum over points of the squared distance to the nearest centre.
    pub inertia: f64,
    /// Index of the nearest centre of every input point.
    pub labels: Vec<usize>,
    /// Lloyd iterations run in the chosen restart.
    pub iterations: usize,
}

/// Index of the nearest centre and the squared distance to it.
fn nearest(x: &[f64], centres: &Points) -> (usize, f64) {
    let mut best = (0, f64::INFINITY);
    for (c, row) in centres.rows().enumerate() {
        let d = Points::dist2(x, row);
        if d < best.1 {
            best = (c, d);
        }
    }
    best
}

/// Mean squared distance from each point to its nearest centre (the distortion D).
///
/// Errors: no points, no centres, or different dimensions.
pub fn distortion(points: &Points, centres: &Points) -> Result<f64> {
    if points.n == 0 || centres.n == 0 || points.dim != centres.dim {
        return Err(Error::Analysis(format!(
            "distortion needs points and centres of one dimension, got {} × {} and {} × {}",
            points.n, points.dim, centres.n, centres.dim
        )));
    }
    let parts: Vec<f64> = points
        .data
        .par_chunks(CHUNK * points.dim)
        .map(|chunk| {
            chunk
                .chunks_exact(points.dim)
                .map(|x| nearest(x, centres).1)
                .sum()
        })
        .collect();
    Ok(parts.iter().sum::<f64>() / points.n as f64)
}

/// Nearest centre index and squared distance of each point, in point order (the distances are
/// the summands of [`distortion`]). Callers pass points and centres of one dimension.
pub(crate) fn point_cells(points: &Points, centres: &Points) -> Vec<(usize, f64)> {
    let c_norms = row_norms(centres);
    let idx: Vec<usize> = (0..points.n).collect();
    nearest_two_many(points, &idx, centres, &c_norms)
        .into_iter()
        .map(|(c, d, _)| (c, d * d))
        .collect()
}

/// k-means++ seeding.
fn seed_centres(points: &Points, k: usize, rng: &mut ChaCha8Rng) -> Points {
    let dim = points.dim;
    let mut data = Vec::with_capacity(k * dim);
    let first = rng.gen_range(0..points.n);
    data.extend_from_slice(points.row(first));
    let mut d2: Vec<f64> = points
        .data
        .par_chunks_exact(dim)
        .map(|x| Points::dist2(x, points.row(first)))
        .collect();
    for _ in 1..k {
        let total: f64 = d2.iter().sum();
        let pick = if total > 0.0 {
            let target = rng.gen::<f64>() * total;
            let mut acc = 0.0;
            let mut pick = points.n - 1;
            for (i, &v) in d2.iter().enumerate() {
                acc += v;
                if acc > target && v > 0.0 {
                    pick = i;
                    break;
                }
            }
            pick
        } else {
            // Fewer distinct points than centres: duplicates are unavoidable.
            rng.gen_range(0..points.n)
        };
        let c = points.row(pick).to_vec();
        d2.par_iter_mut()
            .zip(points.data.par_chunks_exact(dim))
            .for_each(|(v, x)| *v = v.min(Points::dist2(x, &c)));
        data.extend_from_slice(&c);
    }
    Points { n: k, dim, data }
}

/// Rows per block of the matrix-product distance computation.
const BLOCK: usize = 256;

/// Squared norms of the rows of `p`.
fn row_norms(p: &Points) -> Vec<f64> {
    p.rows().map(|r| r.iter().map(|v| v * v).sum()).collect()
}

/// Nearest and second-nearest centre of each row of `xs` (row-major, `dim` columns):
/// (index, distance, lower bound on the second distance). Squared distances come from the
/// expansion |x|² + |c|² − 2x·c with x·c from one blocked matrix product (faer, sequential in
/// the block; blocks run in parallel), which is what makes large k affordable; the distance to
/// the chosen centre is then recomputed directly, and the second distance is lowered by a
/// rounding allowance so that it stays a valid lower bound.
fn block_nearest_two(
    xs: &[f64],
    dim: usize,
    centres: &Points,
    c_norms: &[f64],
) -> Vec<(usize, f64, f64)> {
    let b = xs.len() / dim.max(1);
    let k = centres.n;
    if b == 0 {
        return Vec::new();
    }
    let x = faer::MatRef::from_row_major_slice(xs, b, dim);
    let c = faer::MatRef::from_row_major_slice(&centres.data, k, dim);
    let mut prod = faer::Mat::<f64>::zeros(b, k);
    faer::linalg::matmul::matmul(
        prod.as_mut(),
        faer::Accum::Replace,
        x,
        c.transpose(),
        1.0,
        faer::Par::Seq,
    );
    crate::cpu::clear_upper_state_here();
    let c_max = c_norms.iter().fold(0.0f64, |a, &v| a.max(v));
    (0..b)
        .map(|i| {
            let row = &xs[i * dim..(i + 1) * dim];
            let xn: f64 = row.iter().map(|v| v * v).sum();
            let (mut best, mut d1, mut d2) = (0, f64::INFINITY, f64::INFINITY);
            for j in 0..k {
                let d = xn + c_norms[j] - 2.0 * prod[(i, j)];
                if d < d1 {
                    d2 = d1;
                    d1 = d;
                    best = j;
                } else if d < d2 {
                    d2 = d;
                }
            }
            let exact = Points::dist2(row, centres.row(best)).sqrt();
            let slack = 1e-10 * (xn + c_max);
            let second = if d2.is_finite() {
                (d2 - slack).max(0.0).sqrt()
            } else {
                f64::INFINITY
            };
            (best, exact, second)
        })
        .collect()
}

/// [`block_nearest_two`] over the rows `idx` of `points`, in parallel blocks, in `idx` order.
fn nearest_two_many(
    points: &Points,
    idx: &[usize],
    centres: &Points,
    c_norms: &[f64],
) -> Vec<(usize, f64, f64)> {
    let dim = points.dim;
    idx.par_chunks(BLOCK)
        .flat_map_iter(|blk| {
            let mut xs = Vec::with_capacity(blk.len() * dim);
            for &i in blk {
                xs.extend_from_slice(points.row(i));
            }
            block_nearest_two(&xs, dim, centres, c_norms)
        })
        .collect()
}

/// One k-means++ run followed by exact Lloyd iterations accelerated with Hamerly's (2010)
/// bounds: every point keeps an upper bound on the distance to its centre and a lower bound on
/// the distance to any other centre; a point whose upper bound is below both its lower bound and
/// half the distance from its centre to the nearest other centre cannot change centre, so its
/// distances are not computed. The assignments are those of plain Lloyd iterations.
fn lloyd(points: &Points, k: usize, max_iter: usize, rng: &mut ChaCha8Rng) -> KmeansFit {
    let dim = points.dim;
    let mut centres = seed_centres(points, k, rng);
    // Per point: (label, upper bound, lower bound).
    let all: Vec<usize> = (0..points.n).collect();
    let mut state = nearest_two_many(points, &all, &centres, &row_norms(&centres));
    let tol = SHIFT_TOL * mean_feature_variance(points);
    let mut iterations = 0;
    while iterations < max_iter {
        iterations += 1;
        // Centre sums per fixed chunk, then added in chunk order.
        let parts: Vec<(Vec<f64>, Vec<usize>)> = points
            .data
            .par_chunks(CHUNK * dim)
            .zip(state.par_chunks(CHUNK))
            .map(|(xs, st)| {
                let mut s = vec![0.0; k * dim];
                let mut cnt = vec![0usize; k];
                for (x, &(l, _, _)) in xs.chunks_exact(dim).zip(st) {
                    cnt[l] += 1;
                    for (a, b) in s[l * dim..(l + 1) * dim].iter_mut().zip(x) {
                        *a += b;
                    }
                }
                (s, cnt)
            })
            .collect();
        let mut sums = vec![0.0; k * dim];
        let mut counts = vec![0usize; k];
        for (s, c) in parts {
            for (a, b) in sums.iter_mut().zip(s) {
                *a += b;
            }
            for (a, b) in counts.iter_mut().zip(c) {
                *a += b;
            }
        }
        let old = centres.clone();
        let mut reseeded = false;
        // Points ordered by distance to their centre, farthest first, for re-seeding.
        let mut far: Vec<(f64, usize)> = Vec::new();
        let mut far_next = 0;
        for c in 0..k {
            if counts[c] > 0 {
                let row = &mut centres.data[c * dim..(c + 1) * dim];
                for (r, s) in row.iter_mut().zip(&sums[c * dim..(c + 1) * dim]) {
                    *r = s / counts[c] as f64;
                }
            } else {
                if far.is_empty() {
                    far = state
                        .iter()
                        .zip(points.rows())
                        .enumerate()
                        .map(|(i, (&(l, _, _), x))| (Points::dist2(x, old.row(l)), i))
                        .collect();
                    far.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
                }
                let pick = far.get(far_next).map_or(0, |p| p.1);
                far_next += 1;
                centres.data[c * dim..(c + 1) * dim].copy_from_slice(points.row(pick));
                reseeded = true;
            }
        }
        // Centre movements, and half the distance from each centre to its nearest other one.
        let moved: Vec<f64> = (0..k)
            .map(|c| Points::dist2(old.row(c), centres.row(c)).sqrt())
            .collect();
        let (mut m1, mut m1_at, mut m2) = (0.0f64, 0usize, 0.0f64);
        for (c, &m) in moved.iter().enumerate() {
            if m > m1 {
                m2 = m1;
                m1 = m;
                m1_at = c;
            } else if m > m2 {
                m2 = m;
            }
        }
        let c_norms = row_norms(&centres);
        let half_gap: Vec<f64> = if k == 1 {
            vec![f64::INFINITY]
        } else {
            // Nearest other centre from the matrix product, then a rounding allowance so that
            // the half gap stays a lower bound.
            let cm = faer::MatRef::from_row_major_slice(&centres.data, k, dim);
            let gram = cm * cm.transpose();
            let c_max = c_norms.iter().fold(0.0f64, |a, &v| a.max(v));
            (0..k)
                .map(|c| {
                    let best = (0..k)
                        .filter(|&o| o != c)
                        .map(|o| c_norms[c] + c_norms[o] - 2.0 * gram[(c, o)])
                        .fold(f64::INFINITY, f64::min);
                    0.5 * (best - 1e-10 * 2.0 * c_max).max(0.0).sqrt()
                })
                .collect()
        };
        let shift2: f64 = moved.iter().map(|m| m * m).sum();
        // Phase 1: bounds; points that may have changed centre are collected in order.
        let todo: Vec<usize> = points
            .data
            .par_chunks(CHUNK * dim)
            .zip(state.par_chunks_mut(CHUNK))
            .enumerate()
            .flat_map_iter(|(ci, (xs, st))| {
                let mut todo = Vec::new();
                for (t, (x, s)) in xs.chunks_exact(dim).zip(st.iter_mut()).enumerate() {
                    let (l, mut u, mut lo) = *s;
                    if reseeded {
                        lo = 0.0;
                    }
                    u += moved[l];
                    lo -= if l == m1_at { m2 } else { m1 };
                    let bound = half_gap[l].max(lo);
                    if u > bound {
                        u = Points::dist2(x, centres.row(l)).sqrt();
                        if u > bound {
                            todo.push(ci * CHUNK + t);
                        }
                    }
                    *s = (l, u, lo);
                }
                todo
            })
            .collect();
        // Phase 2: full nearest-two search for those points, by blocked matrix products.
        let fresh = nearest_two_many(points, &todo, &centres, &c_norms);
        let mut changed = 0usize;
        for (&i, f) in todo.iter().zip(fresh) {
            if f.0 != state[i].0 {
                changed += 1;
            }
            state[i] = f;
        }
        if changed == 0 || (!reseeded && shift2 <= tol) {
            break;
        }
    }
    let labels: Vec<usize> = state.iter().map(|s| s.0).collect();
    let inertia_parts: Vec<f64> = points
        .data
        .par_chunks(CHUNK * dim)
        .zip(labels.par_chunks(CHUNK))
        .map(|(xs, ls)| {
            xs.chunks_exact(dim)
                .zip(ls)
                .map(|(x, &l)| Points::dist2(x, centres.row(l)))
                .sum::<f64>()
        })
        .collect();
    KmeansFit {
        centres,
        inertia: inertia_parts.iter().sum(),
        labels,
        iterations,
    }
}

/// k-means with k-means++ seeding and Lloyd iterations; the best (lowest inertia) of
/// `restarts` runs. Restart r draws from `ChaCha8Rng::seed_from_u64(seed)` after the draws of
/// restarts 0..r, so the result depends only on the inputs and `seed`.
///
/// Errors: k outside 1..=n, restarts outside 1..=1000, max_iter outside 1..=1 000 000, points
/// with no coordinates.
pub fn kmeans(
    points: &Points,
    k: usize,
    restarts: usize,
    max_iter: usize,
    seed: u64,
) -> Result<KmeansFit> {
    if points.dim == 0 || points.n == 0 {
        return Err(Error::Analysis(format!(
            "k-means needs points with coordinates, got {} × {}",
            points.n, points.dim
        )));
    }
    if k == 0 || k > points.n {
        return Err(Error::param(
            "k",
            format!(
                "{k} centres; allowed 1 to the number of points ({})",
                points.n
            ),
        ));
    }
    if !(1..=1000).contains(&restarts) {
        return Err(Error::param(
            "restarts",
            format!("{restarts}; allowed 1 to 1000 runs"),
        ));
    }
    if !(1..=1_000_000).contains(&max_iter) {
        return Err(Error::param(
            "max_iter",
            format!("{max_iter}; allowed 1 to 1000000 iterations"),
        ));
    }
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut best: Option<KmeansFit> = None;
    for _ in 0..restarts {
        let fit = lloyd(points, k, max_iter, &mut rng);
        if best.as_ref().is_none_or(|b| fit.inertia < b.inertia) {
            best = Some(fit);
        }
    }
    best.ok_or_else(|| Error::Analysis("k-means ran no restart".to_string()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn separated_blobs_are_found() {
        // Three tight clusters far apart: every restart finds them (common practice).
        let mut rng = ChaCha8Rng::seed_from_u64(1);
        let centres = [[0.0, 0.0], [10.0, 0.0], [0.0, 10.0]];
        let mut data = Vec::new();
        for i in 0..300 {
            let c = centres[i % 3];
            data.push(c[0] + rng.gen::<f64>() - 0.5);
            data.push(c[1] + rng.gen::<f64>() - 0.5);
        }
        let pts = Points::new(300, 2, data).unwrap();
        let fit = kmeans(&pts, 3, 2, 100, 4).unwrap();
        // Within-cluster variance of a unit uniform square is 1/6 per point.
        let per_point = fit.inertia / 300.0;
        assert!((per_point - 1.0 / 6.0).abs() < 0.03, "{per_point}");
        for i in 0..300 {
            assert_eq!(fit.labels[i], fit.labels[i % 3]);
        }
        assert_eq!(fit, kmeans(&pts, 3, 2, 100, 4).unwrap());
        assert!((distortion(&pts, &fit.centres).unwrap() - per_point).abs() < 1e-12);
        assert!(kmeans(&pts, 0, 1, 10, 0).is_err());
        assert!(kmeans(&pts, 301, 1, 10, 0).is_err());
        assert!(kmeans(&pts, 3, 0, 10, 0).is_err());
        assert!(kmeans(&pts, 3, 1, 0, 0).is_err());
        // More centres than distinct points still works (duplicates).
        let dup = Points::new(4, 1, vec![1.0, 1.0, 2.0, 2.0]).unwrap();
        let f = kmeans(&dup, 3, 1, 10, 0).unwrap();
        assert_eq!(f.inertia, 0.0);
    }
}
