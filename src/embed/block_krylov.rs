//! Block Krylov–Schur iteration for the largest eigenpairs of a symmetric positive definite
//! operator given only by its action on a block of vectors (here A⁻¹, applied through a sparse
//! Cholesky factor, see [`super::sparse`]).
//!
//! In: the operator (row-major n × p block in, n × p block out), n, the number of pairs `nev`,
//! a seed, a tolerance. Out: the `nev` largest eigenvalues μ (non-increasing) of the operator
//! with unit vectors, or `None` when the iteration breaks down or does not converge (the caller
//! then falls back to a single-vector solver).
//!
//! Method: the Krylov–Schur restart of Stewart (2002, SIAM J. Matrix Anal. Appl. 23:601) on a
//! block Krylov space (block Arnoldi with a block of p vectors, e.g. Saad, "Numerical Methods for
//! Large Eigenvalue Problems", 2011, ch. 6). Each step applies the operator to the last block
//! (one solve for all p columns: the factor is read once per block, where a single-vector
//! Krylov–Schur reads it once per vector, and reading the factor bounds the solve),
//! orthogonalises the result against the basis twice (classical block Gram–Schmidt, "twice is
//! enough", Giraud et al. 2005) and orthonormalises it
//! by SVQB (Stathopoulos & Wu 2002), which gives the coupling block B with W = V·B. The
//! projected matrix H̄ satisfies A·Q_m = Q_{m+p}·H̄; after each step the Ritz pairs of the leading
//! m × m part are checked with the residual estimate ‖B_last·y_last‖. When the basis is full,
//! the `keep` leading Ritz vectors and the last block are kept (the Krylov–Schur form) and the
//! iteration goes on.
//!
//! Parameters (ours): p = 4, a basis of at most 88 columns, `nev` + 6 Ritz vectors kept at a
//! restart. Chosen on the kernel graph of a 50 000-point Swiss roll (synthetic, not the shared
//! data; `examples/bench_embed_swiss.rs`, 11 pairs): blocks of 3, 4, 6, 8 and 12 needed 25, 22,
//! 21, 21 and 19 block solves (75 to 228 right-hand sides) and p = 4 took the least time; the
//! single-vector iteration needs 64 solves, one right-hand side each. These counts came from a
//! temporary trace build during development, not from a committed command; the committed
//! timing is `examples/bench_embed_swiss.rs` (docs/performance.md). The basis: with 56 columns
//! the iteration restarted once; with 72, 88, 104 or 120 the whole bench process (3 fits) took
//! 3.40–3.56 CPU s against 3.68–3.77 (docs/performance.md, 2026-12-05, about 03:10; a temporary
//! build reading the size from the environment); 88 columns are n × 88 values (35 MB at
//! n = 50 000).
//!
//! Determinism: the block width is fixed, the caller's solve is sequential, and every
//! reduction over rows sums fixed chunks of rows in chunk order
//! ([`super::chebyshev::ROWS`]), so the bits do not depend on the thread count.

use super::chebyshev::{cross, rotate, small_eigen, ROWS};
use crate::error::Result;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

/// Block width p of the iteration.
pub const BLOCK: usize = 4;
/// Largest basis (columns) before a restart.
pub const MAX_BASIS: usize = 88;
/// Ritz vectors kept at a restart (at least `nev` plus a margin).
const KEEP_EXTRA: usize = 6;
/// Restart cap.
const MAX_RESTARTS: usize = 60;

/// W ← W − A·C for row-major n × wb `w`, n × wa `a` and wa × wb `c` (row by row, no reduction).
/// Each entry subtracts the terms in column order of `a`; for wb = [`BLOCK`] the row of W is
/// held in registers over that loop (same operations in the same order, so the same bits).
fn sub_mul(w: &mut [f64], wb: usize, a: &[f64], wa: usize, c: &[f64]) {
    if wb == BLOCK {
        return sub_mul_fixed::<BLOCK>(w, a, wa, c);
    }
    w.par_chunks_mut(ROWS * wb)
        .zip(a.par_chunks(ROWS * wa))
        .for_each(|(wc, ac)| {
            for (wr, ar) in wc.chunks_exact_mut(wb).zip(ac.chunks_exact(wa)) {
                for (q, &aq) in ar.iter().enumerate() {
                    let crow = &c[q * wb..(q + 1) * wb];
                    wr.iter_mut().zip(crow).for_each(|(o, &cv)| *o -= aq * cv);
                }
            }
        });
}

/// [`sub_mul`] for a fixed width W of `w`.
fn sub_mul_fixed<const W: usize>(w: &mut [f64], a: &[f64], wa: usize, c: &[f64]) {
    w.par_chunks_mut(ROWS * W)
        .zip(a.par_chunks(ROWS * wa))
        .for_each(|(wc, ac)| {
            for (wr, ar) in wc.chunks_exact_mut(W).zip(ac.chunks_exact(wa)) {
                let mut acc = [0.0; W];
                acc.copy_from_slice(wr);
                for (&aq, crow) in ar.iter().zip(c.chunks_exact(W)) {
                    for t in 0..W {
                        acc[t] -= aq * crow[t];
                    }
                }
                wr.copy_from_slice(&acc);
            }
        });
}

/// AᵀB for row-major n × wa `a` and n × W `b` (wa × W, row-major). Each chunk of
/// [`ROWS`] rows gives a partial sum over its rows in row order, and the partial sums are added
/// in chunk order: the same operations in the same order as [`cross`], so the same bits, with
/// four columns of `a` at a time held in registers.
fn cross_fixed<const W: usize>(a: &[f64], wa: usize, b: &[f64]) -> Vec<f64> {
    let parts: Vec<Vec<f64>> = a
        .par_chunks(ROWS * wa)
        .zip(b.par_chunks(ROWS * W))
        .map(|(ac, bc)| {
            let mut g = vec![0.0; wa * W];
            let mut q0 = 0;
            while q0 + 4 <= wa {
                let mut acc = [[0.0; W]; 4];
                for (ar, br) in ac.chunks_exact(wa).zip(bc.chunks_exact(W)) {
                    let a4 = &ar[q0..q0 + 4];
                    for i in 0..4 {
                        for t in 0..W {
                            acc[i][t] += a4[i] * br[t];
                        }
                    }
                }
                for (i, row) in acc.iter().enumerate() {
                    g[(q0 + i) * W..(q0 + i + 1) * W].copy_from_slice(row);
                }
                q0 += 4;
            }
            for q in q0..wa {
                let mut acc = [0.0; W];
                for (ar, br) in ac.chunks_exact(wa).zip(bc.chunks_exact(W)) {
                    for t in 0..W {
                        acc[t] += ar[q] * br[t];
                    }
                }
                g[q * W..(q + 1) * W].copy_from_slice(&acc);
            }
            g
        })
        .collect();
    let mut g = vec![0.0; wa * W];
    for part in parts {
        g.iter_mut().zip(part).for_each(|(o, v)| *o += v);
    }
    g
}

/// AᵀB as [`cross`] does it, by [`cross_fixed`] when B has [`BLOCK`] columns.
fn cross_block(a: &[f64], wa: usize, b: &[f64], wb: usize) -> Vec<f64> {
    if wb == BLOCK {
        cross_fixed::<BLOCK>(a, wa, b)
    } else {
        cross(a, wa, b, wb)
    }
}

/// SVQB of a row-major n × p block: (V, B) with W = V·B, V orthonormal; `None` when the block
/// is (numerically) rank deficient.
fn svqb_coupled(w: &[f64], p: usize) -> Result<Option<(Vec<f64>, Vec<f64>)>> {
    let g = cross_block(w, p, w, p);
    let (vals, vecs) = small_eigen(&g, p)?;
    let top = vals.first().copied().unwrap_or(0.0);
    if !(top.is_finite() && top > 0.0) || vals.iter().any(|&v| !(v > 1e-20 * top)) {
        return Ok(None);
    }
    let mut m = vec![0.0; p * p];
    let mut b = vec![0.0; p * p];
    for i in 0..p {
        for j in 0..p {
            // V = W·U·D^(−½); B = D^(½)·Uᵀ.
            m[i * p + j] = vecs[i * p + j] / vals[j].sqrt();
            b[j * p + i] = vecs[i * p + j] * vals[j].sqrt();
        }
    }
    Ok(Some((rotate(w, p, &m, p), b)))
}

/// Result of [`top_eigen_block`].
#[derive(Debug, Clone)]
pub struct BlockEigen {
    /// Eigenvalues μ of the operator, non-increasing.
    pub values: Vec<f64>,
    /// Unit vectors, row-major n × nev.
    pub vectors: Vec<f64>,
    /// Operator applications (blocks of [`BLOCK`] columns).
    pub applications: usize,
}

/// The `nev` largest eigenpairs of the symmetric positive definite operator `apply` (see the
/// module notes). A pair is accepted when its residual estimate, scaled by `scale / μ`, is at
/// most `tol` (for A⁻¹ with ‖A‖ ≤ `scale` this bounds ‖A z − z/μ‖). `None`: breakdown or no
/// convergence.
pub fn top_eigen_block(
    apply: &dyn Fn(&[f64]) -> Result<Vec<f64>>,
    n: usize,
    nev: usize,
    seed: u64,
    tol: f64,
    scale: f64,
    p: usize,
) -> Result<Option<BlockEigen>> {
    let keep = nev + KEEP_EXTRA;
    let cap = MAX_BASIS.max(keep + 2 * p);
    if nev == 0 || cap + p > n {
        return Ok(None);
    }
    let mut rng = ChaCha8Rng::seed_from_u64(seed ^ 0xb10c_4b5c);
    let start: Vec<f64> = (0..n * p).map(|_| rng.gen::<f64>() - 0.5).collect();
    let Some((v0, _)) = svqb_coupled(&start, p)? else {
        return Ok(None);
    };
    // Basis blocks (row-major, with their widths) and H̄ (row-major, stride `st`).
    let st = cap + p;
    let mut blocks: Vec<(Vec<f64>, usize)> = vec![(v0, p)];
    let mut hb = vec![0.0; st * st];
    let mut applications = 0;
    let mut restarts = 0;
    loop {
        // Expand by one block.
        let j: usize = blocks.iter().map(|b| b.1).sum();
        let last = &blocks.last().expect("basis").0;
        let mut w = apply(last)?;
        applications += 1;
        if w.len() != n * p || w.iter().any(|v| !v.is_finite()) {
            return Ok(None);
        }
        for _ in 0..2 {
            let mut row = 0;
            for (blk, wa) in &blocks {
                let c = cross_block(blk, *wa, &w, p);
                sub_mul(&mut w, p, blk, *wa, &c);
                for q in 0..*wa {
                    for t in 0..p {
                        hb[(row + q) * st + j - p + t] += c[q * p + t];
                    }
                }
                row += wa;
            }
        }
        let Some((vn, b)) = svqb_coupled(&w, p)? else {
            return Ok(None);
        };
        for q in 0..p {
            for t in 0..p {
                hb[(j + q) * st + j - p + t] = b[q * p + t];
            }
        }
        blocks.push((vn, p));
        // Rayleigh–Ritz on the leading j × j part; residuals from the coupling rows.
        let m = j;
        if m < keep {
            continue;
        }
        let h: Vec<f64> = (0..m * m)
            .map(|e| {
                let (r, c) = (e / m, e % m);
                0.5 * (hb[r * st + c] + hb[c * st + r])
            })
            .collect();
        let (theta, y) = small_eigen(&h, m)?;
        let resid = |i: usize| -> f64 {
            (0..p)
                .map(|q| {
                    (0..m)
                        .map(|c| hb[(m + q) * st + c] * y[c * m + i])
                        .sum::<f64>()
                        .powi(2)
                })
                .sum::<f64>()
                .sqrt()
        };
        let done = (0..nev).all(|i| theta[i] > 0.0 && resid(i) * scale / theta[i] <= tol);
        if !done && m + p <= cap {
            continue;
        }
        if done || restarts == MAX_RESTARTS {
            if !done {
                return Ok(None);
            }
            let vectors = ritz(&blocks[..blocks.len() - 1], &y, m, nev, n);
            return Ok(Some(BlockEigen {
                values: theta[..nev].to_vec(),
                vectors,
                applications,
            }));
        }
        // Krylov–Schur restart: keep the leading Ritz vectors and the last block.
        restarts += 1;
        let kept = ritz(&blocks[..blocks.len() - 1], &y, m, keep, n);
        let mut coupling = vec![0.0; p * keep];
        for q in 0..p {
            for i in 0..keep {
                coupling[q * keep + i] = (0..m).map(|c| hb[(m + q) * st + c] * y[c * m + i]).sum();
            }
        }
        let tail = blocks.pop().expect("last block");
        blocks = vec![(kept, keep), tail];
        hb.iter_mut().for_each(|v| *v = 0.0);
        for i in 0..keep {
            hb[i * st + i] = theta[i];
        }
        for q in 0..p {
            for i in 0..keep {
                hb[(keep + q) * st + i] = coupling[q * keep + i];
            }
        }
    }
}

/// Ritz vectors Q·Y[:, ..count] (row-major n × count) from the basis blocks and the m × m
/// row-major Ritz coefficients `y`.
fn ritz(blocks: &[(Vec<f64>, usize)], y: &[f64], m: usize, count: usize, n: usize) -> Vec<f64> {
    let mut out = vec![0.0; n * count];
    let mut row = 0;
    for (blk, wa) in blocks {
        let c: Vec<f64> = (0..wa * count)
            .map(|e| y[(row + e / count) * m + e % count])
            .collect();
        let part = rotate(blk, *wa, &c, count);
        out.par_chunks_mut(ROWS * count)
            .zip(part.par_chunks(ROWS * count))
            .for_each(|(o, q)| o.iter_mut().zip(q).for_each(|(a, b)| *a += b));
        row += wa;
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn diagonal_operator_top_pairs() {
        // Source: a diagonal matrix's eigenvalues are its entries and its eigenvectors the unit
        // vectors (exact). Entries 1/(1 + k) for k = 0..n, shuffled by a fixed permutation.
        let n = 600;
        let perm: Vec<usize> = (0..n).map(|i| (i * 7 + 3) % n).collect();
        let diag: Vec<f64> = (0..n).map(|i| 1.0 / (1.0 + perm[i] as f64)).collect();
        let apply = |x: &[f64]| -> Result<Vec<f64>> {
            Ok(x.iter()
                .enumerate()
                .map(|(e, v)| v * diag[e / BLOCK])
                .collect())
        };
        let r = top_eigen_block(&apply, n, 8, 1, 1e-11, 1.0, BLOCK)
            .unwrap()
            .unwrap();
        for (k, mu) in r.values.iter().enumerate() {
            assert!((mu - 1.0 / (1.0 + k as f64)).abs() < 1e-10, "μ{k} = {mu}");
            // The vector is the unit vector at the row holding 1/(1 + k).
            let row = perm.iter().position(|&q| q == k).unwrap();
            assert!((r.vectors[row * 8 + k].abs() - 1.0).abs() < 1e-8);
        }
    }

    #[test]
    fn fixed_width_kernels_equal_the_general_loops_bit_for_bit() {
        // The register-held loops must do the same operations in the same order as the general
        // ones (common practice for a reproducible analysis): compare the bits, with widths of
        // the basis that are and are not multiples of 4 and a row count beyond one chunk.
        let n = ROWS + 37;
        let mut rng = ChaCha8Rng::seed_from_u64(11);
        for wa in [3, 4, 9, 17] {
            let a: Vec<f64> = (0..n * wa).map(|_| rng.gen::<f64>() - 0.5).collect();
            let w: Vec<f64> = (0..n * BLOCK).map(|_| rng.gen::<f64>() - 0.5).collect();
            let fast = cross_fixed::<BLOCK>(&a, wa, &w);
            let slow = cross(&a, wa, &w, BLOCK);
            assert!(fast
                .iter()
                .zip(&slow)
                .all(|(x, y)| x.to_bits() == y.to_bits()));
            let mut w1 = w.clone();
            let mut w2 = w.clone();
            sub_mul_fixed::<BLOCK>(&mut w1, &a, wa, &fast);
            w2.par_chunks_mut(ROWS * BLOCK)
                .zip(a.par_chunks(ROWS * wa))
                .for_each(|(wc, ac)| {
                    for (wr, ar) in wc.chunks_exact_mut(BLOCK).zip(ac.chunks_exact(wa)) {
                        for (q, &aq) in ar.iter().enumerate() {
                            let crow = &slow[q * BLOCK..(q + 1) * BLOCK];
                            wr.iter_mut().zip(crow).for_each(|(o, &cv)| *o -= aq * cv);
                        }
                    }
                });
            assert!(w1.iter().zip(&w2).all(|(x, y)| x.to_bits() == y.to_bits()));
            // The subtraction is W − A·C entrywise (one row against a plain sum).
            let r = n - 1;
            for t in 0..BLOCK {
                let mut v = w[r * BLOCK + t];
                for q in 0..wa {
                    v -= a[r * wa + q] * fast[q * BLOCK + t];
                }
                assert_eq!(v.to_bits(), w1[r * BLOCK + t].to_bits());
            }
        }
    }

    #[test]
    fn same_bits_for_one_and_two_threads() {
        let n = 9000;
        let diag: Vec<f64> = (0..n)
            .map(|i| 1.0 / (1.0 + (i % 997) as f64 + 1e-3 * i as f64))
            .collect();
        let apply = |x: &[f64]| -> Result<Vec<f64>> {
            Ok(x.iter()
                .enumerate()
                .map(|(e, v)| v * diag[e / BLOCK])
                .collect())
        };
        let run = |threads: usize| {
            rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap()
                .install(|| {
                    top_eigen_block(&apply, n, 5, 3, 1e-11, 1.0, BLOCK)
                        .unwrap()
                        .unwrap()
                })
        };
        let (a, b) = (run(1), run(2));
        assert_eq!(a.values, b.values);
        assert!(a
            .vectors
            .iter()
            .zip(&b.vectors)
            .all(|(x, y)| x.to_bits() == y.to_bits()));
    }
}
