//! Chebyshev-filtered subspace iteration for the top eigenpairs of a sparse symmetric S whose
//! spectrum lies in [−1, 1] (the symmetric conjugate of a Markov matrix).
//!
//! In: a [`SymCsr`] S, the number of pairs `nev`, a seed, a residual tolerance. Out: the `nev`
//! largest eigenvalues (non-increasing) with unit eigenvectors.
//!
//! Method: subspace iteration accelerated by Chebyshev polynomials (Rutishauser 1970, "Simultaneous
//! iteration method for symmetric matrices", Numer. Math. 16:205; in the filtered form of Zhou,
//! Saad, Tiago & Chelikowsky 2006, J. Comput. Phys. 219:172). A block of b = nev + guard vectors
//! is multiplied by T_m((S − cI)/e), the degree-m Chebyshev polynomial that stays within [−1, 1]
//! on the damped interval [l, u] (c, e its centre and half-width) and grows fast above it; u is
//! the smallest Ritz value of the block, so the wanted top eigenvalues are amplified against the
//! rest. l is a lower bound of the spectrum from a short Lanczos run (Zhou & Li 2011; see
//! [`lower_bound`]), −1 at worst: a Gaussian kernel's S has few eigenvalues far below 0, and the
//! narrower the damped interval, the fewer products reach the same amplification (about
//! √(2/(u − l)) times fewer than with l = −1). The block is then orthonormalised (SVQB twice: X·V·Σ^(−½) from the eigendecomposition of
//! the Gram matrix, Stathopoulos & Wu 2002) and rotated by a Rayleigh–Ritz step; the iteration
//! stops when the first `nev` Ritz pairs have residual ‖S v − θ v‖ ≤ tol.
//!
//! Why here: the top of a diffusion spectrum is clustered (gaps of 10⁻⁴ at 100 000 points), so a
//! single-vector Krylov–Schur needs hundreds of restarts whose sequential orthogonalisation
//! dominates the time when no sparse Cholesky factor fits in memory. The filter works on whole
//! blocks with cheap sparse products that parallelise by rows.
//!
//! Precision: the block products of the filter run in f32 (half the bytes per product, twice
//! the SIMD lanes) through a defect recurrence (see [`defect_filter`]): once Ritz pairs
//! (θ, V) are known, T_m(A)·V is split into V·diag(T_m(θ̂)), computed exactly in f64, and a
//! defect D that shrinks with the residuals; only D runs in f32, so its rounding errors shrink
//! with the residuals too and the iteration reaches the same f64 residuals (10⁻¹⁰ and below) in
//! the same number of rounds as an all-f64 filter. The Rayleigh–Ritz products, the
//! orthogonalisation and the residuals stay in f64.
//!
//! Degree rule (ours): m is the largest degree (4 ≤ m ≤ 80) whose amplification at λ = 1 stays
//! below 10⁵, which bounds the condition number of the filtered block.
//!
//! Determinism: every sparse product is computed row by row, and every reduction over rows sums
//! fixed chunks of rows in chunk order, so the result has the same bits for any thread count.

use super::sparse::SymCsr;
use crate::error::{Error, Result};
use faer::Mat;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;
use std::sync::atomic::{AtomicBool, Ordering};

/// Rows per parallel chunk (fixed, so the reductions do not depend on the thread count).
pub(super) const ROWS: usize = 2048;
/// Largest amplification of the filter at λ = 1.
const MAX_GAIN: f64 = 1e5;
/// Degree bounds of the filter.
const MIN_DEGREE: usize = 4;
const MAX_DEGREE: usize = 80;
/// Iteration cap.
const MAX_ITER: usize = 300;

/// Result of [`top_eigen_chebyshev`].
#[derive(Debug, Clone)]
pub struct ChebyshevEigen {
    /// Eigenvalues, non-increasing.
    pub values: Vec<f64>,
    /// Unit eigenvectors as columns, same order.
    pub vectors: Mat<f64>,
    /// Block products with S (filter and Rayleigh–Ritz steps; the bound's Lanczos steps are
    /// single-vector products and not counted).
    pub products: usize,
    /// Lower bound of the spectrum the filter damped from (see [`lower_bound`]).
    pub lower_bound: f64,
}

/// A real number type the block products run in: f64, or f32 for the filter's defect
/// recurrence (see [`defect_filter`]).
pub(super) trait Real:
    Copy
    + Send
    + Sync
    + std::ops::Add<Output = Self>
    + std::ops::Sub<Output = Self>
    + std::ops::Mul<Output = Self>
{
    const ZERO: Self;
    fn of(x: f64) -> Self;
    /// The matrix values in this type.
    fn vals(s: &Compact) -> &[Self];
}

impl Real for f64 {
    const ZERO: f64 = 0.0;
    fn of(x: f64) -> f64 {
        x
    }
    fn vals(s: &Compact) -> &[f64] {
        &s.val
    }
}

impl Real for f32 {
    const ZERO: f32 = 0.0;
    fn of(x: f64) -> f32 {
        x as f32
    }
    fn vals(s: &Compact) -> &[f32] {
        &s.val32
    }
}

/// S with 32-bit column indices, for the block products (half the index traffic of `usize`),
/// its values in f64 and rounded to f32.
pub(super) struct Compact {
    ptr: Vec<usize>,
    col: Vec<u32>,
    val: Vec<f64>,
    val32: Vec<f32>,
}

impl Compact {
    /// Errors: more than 2³² − 1 rows.
    #[cfg(test)]
    fn of(s: SymCsr) -> Result<Compact> {
        let col = s
            .col
            .iter()
            .map(|&c| u32::try_from(c))
            .collect::<std::result::Result<Vec<u32>, _>>()
            .map_err(|_| {
                Error::Analysis(format!(
                    "Chebyshev eigensolver: {} rows exceed 32-bit indices",
                    s.n
                ))
            })?;
        let val32 = s.val.iter().map(|&v| v as f32).collect();
        Ok(Compact {
            ptr: s.ptr,
            col,
            val: s.val,
            val32,
        })
    }

    /// S renumbered by `order` (row `new` is old row `order[new]`, columns sorted), built
    /// directly in this form: the same matrix as [`permuted`] followed by [`Compact::of`],
    /// without the 64-bit copy in between. Errors: more than 2³² − 1 rows.
    fn permuted(s: &SymCsr, order: &[usize]) -> Result<Compact> {
        let n = s.n;
        if n > u32::MAX as usize {
            return Err(Error::Analysis(format!(
                "Chebyshev eigensolver: {n} rows exceed 32-bit indices"
            )));
        }
        let mut pos = vec![0u32; n];
        for (new, &old) in order.iter().enumerate() {
            pos[old] = new as u32;
        }
        let mut ptr = Vec::with_capacity(n + 1);
        let mut col = Vec::with_capacity(s.col.len());
        let mut val = Vec::with_capacity(s.val.len());
        let mut val32 = Vec::with_capacity(s.val.len());
        ptr.push(0);
        let mut row: Vec<(u32, f64)> = Vec::new();
        for &old in order {
            row.clear();
            row.extend((s.ptr[old]..s.ptr[old + 1]).map(|e| (pos[s.col[e]], s.val[e])));
            row.sort_by_key(|&(c, _)| c);
            for &(c, v) in &row {
                col.push(c);
                val.push(v);
                val32.push(v as f32);
            }
            ptr.push(col.len());
        }
        Ok(Compact {
            ptr,
            col,
            val,
            val32,
        })
    }
}

/// Rows `first..` of one chunk of a Chebyshev step with the block width `B` known at compile
/// time, so the row accumulator stays in registers and the loop over the block is unrolled.
/// Only multiplications and additions, each column summed in the order of the stored entries,
/// so the bits do not depend on the instruction set the loop is compiled for.
#[inline(always)]
fn cheb_rows_fixed<T: Real, const B: usize>(
    s: &Compact,
    cur: &[T],
    pc: &mut [T],
    first: usize,
    c: T,
    f: T,
    keep: T,
) {
    for (ri, pr) in pc.chunks_exact_mut(B).enumerate() {
        let i = first + ri;
        let mut acc = [T::ZERO; B];
        let (a, z) = (s.ptr[i], s.ptr[i + 1]);
        for (&j, &v) in s.col[a..z].iter().zip(&T::vals(s)[a..z]) {
            let j = j as usize;
            let xr: &[T; B] = cur[j * B..(j + 1) * B].try_into().expect("block row");
            for t in 0..B {
                acc[t] = acc[t] + v * xr[t];
            }
        }
        let cr: &[T; B] = cur[i * B..(i + 1) * B].try_into().expect("block row");
        for t in 0..B {
            pr[t] = f * (acc[t] - c * cr[t]) - keep * pr[t];
        }
    }
}

/// [`cheb_rows_fixed`] compiled for AVX2 (wider registers; no fused multiply-add, so the same
/// bits as the baseline build).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn cheb_rows_avx2<T: Real, const B: usize>(
    s: &Compact,
    cur: &[T],
    pc: &mut [T],
    first: usize,
    c: T,
    f: T,
    keep: T,
) {
    cheb_rows_fixed::<T, B>(s, cur, pc, first, c, f, keep)
}

/// One chunk of rows at a fixed width, on the widest instruction set available.
fn cheb_rows_dispatch<T: Real, const B: usize>(
    s: &Compact,
    cur: &[T],
    pc: &mut [T],
    first: usize,
    c: T,
    f: T,
    keep: T,
) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::is_x86_feature_detected!("avx2") {
            // SAFETY: the CPU supports AVX2 (checked just above).
            unsafe { cheb_rows_avx2::<T, B>(s, cur, pc, first, c, f, keep) };
            return;
        }
    }
    cheb_rows_fixed::<T, B>(s, cur, pc, first, c, f, keep)
}

/// Rows of one chunk at any width (the general path).
#[allow(clippy::too_many_arguments)]
fn cheb_rows_any<T: Real>(
    s: &Compact,
    cur: &[T],
    pc: &mut [T],
    b: usize,
    first: usize,
    c: T,
    f: T,
    keep: T,
) {
    let val = T::vals(s);
    let mut acc = vec![T::ZERO; b];
    for (ri, pr) in pc.chunks_exact_mut(b).enumerate() {
        let i = first + ri;
        acc.fill(T::ZERO);
        let (a, z) = (s.ptr[i], s.ptr[i + 1]);
        for (&j, &v) in s.col[a..z].iter().zip(&val[a..z]) {
            let j = j as usize;
            let xr = &cur[j * b..(j + 1) * b];
            acc.iter_mut().zip(xr).for_each(|(o, &xv)| *o = *o + v * xv);
        }
        let cr = &cur[i * b..(i + 1) * b];
        for ((p, &a), &x) in pr.iter_mut().zip(&acc).zip(cr) {
            *p = f * (a - c * x) - keep * *p;
        }
    }
}

/// Rows `first..` of one chunk of a defect step in f32 (see [`defect_filter`]):
/// `pc` ← f·(S·cur − c·cur) − pc + g∘r, block width `B` fixed.
#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn defect_rows_fixed<const B: usize>(
    s: &Compact,
    cur: &[f32],
    pc: &mut [f32],
    rc: &[f32],
    g: &[f32],
    first: usize,
    c: f32,
    f: f32,
) {
    let g: &[f32; B] = g.try_into().expect("weights");
    for (ri, (pr, rr)) in pc.chunks_exact_mut(B).zip(rc.chunks_exact(B)).enumerate() {
        let i = first + ri;
        let mut acc = [0.0f32; B];
        let (a, z) = (s.ptr[i], s.ptr[i + 1]);
        for (&j, &v) in s.col[a..z].iter().zip(&s.val32[a..z]) {
            let j = j as usize;
            let xr: &[f32; B] = cur[j * B..(j + 1) * B].try_into().expect("block row");
            for t in 0..B {
                acc[t] += v * xr[t];
            }
        }
        let cr: &[f32; B] = cur[i * B..(i + 1) * B].try_into().expect("block row");
        for t in 0..B {
            pr[t] = f * (acc[t] - c * cr[t]) - pr[t] + g[t] * rr[t];
        }
    }
}

/// [`defect_rows_fixed`] compiled for AVX2 (no fused multiply-add).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
#[allow(clippy::too_many_arguments)]
unsafe fn defect_rows_avx2<const B: usize>(
    s: &Compact,
    cur: &[f32],
    pc: &mut [f32],
    rc: &[f32],
    g: &[f32],
    first: usize,
    c: f32,
    f: f32,
) {
    defect_rows_fixed::<B>(s, cur, pc, rc, g, first, c, f)
}

/// One chunk of a defect step at a fixed width, on the widest instruction set available.
#[allow(clippy::too_many_arguments)]
fn defect_rows_dispatch<const B: usize>(
    s: &Compact,
    cur: &[f32],
    pc: &mut [f32],
    rc: &[f32],
    g: &[f32],
    first: usize,
    c: f32,
    f: f32,
) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::is_x86_feature_detected!("avx2") {
            // SAFETY: the CPU supports AVX2 (checked just above).
            unsafe { defect_rows_avx2::<B>(s, cur, pc, rc, g, first, c, f) };
            return;
        }
    }
    defect_rows_fixed::<B>(s, cur, pc, rc, g, first, c, f)
}

/// A defect step at any width (the general path).
#[allow(clippy::too_many_arguments)]
fn defect_rows_any(
    s: &Compact,
    cur: &[f32],
    pc: &mut [f32],
    rc: &[f32],
    g: &[f32],
    b: usize,
    first: usize,
    c: f32,
    f: f32,
) {
    let mut acc = vec![0.0f32; b];
    for (ri, (pr, rr)) in pc.chunks_exact_mut(b).zip(rc.chunks_exact(b)).enumerate() {
        let i = first + ri;
        acc.fill(0.0);
        let (a, z) = (s.ptr[i], s.ptr[i + 1]);
        for (&j, &v) in s.col[a..z].iter().zip(&s.val32[a..z]) {
            let j = j as usize;
            let xr = &cur[j * b..(j + 1) * b];
            acc.iter_mut().zip(xr).for_each(|(o, &xv)| *o += v * xv);
        }
        let cr = &cur[i * b..(i + 1) * b];
        for t in 0..b {
            pr[t] = f * (acc[t] - c * cr[t]) - pr[t] + g[t] * rr[t];
        }
    }
}

/// One defect step in place: `prev` ← (2/e)·(S·cur − c·cur) − prev + g∘r (g per column).
#[allow(clippy::too_many_arguments)]
fn defect_step(
    s: &Compact,
    cur: &[f32],
    prev: &mut [f32],
    r: &[f32],
    g: &[f32],
    b: usize,
    c: f64,
    e: f64,
) {
    let (c, f) = (c as f32, (2.0 / e) as f32);
    prev.par_chunks_mut(ROWS * b)
        .zip(r.par_chunks(ROWS * b))
        .enumerate()
        .for_each(|(ci, (pc, rc))| {
            let r0 = ci * ROWS;
            match b {
                4 => defect_rows_dispatch::<4>(s, cur, pc, rc, g, r0, c, f),
                8 => defect_rows_dispatch::<8>(s, cur, pc, rc, g, r0, c, f),
                12 => defect_rows_dispatch::<12>(s, cur, pc, rc, g, r0, c, f),
                16 => defect_rows_dispatch::<16>(s, cur, pc, rc, g, r0, c, f),
                20 => defect_rows_dispatch::<20>(s, cur, pc, rc, g, r0, c, f),
                24 => defect_rows_dispatch::<24>(s, cur, pc, rc, g, r0, c, f),
                28 => defect_rows_dispatch::<28>(s, cur, pc, rc, g, r0, c, f),
                32 => defect_rows_dispatch::<32>(s, cur, pc, rc, g, r0, c, f),
                _ => defect_rows_any(s, cur, pc, rc, g, b, r0, c, f),
            }
        });
}

/// T_m(A)·V for A = (S − cI)/e and a Ritz block V (row-major n × b, f64) with Ritz values θ
/// and S·V = `sv`, evaluated in mixed precision: T_m(A)·V = V·diag(T_m(θ̂)) + D_m with
/// θ̂ = (θ − c)/e, where the defect D_k = T_k(A)·V − V·diag(T_k(θ̂)) obeys
/// D_0 = 0, D_1 = R/e, D_{k+1} = 2A·D_k − D_{k−1} + (2/e)·R·diag(T_k(θ̂)), R = S·V − V·Θ
/// (the Chebyshev recurrence subtracted from itself). Only D runs in f32: its rounding errors
/// are relative to ‖D‖, which shrinks with the residuals R, so the filtered block keeps the
/// accuracy of f64 arithmetic while the products read half the bytes and use twice the SIMD
/// lanes (the defect-correction idea of iterative refinement, Wilkinson 1963, "Rounding Errors
/// in Algebraic Processes"; Moler 1967, J. ACM 14:316; applied to this recurrence here).
#[allow(clippy::too_many_arguments)]
fn defect_filter(
    s: &Compact,
    v: &[f64],
    mut sv: Vec<f64>,
    theta: &[f64],
    b: usize,
    m: usize,
    c: f64,
    e: f64,
    stop: &AtomicBool,
) -> Vec<f64> {
    let th: Vec<f64> = theta[..b].iter().map(|t| (t - c) / e).collect();
    // R = S·V − V·Θ, and D_1 = R/e.
    let mut r = vec![0.0f32; v.len()];
    let mut cur = vec![0.0f32; v.len()];
    r.par_chunks_mut(ROWS * b)
        .zip(cur.par_chunks_mut(ROWS * b))
        .zip(v.par_chunks(ROWS * b).zip(sv.par_chunks(ROWS * b)))
        .for_each(|((rc, dc), (vc, sc))| {
            for (k, (((ro, d), &x), &y)) in rc.iter_mut().zip(dc).zip(vc).zip(sc).enumerate() {
                let rk = y - theta[k % b] * x;
                *ro = rk as f32;
                *d = (rk / e) as f32;
            }
        });
    let mut prev = vec![0.0f32; v.len()];
    let (mut tau_prev, mut tau): (Vec<f64>, Vec<f64>) = (vec![1.0; b], th.clone());
    for _ in 1..m {
        if stop.load(Ordering::Relaxed) {
            break;
        }
        let g: Vec<f32> = tau.iter().map(|t| (2.0 / e * t) as f32).collect();
        defect_step(s, &cur, &mut prev, &r, &g, b, c, e);
        std::mem::swap(&mut cur, &mut prev);
        let next: Vec<f64> = (0..b).map(|t| 2.0 * th[t] * tau[t] - tau_prev[t]).collect();
        tau_prev = std::mem::replace(&mut tau, next);
    }
    drop((r, prev));
    // T_m(A)·V = V·diag(T_m(θ̂)) + D_m, written over S·V.
    sv.par_chunks_mut(ROWS * b)
        .zip(v.par_chunks(ROWS * b).zip(cur.par_chunks(ROWS * b)))
        .for_each(|(oc, (vc, dc))| {
            for (k, ((o, &x), &d)) in oc.iter_mut().zip(vc).zip(dc).enumerate() {
                *o = x * tau[k % b] + f64::from(d);
            }
        });
    sv
}

/// Block width: `want` rounded up to a multiple of 4 (the fixed-width products), when small.
fn block_width(want: usize) -> usize {
    if want <= 32 {
        want.div_ceil(4) * 4
    } else {
        want
    }
}

/// One Chebyshev step in place: `prev` ← (2/e)·(S·cur − c·cur) − prev (or, with `first`,
/// `prev` ← (S·cur − c·cur)/e, ignoring its old content).
fn cheb_step<T: Real>(
    s: &Compact,
    cur: &[T],
    prev: &mut [T],
    b: usize,
    c: f64,
    e: f64,
    first: bool,
) {
    let (f, keep) = if first {
        (1.0 / e, 0.0)
    } else {
        (2.0 / e, 1.0)
    };
    let (c, f, keep) = (T::of(c), T::of(f), T::of(keep));
    prev.par_chunks_mut(ROWS * b)
        .enumerate()
        .for_each(|(ci, pc)| {
            let r0 = ci * ROWS;
            match b {
                4 => cheb_rows_dispatch::<T, 4>(s, cur, pc, r0, c, f, keep),
                8 => cheb_rows_dispatch::<T, 8>(s, cur, pc, r0, c, f, keep),
                12 => cheb_rows_dispatch::<T, 12>(s, cur, pc, r0, c, f, keep),
                16 => cheb_rows_dispatch::<T, 16>(s, cur, pc, r0, c, f, keep),
                20 => cheb_rows_dispatch::<T, 20>(s, cur, pc, r0, c, f, keep),
                24 => cheb_rows_dispatch::<T, 24>(s, cur, pc, r0, c, f, keep),
                28 => cheb_rows_dispatch::<T, 28>(s, cur, pc, r0, c, f, keep),
                32 => cheb_rows_dispatch::<T, 32>(s, cur, pc, r0, c, f, keep),
                _ => cheb_rows_any(s, cur, pc, b, r0, c, f, keep),
            }
        });
}

/// T_m((S − cI)/e)·x by the three-term Chebyshev recurrence, `y` a work block of the same size;
/// returns (T_m·x, the spare block).
#[allow(clippy::too_many_arguments)]
fn filter<T: Real>(
    s: &Compact,
    x: Vec<T>,
    mut y: Vec<T>,
    b: usize,
    m: usize,
    c: f64,
    e: f64,
    stop: &AtomicBool,
) -> (Vec<T>, Vec<T>) {
    cheb_step(s, &x, &mut y, b, c, e, true);
    let (mut cur, mut prev) = (y, x);
    for _ in 1..m {
        if stop.load(Ordering::Relaxed) {
            break;
        }
        cheb_step(s, &cur, &mut prev, b, c, e, false);
        std::mem::swap(&mut cur, &mut prev);
    }
    (cur, prev)
}

/// Aᵀ·B (b × b, row-major) of two row-major n × b blocks, summed over fixed row chunks in order.
fn gram(a: &[f64], bm: &[f64], b: usize) -> Vec<f64> {
    cross(a, b, bm, b)
}

/// Aᵀ·B (wa × wb, row-major) of row-major n × wa and n × wb blocks, summed over fixed row
/// chunks in chunk order.
pub(super) fn cross(a: &[f64], wa: usize, b: &[f64], wb: usize) -> Vec<f64> {
    let parts: Vec<Vec<f64>> = a
        .par_chunks(ROWS * wa)
        .zip(b.par_chunks(ROWS * wb))
        .map(|(ac, bc)| {
            let mut g = vec![0.0; wa * wb];
            for (ar, br) in ac.chunks_exact(wa).zip(bc.chunks_exact(wb)) {
                for (q, &aq) in ar.iter().enumerate() {
                    let row = &mut g[q * wb..(q + 1) * wb];
                    row.iter_mut().zip(br).for_each(|(o, &bv)| *o += aq * bv);
                }
            }
            g
        })
        .collect();
    let mut g = vec![0.0; wa * wb];
    for part in parts {
        g.iter_mut().zip(part).for_each(|(o, v)| *o += v);
    }
    g
}

/// X ← X·M for a row-major n × b block and a b × w matrix `m` (row-major); returns n × w.
pub(super) fn rotate(x: &[f64], b: usize, m: &[f64], w: usize) -> Vec<f64> {
    let n = x.len() / b;
    let mut out = vec![0.0; n * w];
    out.par_chunks_mut(ROWS * w)
        .zip(x.par_chunks(ROWS * b))
        .for_each(|(oc, xc)| {
            for (or, xr) in oc.chunks_exact_mut(w).zip(xc.chunks_exact(b)) {
                for (p, &xp) in xr.iter().enumerate() {
                    let mrow = &m[p * w..(p + 1) * w];
                    or.iter_mut().zip(mrow).for_each(|(o, &mv)| *o += xp * mv);
                }
            }
        });
    out
}

/// Eigendecomposition of a small symmetric matrix (row-major b × b): eigenvalues
/// non-increasing and the eigenvectors as the columns of a row-major b × b matrix.
pub(super) fn small_eigen(g: &[f64], b: usize) -> Result<(Vec<f64>, Vec<f64>)> {
    let a = Mat::<f64>::from_fn(b, b, |i, j| 0.5 * (g[i * b + j] + g[j * b + i]));
    let (vals, vecs) = super::sparse::top_dense_seq(&a, b)?;
    let mut v = vec![0.0; b * b];
    for i in 0..b {
        for j in 0..b {
            v[i * b + j] = vecs[(i, j)];
        }
    }
    Ok((vals, v))
}

/// Orthonormalise the columns of a row-major n × b block by SVQB; columns whose Gram eigenvalue
/// is below 10⁻²⁴ of the largest are dropped. Returns the block and its new width.
fn svqb(x: &[f64], b: usize) -> Result<(Vec<f64>, usize)> {
    let g = gram(x, x, b);
    let (vals, vecs) = small_eigen(&g, b)?;
    let top = vals.first().copied().unwrap_or(0.0);
    let keep: Vec<usize> = (0..b)
        .filter(|&j| vals[j] > 1e-24 * top && vals[j] > 0.0)
        .collect();
    let w = keep.len();
    let mut m = vec![0.0; b * w];
    for i in 0..b {
        for (c, &j) in keep.iter().enumerate() {
            m[i * w + c] = vecs[i * b + j] / vals[j].sqrt();
        }
    }
    Ok((rotate(x, b, &m, w), w))
}

/// The `n`-row block `x` of width `w` widened to `b` columns by seeded random ones.
fn refill(x: Vec<f64>, n: usize, w: usize, b: usize, rng: &mut ChaCha8Rng) -> Vec<f64> {
    if w == b {
        return x;
    }
    let mut out = Vec::with_capacity(n * b);
    for i in 0..n {
        out.extend_from_slice(&x[i * w..(i + 1) * w]);
        out.extend((w..b).map(|_| rng.gen::<f64>() - 0.5));
    }
    out
}

/// Reverse Cuthill–McKee order of the graph of S (Cuthill & McKee 1969; George 1971): a
/// breadth-first order from a low-degree start, neighbours by increasing degree, reversed, one
/// component after another. Returns `order[new] = old`. Neighbouring points then sit close in
/// memory, which keeps the block products in cache.
fn rcm_order(s: &SymCsr) -> Vec<usize> {
    let n = s.n;
    let deg: Vec<usize> = (0..n).map(|i| s.ptr[i + 1] - s.ptr[i]).collect();
    let mut by_degree: Vec<usize> = (0..n).collect();
    by_degree.sort_by_key(|&i| (deg[i], i));
    let mut seen = vec![false; n];
    let mut order = Vec::with_capacity(n);
    let mut nbrs = Vec::new();
    for &start in &by_degree {
        if seen[start] {
            continue;
        }
        seen[start] = true;
        let mut head = order.len();
        order.push(start);
        while head < order.len() {
            let v = order[head];
            head += 1;
            nbrs.clear();
            nbrs.extend(
                s.col[s.ptr[v]..s.ptr[v + 1]]
                    .iter()
                    .copied()
                    .filter(|&w| !seen[w]),
            );
            nbrs.sort_by_key(|&w| (deg[w], w));
            for &w in &nbrs {
                seen[w] = true;
                order.push(w);
            }
        }
    }
    order.reverse();
    order
}

/// S with rows and columns renumbered: new index of old `i` is `pos[i]`.
#[cfg(test)]
fn permuted(s: &SymCsr, order: &[usize]) -> SymCsr {
    let n = s.n;
    let mut pos = vec![0usize; n];
    for (new, &old) in order.iter().enumerate() {
        pos[old] = new;
    }
    let mut ptr = Vec::with_capacity(n + 1);
    let mut col = Vec::with_capacity(s.col.len());
    let mut val = Vec::with_capacity(s.val.len());
    ptr.push(0);
    let mut row: Vec<(usize, f64)> = Vec::new();
    for &old in order {
        row.clear();
        row.extend((s.ptr[old]..s.ptr[old + 1]).map(|e| (pos[s.col[e]], s.val[e])));
        row.sort_by_key(|&(c, _)| c);
        for &(c, v) in &row {
            col.push(c);
            val.push(v);
        }
        ptr.push(col.len());
    }
    SymCsr { n, ptr, col, val }
}

/// Degree of the filter for the damped interval [l, u] (see the module notes).
fn degree(l: f64, u: f64) -> usize {
    let c = 0.5 * (u + l);
    let e = 0.5 * (u - l);
    let t = (1.0 - c) / e;
    if !(t > 1.0) {
        return MAX_DEGREE;
    }
    let m = (MAX_GAIN.acosh() / t.acosh()).floor();
    (m as usize).clamp(MIN_DEGREE, MAX_DEGREE)
}

/// Lanczos steps of the lower bound of the spectrum.
const BOUND_STEPS: usize = 30;
/// Extra room below the bound, as a share of its distance to 1.
const BOUND_MARGIN: f64 = 0.05;

/// A lower bound l of the spectrum of S: the smallest Ritz value θ of a [`BOUND_STEPS`]-step
/// Lanczos run from a seeded start, minus the norm β of its last residual vector (the bound of
/// Zhou & Li 2011, Linear Algebra Appl. 435:480, used in their filtered subspace iteration),
/// minus [`BOUND_MARGIN`]·(1 − θ) more, and at least −1. The eigenvalues of a diffusion
/// kernel's S often all lie well above −1 (a Gaussian kernel matrix is positive semi-definite);
/// damping only [l, u] instead of [−1, u] lets the same degree amplify the top more.
fn lower_bound(s: &Compact, n: usize, rng: &mut ChaCha8Rng) -> Result<f64> {
    let steps = BOUND_STEPS.min(n.saturating_sub(1)).max(1);
    let mut v: Vec<f64> = (0..n).map(|_| rng.gen::<f64>() - 0.5).collect();
    let norm = gram(&v, &v, 1)[0].sqrt();
    v.iter_mut().for_each(|x| *x /= norm);
    let mut prev = vec![0.0; n];
    let mut w = vec![0.0; n];
    let (mut alpha, mut beta) = (Vec::with_capacity(steps), Vec::with_capacity(steps));
    let mut last = 0.0;
    for j in 0..steps {
        cheb_step(s, &v, &mut w, 1, 0.0, 1.0, true); // w = S·v
        if j > 0 {
            let b = beta[j - 1];
            w.iter_mut().zip(&prev).for_each(|(x, p)| *x -= b * p);
        }
        let a = gram(&v, &w, 1)[0];
        w.iter_mut().zip(&v).for_each(|(x, y)| *x -= a * y);
        alpha.push(a);
        last = gram(&w, &w, 1)[0].sqrt();
        if !(last > 1e-12) || j + 1 == steps {
            break;
        }
        beta.push(last);
        std::mem::swap(&mut prev, &mut v);
        v.iter_mut().zip(&w).for_each(|(x, y)| *x = y / last);
    }
    let k = alpha.len();
    let mut t = vec![0.0; k * k];
    for i in 0..k {
        t[i * k + i] = alpha[i];
        if i + 1 < k {
            t[i * k + i + 1] = beta[i];
            t[(i + 1) * k + i] = beta[i];
        }
    }
    let (theta, _) = small_eigen(&t, k)?;
    let low = theta.last().copied().unwrap_or(-1.0);
    if !low.is_finite() {
        return Ok(-1.0);
    }
    Ok((low - last - BOUND_MARGIN * (1.0 - low)).max(-1.0))
}

/// The `nev` largest eigenpairs of S (spectrum in [−1, 1]) by Chebyshev-filtered subspace
/// iteration (see the module notes), to residual ‖S v − λ v‖ ≤ `tol` for every pair.
///
/// Errors: `nev` is 0 or the block does not fit the graph; no convergence within the cap.
pub fn top_eigen_chebyshev(s: &SymCsr, nev: usize, seed: u64, tol: f64) -> Result<ChebyshevEigen> {
    let never = AtomicBool::new(false);
    top_eigen_chebyshev_unless(s, nev, seed, tol, &never)?
        .ok_or_else(|| Error::Analysis("Chebyshev eigensolver: stopped".into()))
}

/// [`top_eigen_chebyshev`] that gives up, returning `Ok(None)`, soon after `stop` is set (it is
/// read before each block product), so that another solver running beside it can make it
/// unnecessary. Whether it stops never changes what it returns when it does not.
pub(super) fn top_eigen_chebyshev_unless(
    s: &SymCsr,
    nev: usize,
    seed: u64,
    tol: f64,
    stop: &AtomicBool,
) -> Result<Option<ChebyshevEigen>> {
    let order = rcm_order(s);
    if stop.load(Ordering::Relaxed) {
        return Ok(None);
    }
    let sp = Compact::permuted(s, &order)?;
    let Some(mut r) = solve(sp, nev, seed, tol, stop)? else {
        return Ok(None);
    };
    let mut vectors = Mat::<f64>::zeros(s.n, r.vectors.ncols());
    for (new, &old) in order.iter().enumerate() {
        for j in 0..r.vectors.ncols() {
            vectors[(old, j)] = r.vectors[(new, j)];
        }
    }
    r.vectors = vectors;
    Ok(Some(r))
}

/// [`top_eigen_chebyshev`] on an already reordered S.
fn solve(
    compact: Compact,
    nev: usize,
    seed: u64,
    tol: f64,
    stop: &AtomicBool,
) -> Result<Option<ChebyshevEigen>> {
    let n = compact.ptr.len() - 1;
    let guard = (nev / 2).max(8);
    let b = block_width(nev + guard);
    if nev == 0 || 2 * b > n {
        return Err(Error::Analysis(format!(
            "Chebyshev eigensolver: {nev} eigenpairs (block of {b}) asked of a {n}-point graph"
        )));
    }
    let s = &compact;
    let mut rng = ChaCha8Rng::seed_from_u64(seed ^ 0xc4eb_5e1f);
    let mut l = lower_bound(s, n, &mut rng)?;
    if stop.load(Ordering::Relaxed) {
        return Ok(None);
    }
    // The random start, held in f32 for the first round (the blocks x and S·x exist from the
    // first Rayleigh–Ritz step on), so that little memory is held while a Cholesky analysis
    // may run beside this iteration.
    let mut start: Vec<f32> = (0..n * b)
        .map(|_| (rng.gen::<f64>() - 0.5) as f32)
        .collect();
    let (mut x, mut y): (Vec<f64>, Vec<f64>) = (Vec::new(), Vec::new());
    // First cut: damp the lower half of [l, 1] until Ritz values are known.
    let mut u = 0.5 * (l + 1.0);
    let mut products = 0;
    let mut ritz: Option<Vec<f64>> = None;
    for _ in 0..MAX_ITER {
        // Filter: x ← T_m((S − cI)/e)·x, scaled to keep the numbers moderate.
        let m = degree(l, u);
        let c = 0.5 * (u + l);
        let e = 0.5 * (u - l);
        products += m + 1;
        // In f32 through the defect recurrence once Ritz pairs are known; the first round,
        // from a random block, in plain f32 (its rounding only perturbs a random start).
        let (mut cur, prev) = match &ritz {
            Some(theta) => (defect_filter(s, &x, y, theta, b, m, c, e, stop), x),
            None => {
                let x32 = std::mem::take(&mut start);
                drop((x, y));
                let (f, spare) = filter(s, x32, vec![0.0; n * b], b, m, c, e, stop);
                drop(spare);
                let f64s: Vec<f64> = f.iter().map(|&v| f64::from(v)).collect();
                drop(f);
                (f64s, vec![0.0; n * b])
            }
        };
        if stop.load(Ordering::Relaxed) {
            return Ok(None);
        }
        let scale = cur.iter().fold(0.0f64, |a, v| a.max(v.abs()));
        if !(scale.is_finite() && scale > 0.0) {
            return Err(Error::Analysis(
                "Chebyshev eigensolver: the filtered block is not finite".into(),
            ));
        }
        cur.iter_mut().for_each(|v| *v /= scale);
        // Orthonormalise twice, refilling lost directions with seeded random columns.
        // (Each block is dropped as soon as it is used up, so that at most three n × b blocks
        // are held at a time here.)
        let (q, w) = svqb(&cur, b)?;
        drop(cur);
        let q = refill(q, n, w, b, &mut rng);
        let (q2, w) = svqb(&q, b)?;
        drop(q);
        let q = refill(q2, n, w, b, &mut rng);
        // Rayleigh–Ritz.
        let mut sq = prev;
        cheb_step(s, &q, &mut sq, b, 0.0, 1.0, true); // S·q
        let h = gram(&q, &sq, b);
        let (theta, u_small) = small_eigen(&h, b)?;
        let v = rotate(&q, b, &u_small, b);
        drop(q);
        let sv = rotate(&sq, b, &u_small, b);
        drop(sq);
        // Residuals of the wanted pairs.
        let mut worst = 0.0f64;
        for (j, &th) in theta.iter().enumerate().take(nev) {
            let r2: f64 = v
                .chunks_exact(b)
                .zip(sv.chunks_exact(b))
                .map(|(vr, sr)| (sr[j] - th * vr[j]).powi(2))
                .sum();
            worst = worst.max(r2.sqrt());
        }
        x = v;
        y = sv;
        ritz = Some(theta.clone());
        if worst <= tol {
            let vectors = Mat::<f64>::from_fn(n, nev, |i, j| x[i * b + j]);
            return Ok(Some(ChebyshevEigen {
                values: theta[..nev].to_vec(),
                vectors,
                products,
                lower_bound: l,
            }));
        }
        // A Ritz value below the bound (it is not a proof) lowers the bound for the next round.
        let low = theta[b - 1];
        if low < l {
            l = (low - BOUND_MARGIN * (1.0 - low)).max(-1.0);
        }
        u = low.clamp(l + 0.005 * (1.0 - l), 0.999_999);
    }
    Err(Error::Analysis(format!(
        "Chebyshev eigensolver did not converge in {MAX_ITER} iterations"
    )))
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    /// Ring of `n` equally spaced points, each joined to its `k` nearest on either side with
    /// weight w_j = exp(−j²/4) (j = 1..k), self weight 1, normalised to S = D^(−½) K D^(−½).
    /// The rows are stored in a shuffled order (seeded) so the solver's reordering matters.
    fn ring(n: usize, k: usize, seed: u64) -> (SymCsr, Vec<f64>) {
        let w = |j: usize| (-((j * j) as f64) / 4.0).exp();
        let mut label: Vec<usize> = (0..n).collect();
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        for i in (1..n).rev() {
            label.swap(i, rng.gen_range(0..=i));
        }
        let deg = 1.0 + 2.0 * (1..=k).map(w).sum::<f64>();
        // Row `label[i]` holds ring position i.
        let mut rows: Vec<Vec<(usize, f64)>> = vec![Vec::new(); n];
        for i in 0..n {
            let mut row = vec![(label[i], 1.0 / deg)];
            for j in 1..=k {
                row.push((label[(i + j) % n], w(j) / deg));
                row.push((label[(i + n - j) % n], w(j) / deg));
            }
            row.sort_by_key(|&(c, _)| c);
            rows[label[i]] = row;
        }
        let mut ptr = vec![0];
        let (mut col, mut val) = (Vec::new(), Vec::new());
        for r in rows {
            for (c, v) in r {
                col.push(c);
                val.push(v);
            }
            ptr.push(col.len());
        }
        // Exact spectrum of the circulant: (1 + 2 Σ_j w_j cos(2π f j / n)) / deg, f = 0, 1, …
        let mut exact: Vec<f64> = (0..n)
            .map(|f| {
                (1.0 + 2.0
                    * (1..=k)
                        .map(|j| w(j) * (2.0 * PI * (f * j) as f64 / n as f64).cos())
                        .sum::<f64>())
                    / deg
            })
            .collect();
        exact.sort_by(|a, b| b.total_cmp(a));
        (SymCsr { n, ptr, col, val }, exact)
    }

    #[test]
    fn ring_spectrum_with_its_pairs() {
        let (s, exact) = ring(3000, 3, 1);
        let r = top_eigen_chebyshev(&s, 11, 7, 1e-10).unwrap();
        for (j, (got, want)) in r.values.iter().zip(&exact).enumerate() {
            // Source: eigenvalues of a symmetric circulant matrix, Σ_j c_j cos(2π f j / n)
            // (Gray 2006, "Toeplitz and Circulant Matrices: A Review"); every f ≥ 1 twice. The
            // residual bound 1e-10 bounds the eigenvalue error by 1e-10.
            assert!((got - want).abs() < 1e-9, "λ{j}: {got} vs {want}");
        }
        // Both members of each pair: λ1 = λ2, λ3 = λ4, … (gaps to the next pair ≈ 1e-5 here).
        for j in [1, 3, 5, 7, 9] {
            assert!((r.values[j] - r.values[j + 1]).abs() < 1e-9);
            if j + 2 < r.values.len() {
                assert!(r.values[j + 1] - r.values[j + 2] > 1e-6);
            }
        }
        // Unit, mutually orthogonal vectors with small residuals.
        let n = s.n;
        let mut x = vec![0.0; n];
        let mut y = vec![0.0; n];
        for j in 0..11 {
            for (i, xi) in x.iter_mut().enumerate() {
                *xi = r.vectors[(i, j)];
            }
            s.matvec(&x, &mut y);
            let res: f64 = x
                .iter()
                .zip(&y)
                .map(|(a, b)| (b - r.values[j] * a).powi(2))
                .sum::<f64>()
                .sqrt();
            assert!(res < 1e-9, "residual {res}");
            for l in 0..11 {
                let dot: f64 = (0..n).map(|i| r.vectors[(i, j)] * r.vectors[(i, l)]).sum();
                let want = if j == l { 1.0 } else { 0.0 };
                assert!((dot - want).abs() < 1e-9, "⟨v{j}, v{l}⟩ = {dot}");
            }
        }
    }

    #[test]
    fn agrees_with_shift_invert_on_a_point_cloud_graph() {
        // An independent solver on the same kernel graph: shift-invert with a sparse Cholesky
        // factor and Krylov–Schur (faer), which a 3-D cloud of 3000 points factors easily.
        let mut rng = ChaCha8Rng::seed_from_u64(9);
        let rows: Vec<Vec<f64>> = (0..3000)
            .map(|_| (0..3).map(|_| rng.gen::<f64>()).collect())
            .collect();
        let pts = crate::points::Points::from_rows(&rows).unwrap();
        let nb = crate::neighbours::knn(&pts, &pts, 11).unwrap();
        let mut k = crate::embed::sparse::kernel_graph(&nb, &|_, _| 0.01);
        crate::embed::sparse::normalise(&mut k, 1.0);
        let si = crate::embed::sparse::top_eigen_sparse(&k, 8, 1).unwrap();
        assert_eq!(si.solver, crate::embed::sparse::Solver::ShiftInvert);
        let ch = top_eigen_chebyshev(&k, 8, 1, 1e-10).unwrap();
        for (a, b) in ch.values.iter().zip(&si.values) {
            assert!((a - b).abs() < 1e-9, "{a} vs {b}");
        }
        // Each Chebyshev vector lies in the span of the shift-invert vectors.
        for j in 0..8 {
            let proj: f64 = (0..8)
                .map(|l| {
                    (0..k.n)
                        .map(|i| ch.vectors[(i, j)] * si.vectors[(i, l)])
                        .sum::<f64>()
                        .powi(2)
                })
                .sum();
            assert!(proj > 1.0 - 1e-8, "vector {j}: squared projection {proj}");
        }
    }

    #[test]
    fn a_stopped_iteration_gives_up_and_an_unstopped_one_is_unchanged() {
        let (s, _) = ring(3000, 3, 1);
        let stop = AtomicBool::new(true);
        assert!(top_eigen_chebyshev_unless(&s, 5, 7, 1e-10, &stop)
            .unwrap()
            .is_none());
        let go = AtomicBool::new(false);
        let a = top_eigen_chebyshev_unless(&s, 5, 7, 1e-10, &go)
            .unwrap()
            .unwrap();
        let b = top_eigen_chebyshev(&s, 5, 7, 1e-10).unwrap();
        assert_eq!(a.values, b.values);
        assert_eq!(a.products, b.products);
        // Stopped from another thread while it runs: it returns None soon after.
        // (A tolerance of 0 is never reached, so only the stop can end it before the cap.)
        let late = AtomicBool::new(false);
        let r = std::thread::scope(|sc| {
            sc.spawn(|| {
                std::thread::sleep(std::time::Duration::from_millis(20));
                late.store(true, Ordering::Relaxed);
            });
            top_eigen_chebyshev_unless(&s, 5, 7, 0.0, &late)
        });
        assert!(r.unwrap().is_none());
    }

    #[test]
    fn same_bits_for_one_and_two_threads() {
        let (s, _) = ring(5000, 4, 2);
        let run = |threads: usize| {
            rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap()
                .install(|| top_eigen_chebyshev(&s, 5, 3, 1e-10).unwrap())
        };
        let (a, b) = (run(1), run(2));
        assert_eq!(a.values, b.values);
        for j in 0..5 {
            for i in 0..s.n {
                assert_eq!(a.vectors[(i, j)].to_bits(), b.vectors[(i, j)].to_bits());
            }
        }
    }

    #[test]
    fn reverse_cuthill_mckee_restores_a_shuffled_ring() {
        // A shuffled ring has neighbours scattered over the whole index range; after the
        // reordering each neighbour is within a few positions (bandwidth ≈ 2k for a ring cut
        // open by the breadth-first search, common practice for RCM on a cycle).
        let (s, _) = ring(1000, 2, 3);
        let order = rcm_order(&s);
        let mut sorted = order.clone();
        sorted.sort_unstable();
        assert_eq!(sorted, (0..1000).collect::<Vec<_>>());
        let band = |m: &SymCsr| {
            (0..m.n)
                .flat_map(|i| {
                    m.col[m.ptr[i]..m.ptr[i + 1]]
                        .iter()
                        .map(move |&c| c.abs_diff(i))
                })
                .max()
                .unwrap()
        };
        let p = permuted(&s, &order);
        // The compact form built directly holds the same entries, bit for bit.
        let direct = Compact::permuted(&s, &order).unwrap();
        let via = Compact::of(p.clone()).unwrap();
        assert_eq!(direct.ptr, via.ptr);
        assert_eq!(direct.col, via.col);
        assert_eq!(direct.val, via.val);
        assert_eq!(direct.val32, via.val32);
        assert!(band(&s) > 500, "shuffled bandwidth {}", band(&s));
        assert!(band(&p) <= 8, "reordered bandwidth {}", band(&p));
        // Same entries, renumbered: the row sums are a permutation of the originals.
        let mut a = s.row_sums();
        let mut b = p.row_sums();
        a.sort_by(f64::total_cmp);
        b.sort_by(f64::total_cmp);
        let worst = a
            .iter()
            .zip(&b)
            .map(|(x, y)| (x - y).abs())
            .fold(0.0, f64::max);
        assert!(worst < 1e-15, "row sums differ by {worst}");
    }

    #[test]
    fn lost_columns_are_refilled_row_by_row() {
        let mut rng = ChaCha8Rng::seed_from_u64(1);
        let x = refill(vec![1.0, 2.0, 3.0], 3, 1, 3, &mut rng);
        assert_eq!(x.len(), 9);
        assert_eq!([x[0], x[3], x[6]], [1.0, 2.0, 3.0]);
        assert!(x.iter().all(|v| v.abs() <= 3.0));
        // Every column lost: a full random block of the same number of rows.
        let y = refill(Vec::new(), 4, 0, 2, &mut rng);
        assert_eq!(y.len(), 8);
        assert!(y.iter().all(|v| v.abs() <= 0.5));
    }

    #[test]
    fn fixed_width_products_equal_the_general_loop_bit_for_bit() {
        // The unrolled (and, where available, AVX2) product sums each column in the same order
        // as the plain loop, so the bits agree (common practice: no fused multiply-add).
        let (s, _) = ring(3000, 4, 5);
        let c = Compact::of(s.clone()).unwrap();
        let mut rng = ChaCha8Rng::seed_from_u64(6);
        for b in [4, 12, 20, 32] {
            let x: Vec<f64> = (0..s.n * b).map(|_| rng.gen::<f64>() - 0.5).collect();
            let p0: Vec<f64> = (0..s.n * b).map(|_| rng.gen::<f64>() - 0.5).collect();
            let mut fast = p0.clone();
            cheb_step(&c, &x, &mut fast, b, 0.3, 0.7, false);
            let mut slow = p0.clone();
            for (ci, pc) in slow.chunks_mut(ROWS * b).enumerate() {
                cheb_rows_any(&c, &x, pc, b, ci * ROWS, 0.3, 2.0 / 0.7, 1.0);
            }
            assert!(fast
                .iter()
                .zip(&slow)
                .all(|(a, z)| a.to_bits() == z.to_bits()));
            // And against the matrix itself: column 0 of S·x by the plain matvec.
            let x0: Vec<f64> = (0..s.n).map(|i| x[i * b]).collect();
            let mut y = vec![0.0; s.n];
            s.matvec(&x0, &mut y);
            for i in 0..s.n {
                let want = 2.0 / 0.7 * (y[i] - 0.3 * x0[i]) - p0[i * b];
                assert!((fast[i * b] - want).abs() < 1e-12);
            }
        }
        assert_eq!(block_width(19), 20);
        assert_eq!(block_width(45), 45);
    }

    #[test]
    fn defect_filter_keeps_f64_accuracy_where_a_plain_f32_filter_does_not() {
        // Near-invariant block: the solver's eigenvectors of a ring (checked against the exact
        // circulant spectrum in `ring_spectrum_with_its_pairs`) plus a 1e-6 perturbation.
        let (s, _) = ring(3000, 3, 1);
        let n = s.n;
        let b = 8;
        let r = top_eigen_chebyshev(&s, b, 7, 1e-10).unwrap();
        let mut rng = ChaCha8Rng::seed_from_u64(11);
        let v: Vec<f64> = (0..n * b)
            .map(|k| r.vectors[(k / b, k % b)] + 1e-6 * (rng.gen::<f64>() - 0.5))
            .collect();
        let c = Compact::of(s.clone()).unwrap();
        let mut sv = vec![0.0; n * b];
        cheb_step(&c, &v, &mut sv, b, 0.0, 1.0, true);
        // θ: Rayleigh quotients of the columns (any θ keeps the split exact in exact arithmetic).
        let g = gram(&v, &sv, b);
        let gv = gram(&v, &v, b);
        let theta: Vec<f64> = (0..b).map(|j| g[j * b + j] / gv[j * b + j]).collect();
        let (lo, hi, m) = (0.02, 0.99, 60);
        let (c0, e0) = (0.5 * (hi + lo), 0.5 * (hi - lo));
        let (exact, _) = filter(
            &c,
            v.clone(),
            vec![0.0; n * b],
            b,
            m,
            c0,
            e0,
            &AtomicBool::new(false),
        );
        let mixed = defect_filter(&c, &v, sv, &theta, b, m, c0, e0, &AtomicBool::new(false));
        let v32: Vec<f32> = v.iter().map(|&x| x as f32).collect();
        let (plain, _) = filter(
            &c,
            v32,
            vec![0.0f32; n * b],
            b,
            m,
            c0,
            e0,
            &AtomicBool::new(false),
        );
        let top = exact.iter().fold(0.0f64, |a, x| a.max(x.abs()));
        let err = |o: &mut dyn Iterator<Item = f64>| {
            o.zip(&exact).fold(0.0f64, |a, (x, y)| a.max((x - y).abs())) / top
        };
        let e_mixed = err(&mut mixed.iter().copied());
        let e_plain = err(&mut plain.iter().map(|&x| f64::from(x)));
        // The defect's share of the result: ‖T_m(A)V − V·diag(T_m(θ̂))‖ relative to the result.
        let th: Vec<f64> = theta.iter().map(|t| (t - c0) / e0).collect();
        let (mut tau_prev, mut tau) = (vec![1.0; b], th.clone());
        for _ in 1..m {
            let next: Vec<f64> = (0..b).map(|t| 2.0 * th[t] * tau[t] - tau_prev[t]).collect();
            tau_prev = std::mem::replace(&mut tau, next);
        }
        let d_rel = err(&mut v.iter().enumerate().map(|(k, &x)| x * tau[k % b]));
        // The plain f32 filter's error (f32 rounding, 6e-8 relative, IEEE 754 binary32, grown
        // by the recurrence) lands on the whole block; the defect filter's only on the defect,
        // so its error is that of the plain filter scaled by the defect's share (common
        // practice: error of a correction scales with its size), within a factor 10.
        assert!(
            e_mixed < 10.0 * e_plain * d_rel,
            "defect filter error {e_mixed}, plain {e_plain}, defect share {d_rel}"
        );
        assert!(e_mixed < 1e-3 * e_plain, "{e_mixed} vs {e_plain}");
    }

    #[test]
    fn lower_bound_lies_below_the_spectrum_and_near_it() {
        // Source: exact circulant spectrum (Gray 2006), as in `ring_spectrum_with_its_pairs`.
        // The bound must not exceed the smallest eigenvalue (else the filter would amplify
        // it); it should sit well above −1 for this positive-weight ring, whose spectrum
        // bottoms out near 0.
        for (n, k, seed) in [(3000, 3, 1), (5000, 4, 2), (2000, 1, 3)] {
            let (s, exact) = ring(n, k, seed);
            let low = *exact.last().unwrap();
            let c = Compact::of(s).unwrap();
            let mut rng = ChaCha8Rng::seed_from_u64(seed);
            let l = lower_bound(&c, n, &mut rng).unwrap();
            assert!(l <= low, "bound {l} above the smallest eigenvalue {low}");
            assert!(
                l > low - 0.5,
                "bound {l} far below the smallest eigenvalue {low}"
            );
        }
    }

    #[test]
    fn too_small_a_graph_is_an_error() {
        let (s, _) = ring(30, 2, 4);
        assert!(matches!(
            top_eigen_chebyshev(&s, 11, 0, 1e-10),
            Err(Error::Analysis(_))
        ));
    }
}
