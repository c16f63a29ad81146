//! Exact k nearest neighbours for the vote, fast in any dimension.
//!
//! In: reference rows, query rows (same width) and k. Out: the same [`Neighbors`] table as
//! [`crate::embed::knn`] (k nearest reference rows per query, nearest first, squared Euclidean
//! distances, ties broken by the smaller reference index), so results are interchangeable.
//!
//! Method: blocked brute force. Both sets are centred on the reference mean (distances do not
//! change) and rounded to the working precision (f32 above [`F64_MAX_DIM`] coordinates, where
//! the product dominates the time; f64 up to it, where f32 could not resolve the small
//! distances of tight clusters); for a block of references and a block of queries the cross
//! products come from one matrix product (faer), and the expansion d̃ = ‖x‖² + ‖y‖² − 2 x·y
//! screens the candidates. With M(x, y) = c·(‖x‖² + ‖y‖²) a bound on |d̃ − d| (rounding of the
//! inputs: 4u(‖x‖² + ‖y‖²); of the dot product in any summation order: γ_dim·‖x‖‖y‖, u the
//! unit roundoff; Higham 2002, §3.1), the true k-th distance is at most the k-th smallest
//! d̃ + M over the references, and a reference is kept when d̃ − M does not exceed that, so no
//! true neighbour is lost; the kept candidates are then ranked by their exact f64 distance on
//! the original rows. The result equals exhaustive search
//! (same indices, same distances) and does not depend on the thread count: each query is
//! processed by one thread, in a fixed block order, and the final rank uses exact distances.

use crate::embed::knn::Neighbors;
use crate::error::{Error, Result};
use crate::points::Points;
use faer::reborrow::ReborrowMut;
use faer::{Mat, Par};
use rayon::prelude::*;

/// Queries per block (one block per parallel task).
const QUERY_BLOCK: usize = 256;
/// References per block (one product of `REF_BLOCK × QUERY_BLOCK`).
const REF_BLOCK: usize = 512;
/// Largest width searched in f64; wider rows are screened in f32.
pub const F64_MAX_DIM: usize = 32;

/// Working precision of the screen.
trait Real: faer::traits::ComplexField + Copy + Into<f64> + Send + Sync {
    /// Unit roundoff.
    const U: f64;
    fn of(x: f64) -> Self;
}
impl Real for f32 {
    const U: f64 = f32::EPSILON as f64 / 2.0;
    fn of(x: f64) -> Self {
        x as f32
    }
}
impl Real for f64 {
    const U: f64 = f64::EPSILON / 2.0;
    fn of(x: f64) -> Self {
        x
    }
}

/// Candidates of one query: (lower bound of d − ‖x‖², reference index) within the screen.
struct Screen {
    k: usize,
    /// c·‖x‖² of the query.
    qmargin: f64,
    cap: usize,
    threshold: f64,
    cand: Vec<(f64, usize)>,
}

impl Screen {
    fn new(k: usize, qmargin: f64) -> Self {
        let cap = (4 * k).max(64);
        Screen {
            k,
            qmargin,
            cap,
            threshold: f64::INFINITY,
            cand: Vec::with_capacity(cap),
        }
    }

    /// Tighten the threshold to the k-th smallest upper bound + 2c·‖x‖² and drop the candidates
    /// whose lower bound lies above it. `up[j]` = 2c·‖y_j‖² turns a lower bound into an upper.
    fn tighten(&mut self, up: &[f64]) {
        if self.cand.len() < self.k {
            return;
        }
        let mut upper: Vec<f64> = self.cand.iter().map(|&(l, j)| l + up[j]).collect();
        let (_, kth, _) = upper.select_nth_unstable_by(self.k - 1, f64::total_cmp);
        self.threshold = self.threshold.min(*kth + 2.0 * self.qmargin);
        let t = self.threshold;
        self.cand.retain(|c| c.0 <= t);
        if self.cand.len() * 2 > self.cap {
            self.cap *= 2; // many near-ties: let the buffer grow
        }
    }
}

/// Exact k nearest rows of `reference` for every row of `queries` (see the module notes). A query
/// that is itself a reference row finds itself at distance 0.
///
/// Errors: different widths; k = 0 or more than the reference rows; a non-finite coordinate.
pub fn nearest(reference: &Points, queries: &Points, k: usize) -> Result<Neighbors> {
    if queries.dim != reference.dim {
        return Err(Error::Analysis(format!(
            "neighbour search: queries have {} coordinates, references {}",
            queries.dim, reference.dim
        )));
    }
    if k == 0 || k > reference.n {
        return Err(Error::param(
            "vote_neighbors",
            format!(
                "{k}; allowed 1 to the number of reference beats ({})",
                reference.n
            ),
        ));
    }
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
    if reference.dim <= F64_MAX_DIM {
        Ok(search::<f64>(reference, queries, k))
    } else {
        Ok(search::<f32>(reference, queries, k))
    }
}

fn search<T: Real>(reference: &Points, queries: &Points, k: usize) -> Neighbors {
    let dim = reference.dim;
    let nref = reference.n;
    let mut mean = vec![0.0; dim];
    for r in reference.rows() {
        for (m, v) in mean.iter_mut().zip(r) {
            *m += v;
        }
    }
    mean.iter_mut().for_each(|m| *m /= nref as f64);
    let centred = |p: &Points, i: usize, d: usize| T::of(p.data[i * dim + d] - mean[d]);
    let rc = Mat::<T>::from_fn(nref, dim, |i, d| centred(reference, i, d));
    let sq = |it: &mut dyn Iterator<Item = T>| {
        it.map(|v| {
            let v: f64 = v.into();
            v * v
        })
        .sum::<f64>()
    };
    let rn: Vec<f64> = (0..nref)
        .map(|i| sq(&mut (0..dim).map(|d| rc[(i, d)])))
        .collect();
    // Rounding bound factor c: γ_dim + 4u + slack.
    let c = 1.25 * (dim as f64 + 8.0) * T::U;
    // Lower bound of d − ‖x‖² is ‖y‖²(1 − c) − 2x·y − c‖x‖²; the last term is folded into the
    // threshold. `up[j]` = 2c‖y_j‖² takes a lower bound to the upper one.
    let rn_lo: Vec<f64> = rn.iter().map(|&r| r * (1.0 - c)).collect();
    let up: Vec<f64> = rn.iter().map(|&r| 2.0 * c * r).collect();
    let mut index = vec![0usize; queries.n * k];
    let mut dist2 = vec![0.0; queries.n * k];
    index
        .par_chunks_mut(QUERY_BLOCK * k)
        .zip(dist2.par_chunks_mut(QUERY_BLOCK * k))
        .enumerate()
        .for_each(|(b, (bi, bd))| {
            let q0 = b * QUERY_BLOCK;
            let nq = bi.len() / k;
            let qt = Mat::<T>::from_fn(dim, nq, |d, i| centred(queries, q0 + i, d));
            let mut screens: Vec<Screen> = (0..nq)
                .map(|i| Screen::new(k, c * sq(&mut (0..dim).map(|d| qt[(d, i)]))))
                .collect();
            let mut g = Mat::<T>::zeros(REF_BLOCK.min(nref), nq);
            for r0 in (0..nref).step_by(REF_BLOCK) {
                let nr = REF_BLOCK.min(nref - r0);
                let mut gb = g.as_mut().subrows_mut(0, nr);
                faer::linalg::matmul::matmul(
                    gb.rb_mut(),
                    faer::Accum::Replace,
                    rc.as_ref().subrows(r0, nr),
                    qt.as_ref(),
                    T::of(1.0),
                    Par::Seq,
                );
                let lob = &rn_lo[r0..r0 + nr];
                for (i, s) in screens.iter_mut().enumerate() {
                    let col = &g.col_as_slice(i)[..nr];
                    for (j, (&gij, &lo)) in col.iter().zip(lob).enumerate() {
                        let gij: f64 = gij.into();
                        let l = lo - 2.0 * gij;
                        if l <= s.threshold {
                            s.cand.push((l, r0 + j));
                            if s.cand.len() >= s.cap {
                                s.tighten(&up);
                            }
                        }
                    }
                }
            }
            for (i, mut s) in screens.into_iter().enumerate() {
                s.tighten(&up);
                let q = queries.row(q0 + i);
                let mut exact: Vec<(f64, usize)> = s
                    .cand
                    .iter()
                    .map(|&(_, j)| (Points::dist2(q, reference.row(j)), j))
                    .collect();
                exact.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
                for (j, (d, idx)) in exact.into_iter().take(k).enumerate() {
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
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    fn cloud(n: usize, dim: usize, seed: u64, offset: f64) -> Points {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        Points::new(
            n,
            dim,
            (0..n * dim).map(|_| offset + rng.gen::<f64>()).collect(),
        )
        .unwrap()
    }

    /// Exhaustive search in f64 (common practice: compare with the definition).
    fn naive(r: &Points, q: &Points, k: usize) -> (Vec<usize>, Vec<f64>) {
        let mut idx = Vec::new();
        let mut d2 = Vec::new();
        for x in q.rows() {
            let mut d: Vec<(f64, usize)> = r
                .rows()
                .enumerate()
                .map(|(j, y)| (Points::dist2(x, y), j))
                .collect();
            d.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
            for (v, j) in d.into_iter().take(k) {
                idx.push(j);
                d2.push(v);
            }
        }
        (idx, d2)
    }

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
            let (want_i, want_d) = naive(&r, &q, 5);
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
