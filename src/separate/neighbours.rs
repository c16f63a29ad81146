//! Exact k nearest neighbours for the vote, fast on clustered beats in any dimension.
//!
//! In: reference rows, query rows (same width) and k. Out: the same [`Neighbors`] table as
//! [`crate::neighbours`] (k nearest reference rows per query, nearest first, squared Euclidean
//! distances, ties broken by the smaller reference index), so results are interchangeable.
//!
//! Method: exact search with triangle-inequality pruning over a one-level ball partition (the
//! pruning rules of metric trees, Uhlmann 1991; Fukunaga & Narendra 1975) and partial distance
//! search (Bei & Gray 1985). Both sets are first centred and rotated onto the reference rows'
//! principal axes (distances do not change), so that partial sums over the leading axes
//! exceed the current k-th distance after a few coordinates for most rows. About 2√n reference
//! rows, taken at a fixed stride, are centres; every reference row joins its nearest centre, and
//! each ball keeps its radius and its members sorted by their distance to the centre. For a
//! query q with current k-th distance τ, a ball with centre c and radius r is skipped when
//! d(q, c) − r > τ, and a member y when |d(q, c) − d(y, c)| > τ (both lower bounds of d(q, y));
//! balls are visited in order of their lower bound, so the search stops at the first ball that
//! cannot hold a neighbour, and a member's distance is abandoned once its partial sum exceeds
//! τ². The bounds are widened by a relative 1e-9 (far above the rounding of a distance and of
//! the rotation in f64), so no true neighbour is lost; candidates are ranked by their exact f64
//! distance on the original rows. The result equals exhaustive search (same indices, same distances) and does not
//! depend on the thread count: each query is searched by one thread on its own. Beats form a few
//! tight groups, so most balls are skipped; on unclustered data the search degrades to
//! exhaustive comparison, never to a wrong answer.

use crate::embed::Pca;
use crate::error::{Error, Result};
use crate::neighbours::{check_shapes, Neighbors, TopK};
use crate::points::Points;
use rayon::prelude::*;

/// Queries per parallel task.
const QUERY_BLOCK: usize = 256;

/// Exact k nearest rows of `reference` for every row of `queries` (see the module notes). A query
/// that is itself a reference row finds itself at distance 0.
///
/// Errors: different widths; k = 0 or more than the reference rows; a non-finite coordinate.
pub fn nearest(reference: &Points, queries: &Points, k: usize) -> Result<Neighbors> {
    check_shapes(reference, queries, k, "vote_neighbors")?;
    if reference
        .data
        .iter()
        .chain(&queries.data)
        .any(|v| !v.is_finite())
    {
        return Err(Error::Analysis(
            "neighbour search: a coordinate is not a finite number".into(),
        ));
    }
    Ok(search(reference, queries, k))
}

/// The ball partition of the reference rows.
struct Balls {
    /// Row index of each centre.
    centre: Vec<usize>,
    /// Start of each ball in `member`/`rad`/`rows` (one extra entry: the end).
    start: Vec<usize>,
    /// Largest member distance to the centre, per ball.
    radius: Vec<f64>,
    /// Reference index of each member, grouped by ball, by distance to the centre.
    member: Vec<usize>,
    /// Distance of each member to its centre.
    rad: Vec<f64>,
    /// Member rows, copied in `member` order.
    rows: Vec<f64>,
}

impl Balls {
    fn new(r: &Points) -> Balls {
        let n = r.n;
        let c = ((2.0 * (n as f64).sqrt()).ceil() as usize).clamp(1, n);
        let stride = n / c;
        let centre: Vec<usize> = (0..c).map(|i| i * stride).collect();
        let assign: Vec<(usize, f64)> = (0..n)
            .into_par_iter()
            .map(|j| {
                let y = r.row(j);
                let mut best = (0, f64::INFINITY);
                for (ci, &cj) in centre.iter().enumerate() {
                    let d = Points::dist2(y, r.row(cj));
                    if d < best.1 {
                        best = (ci, d);
                    }
                }
                (best.0, best.1.sqrt())
            })
            .collect();
        let mut order: Vec<usize> = (0..n).collect();
        order.sort_by(|&a, &b| {
            assign[a]
                .0
                .cmp(&assign[b].0)
                .then(assign[a].1.total_cmp(&assign[b].1))
                .then(a.cmp(&b))
        });
        let mut start = vec![0; c + 1];
        for &(ci, _) in &assign {
            start[ci + 1] += 1;
        }
        for i in 0..c {
            start[i + 1] += start[i];
        }
        let rad: Vec<f64> = order.iter().map(|&j| assign[j].1).collect();
        let radius = (0..c)
            .map(|ci| rad[start[ci]..start[ci + 1]].last().copied().unwrap_or(0.0))
            .collect();
        let mut rows = Vec::with_capacity(n * r.dim);
        for &j in &order {
            rows.extend_from_slice(r.row(j));
        }
        Balls {
            centre,
            start,
            radius,
            member: order,
            rad,
            rows,
        }
    }
}

/// Relative widening of every bound (see the module notes).
const SLACK: f64 = 1e-9;

/// Reference and query rows on the reference rows' principal axes (centred and rotated:
/// distances unchanged up to rounding), so that partial sums over the leading axes reach the
/// distance early; the rows as they are when no rotation can be fitted.
fn rotated(reference: &Points, queries: &Points) -> (Points, Points) {
    let dim = reference.dim;
    let r = Pca::fit(reference)
        .and_then(|p| Ok((p.project(reference, dim)?, p.project(queries, dim)?)));
    match r {
        Ok((a, b)) if a.dim == dim && b.dim == dim => (a, b),
        _ => (reference.clone(), queries.clone()),
    }
}

/// Squared distance of `a` and `b`, abandoned (returning a value above `limit`) as soon as a
/// partial sum exceeds `limit` (partial distance search, Bei & Gray 1985).
fn partial_dist2(a: &[f64], b: &[f64], limit: f64) -> f64 {
    let mut acc = 0.0;
    for (ca, cb) in a.chunks(8).zip(b.chunks(8)) {
        acc += ca
            .iter()
            .zip(cb)
            .map(|(x, y)| (x - y) * (x - y))
            .sum::<f64>();
        if acc > limit {
            return acc;
        }
    }
    acc
}

fn search(reference: &Points, queries: &Points, k: usize) -> Neighbors {
    let dim = reference.dim;
    let (rr, rq) = rotated(reference, queries);
    let b = Balls::new(&rr);
    let norm = |p: &Points| {
        p.rows()
            .map(|r| r.iter().map(|v| v * v).sum::<f64>().sqrt())
            .fold(0.0, f64::max)
    };
    let rmax = norm(&rr);
    let nb = b.centre.len();
    let mut index = vec![0usize; queries.n * k];
    let mut dist2 = vec![0.0; queries.n * k];
    index
        .par_chunks_mut(QUERY_BLOCK * k)
        .zip(dist2.par_chunks_mut(QUERY_BLOCK * k))
        .enumerate()
        .for_each(|(blk, (bi, bd))| {
            let q0 = blk * QUERY_BLOCK;
            let mut dq = vec![0.0; nb];
            let mut visit: Vec<(f64, usize)> = Vec::with_capacity(nb);
            let mut top = TopK::new(k);
            for i in 0..bi.len() / k {
                let q = queries.row(q0 + i);
                let qr = rq.row(q0 + i);
                // Rounding of the rotation: far below this absolute margin.
                let delta = SLACK * (qr.iter().map(|v| v * v).sum::<f64>().sqrt() + rmax);
                visit.clear();
                for (ci, &cj) in b.centre.iter().enumerate() {
                    dq[ci] = Points::dist2(qr, rr.row(cj)).sqrt();
                    visit.push(((dq[ci] - b.radius[ci]).max(0.0), ci));
                }
                visit.sort_by(|x, y| x.0.total_cmp(&y.0).then(x.1.cmp(&y.1)));
                // The ball of the nearest centre first: its members give a tight τ early.
                let nearest_ball = (0..nb)
                    .min_by(|&x, &y| dq[x].total_cmp(&dq[y]))
                    .unwrap_or(0);
                if let Some(p) = visit.iter().position(|v| v.1 == nearest_ball) {
                    let v = visit.remove(p);
                    visit.insert(0, (0.0, v.1));
                }
                top.clear();
                let mut tau = f64::INFINITY;
                for &(lb, ci) in &visit {
                    let d = dq[ci];
                    let tol = SLACK * (d + b.radius[ci] + tau) + delta;
                    if lb > tau + tol {
                        break;
                    }
                    let (s, e) = (b.start[ci], b.start[ci + 1]);
                    let lo = d - tau - tol;
                    let first = s + b.rad[s..e].partition_point(|&r| r < lo);
                    for m in first..e {
                        let tol = SLACK * (d + b.radius[ci] + tau) + delta;
                        if b.rad[m] > d + tau + tol {
                            break;
                        }
                        let limit = (tau + tol) * (tau + tol);
                        if partial_dist2(qr, &b.rows[m * dim..(m + 1) * dim], limit) > limit {
                            continue;
                        }
                        let j = b.member[m];
                        top.push(Points::dist2(q, reference.row(j)), j);
                        tau = top.worst().sqrt();
                    }
                }
                for (j, &(d, idx)) in top.items().iter().enumerate() {
                    bi[i * k + j] = idx;
                    bd[i * k + j] = d;
                }
            }
        });
    Neighbors {
        n: queries.n,
        k,
        index,
        dist2,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::neighbours::tests::{cloud, naive};

    #[test]
    fn equals_exhaustive_search_with_ties_and_far_offsets() {
        // Several blocks of references and queries, a large common offset (where the f32
        // expansion alone would lose the order) and exact duplicates (ties by index).
        for (dim, offset) in [(3, 0.0), (72, 0.0), (10, 1.0e4)] {
            let mut r = cloud(4500, dim, dim as u64, offset);
            let dup = r.row(7).to_vec();
            r.data[100 * dim..101 * dim].copy_from_slice(&dup);
            let q = cloud(300, dim, 50 + dim as u64, offset);
            let q = Points::new(
                q.n + 1,
                dim,
                q.data.iter().copied().chain(dup.iter().copied()).collect(),
            )
            .unwrap();
            let (want_i, want_d) = naive(&r, &q, 5, false);
            let got = nearest(&r, &q, 5).unwrap();
            assert_eq!(got.index, want_i, "dim {dim} offset {offset}");
            assert_eq!(got.dist2, want_d, "dim {dim} offset {offset}");
            // The duplicated row: both copies at distance 0, the smaller index first.
            assert_eq!(&got.index_of(q.n - 1)[..2], &[7, 100]);
        }
    }

    #[test]
    fn same_result_for_one_and_two_threads_and_clear_errors() {
        let r = cloud(3000, 20, 1, 0.0);
        let q = cloud(700, 20, 2, 0.0);
        let run = |t: usize| {
            rayon::ThreadPoolBuilder::new()
                .num_threads(t)
                .build()
                .unwrap()
                .install(|| nearest(&r, &q, 6).unwrap())
        };
        assert_eq!(run(1), run(2));
        assert!(nearest(&r, &q, 0).is_err());
        assert!(nearest(&r, &q, 3001).is_err());
        assert!(nearest(&r, &cloud(3, 2, 1, 0.0), 2).is_err());
        let mut bad = cloud(10, 20, 3, 0.0);
        bad.data[5] = f64::NAN;
        assert!(nearest(&r, &bad, 2).is_err());
    }
}
