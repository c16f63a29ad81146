//! Blocked brute force of the neighbour search: the expansion ‖x‖² + ‖y‖² − 2x·y of a block of
//! queries against a block of references, with the cross products from one dense matrix product
//! (faer), screens the pairs; the pairs that pass are measured with [`Points::dist2`] and kept
//! in a [`TopK`]. Blocks of queries run in parallel (rayon); memory is one block product per
//! thread, never N×N.
//!
//! The screen is exact: the expansion's rounding error is below
//! `ROUNDING · (dim + 4) · ε · (‖x‖² + ‖y‖²)` (the error of a floating-point sum of `dim`
//! products, Higham 2002, §3.1, with room for the three operations that combine the terms), so
//! a pair whose expansion less that bound exceeds the current k-th exact distance cannot be
//! among the k nearest.

use super::{Neighbors, TopK};
use crate::points::Points;
use faer::reborrow::ReborrowMut;
use faer::{Mat, Par};
use rayon::prelude::*;

/// Queries per block.
const QUERY_BLOCK: usize = 256;
/// References per block.
const REF_BLOCK: usize = 2048;
/// Factor on the rounding bound of the expansion (twice the bound: common practice margin).
const ROUNDING: f64 = 4.0;

/// Squared norms of the `n` rows of `data`.
fn norms2(data: &[f64], n: usize, dim: usize) -> Vec<f64> {
    (0..n)
        .map(|i| data[i * dim..(i + 1) * dim].iter().map(|v| v * v).sum())
        .collect()
}

/// Exact k nearest rows of `reference` for each of the `nq` rows of `queries` (row-major,
/// `reference.dim` wide). With `exclude_self`, query i is reference row i and leaves itself out.
pub(super) fn table(
    reference: &Points,
    queries: &[f64],
    nq: usize,
    k: usize,
    exclude_self: bool,
) -> Neighbors {
    let dim = reference.dim;
    let rn = norms2(&reference.data, reference.n, dim);
    let qn = norms2(queries, nq, dim);
    let eps = ROUNDING * (dim as f64 + 4.0) * f64::EPSILON;
    let mut index = vec![0usize; nq * k];
    let mut dist2 = vec![0.0; nq * k];
    index
        .par_chunks_mut(QUERY_BLOCK * k)
        .zip(dist2.par_chunks_mut(QUERY_BLOCK * k))
        .enumerate()
        .for_each(|(b, (bi, bd))| {
            let q0 = b * QUERY_BLOCK;
            let nb = bi.len() / k;
            let qrow = |i: usize| &queries[(q0 + i) * dim..(q0 + i + 1) * dim];
            let qm = Mat::<f64>::from_fn(nb, dim, |i, d| queries[(q0 + i) * dim + d]);
            let mut tops: Vec<TopK> = (0..nb).map(|_| TopK::new(k)).collect();
            let mut g = Mat::<f64>::zeros(nb, REF_BLOCK.min(reference.n));
            for r0 in (0..reference.n).step_by(REF_BLOCK) {
                let nr = REF_BLOCK.min(reference.n - r0);
                // Reference block transposed: dim × nr.
                let rt = Mat::<f64>::from_fn(dim, nr, |d, j| reference.data[(r0 + j) * dim + d]);
                let mut gb = g.as_mut().subcols_mut(0, nr);
                faer::linalg::matmul::matmul(
                    gb.rb_mut(),
                    faer::Accum::Replace,
                    qm.as_ref(),
                    rt.as_ref(),
                    1.0,
                    Par::Seq,
                );
                crate::cpu::clear_upper_state_here();
                for (i, top) in tops.iter_mut().enumerate() {
                    let qi = qn[q0 + i];
                    let own = if exclude_self { q0 + i } else { usize::MAX };
                    for j in 0..nr {
                        let r = r0 + j;
                        let (rj, e) = (rn[r], gb[(i, j)]);
                        let screen = qi + rj - 2.0 * e - eps * (qi + rj);
                        if screen <= top.worst() && r != own {
                            top.push(Points::dist2(qrow(i), reference.row(r)), r);
                        }
                    }
                }
            }
            for (i, top) in tops.iter().enumerate() {
                for (j, &(d, idx)) in top.items().iter().enumerate() {
                    bi[i * k + j] = idx;
                    bd[i * k + j] = d;
                }
            }
        });
    Neighbors {
        n: nq,
        k,
        index,
        dist2,
    }
}
