//! Sparse diffusion kernel on a k-nearest-neighbour graph and its top eigenpairs.
//!
//! In: a [`Neighbors`] table of the fit points (each point's k nearest, itself included), the
//! kernel scale (one ε or local scales σ_i), α. Out: the kernel row sums q, the degrees d of the
//! α-normalised kernel, and the top eigenpairs of S = D^{−½} K^α D^{−½}.
//!
//! Kernel (Coifman & Lafon 2006): K_ij = exp(−‖x_i−x_j‖²/s_ij) on the edges of the kNN graph
//! made symmetric (an edge when either point is among the other's k nearest; the weight is
//! symmetric by construction), plus K_ii = 1; s_ij = ε, or σ_iσ_j for the local scaling of
//! Zelnik-Manor & Perona (2004). q_i = Σ_j K_ij; K^α_ij = K_ij/(q_i^α q_j^α); d_i = Σ_j K^α_ij.
//! Memory O(N·k); no N×N matrix is formed.
//!
//! Eigensolver: shift-invert (e.g. Saad, "Numerical Methods for Large Eigenvalue Problems",
//! 2011, ch. 4). The top of a diffusion spectrum is tightly clustered near 1, which slows plain
//! Krylov methods and lets them miss or duplicate eigenvalues. With A = (1+σ)I − S (positive
//! definite for σ > 0, since the eigenvalues of S lie in [−1, 1]), the sparse Cholesky factor of
//! A (faer, fill-reducing ordering) applies A⁻¹, whose largest eigenvalues μ = 1/(1+σ−λ) belong
//! to the λ nearest 1 and are well separated. A block Krylov–Schur iteration (Stewart 2002;
//! [`super::block_krylov`], four right-hand sides per solve) finds them, or, should it break
//! down, faer's single-vector `partial_self_adjoint_eigen`; λ = 1 + σ − 1/μ. If the factor would exceed
//! its memory budget (heavy fill-in, as for the kNN graph of a noisy high-dimensional cloud) or
//! the factorisation fails, Chebyshev-filtered subspace iteration on S itself
//! ([`super::chebyshev`]) finds them to a residual of 10⁻¹⁰. The sequential ordering and
//! symbolic analysis that decide whether the factor fits run beside the Chebyshev iteration,
//! which gives up as soon as the factor is known to fit, so on two cores deciding costs little
//! wall time; the answer used depends only on that decision, never on timing.

use crate::error::{Error, Result};
use crate::neighbours::Neighbors;
use faer::dyn_stack::{MemBuffer, MemStack, StackReq};
use faer::matrix_free::eigen::{
    partial_self_adjoint_eigen, partial_self_adjoint_eigen_scratch, PartialEigenParams,
};
use faer::matrix_free::LinOp;
use faer::sparse::linalg::cholesky::{
    factorize_symbolic_cholesky, LltRef, SymbolicCholesky, SymmetricOrdering,
};
use faer::sparse::{SparseColMat, SymbolicSparseColMat};
use faer::{Col, Conj, Mat, MatMut, MatRef, Par, Side};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;
use std::sync::atomic::{AtomicBool, Ordering};

/// Shift σ of the shift-invert transform.
pub const SHIFT: f64 = 1e-5;
/// Largest Cholesky factor, as a multiple of the stored entries of S. Above it the
/// Chebyshev-filtered iteration is used: its block products run in parallel, while the
/// factorisation and the triangular solves are sequential (for thread-count-independent bits).
/// Measured (docs/performance.md): 50 000 beat-window landmarks in 20 PCA axes give a factor
/// of 44 × the entries of S, and shift-invert then took longer than the Chebyshev iteration.
pub const FILL_FACTOR: usize = 20;
/// Convergence tolerance handed to the Krylov–Schur solver.
const TOLERANCE: f64 = 1e-12;
/// Residual bound ‖S v − λ v‖ (estimated from the Krylov relation) of the block shift-invert
/// iteration.
const BLOCK_TOLERANCE: f64 = 1e-11;
/// Residual bound ‖S v − λ v‖ of the Chebyshev-filtered subspace iteration.
const CHEBYSHEV_TOLERANCE: f64 = 1e-10;

/// A symmetric sparse matrix in compressed rows, both triangles and the diagonal stored.
#[derive(Debug, Clone)]
pub struct SymCsr {
    /// Number of rows (= columns).
    pub n: usize,
    /// Row starts into `col`/`val` (n + 1 entries).
    pub ptr: Vec<usize>,
    /// Column of each entry, increasing within a row.
    pub col: Vec<usize>,
    /// Value of each entry.
    pub val: Vec<f64>,
}

impl SymCsr {
    /// Row sums.
    pub fn row_sums(&self) -> Vec<f64> {
        (0..self.n)
            .into_par_iter()
            .map(|i| self.val[self.ptr[i]..self.ptr[i + 1]].iter().sum())
            .collect()
    }

    /// y = self · x.
    pub fn matvec(&self, x: &[f64], y: &mut [f64]) {
        y.par_iter_mut().enumerate().for_each(|(i, yi)| {
            let (a, b) = (self.ptr[i], self.ptr[i + 1]);
            *yi = self.col[a..b]
                .iter()
                .zip(&self.val[a..b])
                .map(|(&j, &v)| v * x[j])
                .sum();
        });
    }

    /// Number of stored entries.
    pub fn nnz(&self) -> usize {
        self.val.len()
    }
}

/// The symmetrised kernel K on the kNN graph (see the module notes). `scale(i, j)` is s_ij.
///
/// Row i holds the union of i's neighbours and the points listing i, each once, in increasing
/// column order: the transposed lists come out sorted by a counting pass, so no sort of all
/// edges is needed. The weight of the edge {a, b} (a < b) is computed from the squared distance
/// in a's list when b is there, else in b's, in both rows alike, so K is symmetric bit for bit.
pub fn kernel_graph(nb: &Neighbors, scale: &(dyn Fn(usize, usize) -> f64 + Sync)) -> SymCsr {
    let n = nb.n;
    // Transposed lists: for each j, the rows i ≠ j listing j, in increasing i.
    let mut rptr = vec![0usize; n + 1];
    for i in 0..n {
        for &j in nb.index_of(i) {
            if j != i {
                rptr[j + 1] += 1;
            }
        }
    }
    for j in 0..n {
        rptr[j + 1] += rptr[j];
    }
    let mut fill = rptr[..n].to_vec();
    let mut rsrc = vec![0usize; rptr[n]];
    let mut rd2 = vec![0.0; rptr[n]];
    for i in 0..n {
        for (&j, &d2) in nb.index_of(i).iter().zip(nb.dist2_of(i)) {
            if j != i {
                rsrc[fill[j]] = i;
                rd2[fill[j]] = d2;
                fill[j] += 1;
            }
        }
    }
    drop(fill);
    let rows: Vec<Vec<(usize, f64)>> = (0..n)
        .into_par_iter()
        .map(|i| {
            let mut own: Vec<(usize, f64)> = nb
                .index_of(i)
                .iter()
                .zip(nb.dist2_of(i))
                .filter(|(&j, _)| j != i)
                .map(|(&j, &d2)| (j, d2))
                .collect();
            own.sort_by_key(|e| e.0);
            own.dedup_by_key(|e| e.0);
            let rev = &rsrc[rptr[i]..rptr[i + 1]];
            let rev_d2 = &rd2[rptr[i]..rptr[i + 1]];
            let mut row = Vec::with_capacity(own.len() + rev.len() + 1);
            let (mut x, mut y) = (0, 0);
            let mut diagonal = false;
            let weight = |j: usize, d2: f64| {
                let (a, b) = if i < j { (i, j) } else { (j, i) };
                (-d2 / scale(a, b)).exp()
            };
            loop {
                let jo = own.get(x).map_or(usize::MAX, |e| e.0);
                let jr = rev.get(y).copied().unwrap_or(usize::MAX);
                let j = jo.min(jr);
                if !diagonal && i < j {
                    row.push((i, 1.0));
                    diagonal = true;
                }
                if j == usize::MAX {
                    break;
                }
                // d2 from the list of the smaller index when both lists hold the edge.
                let d2 = match (jo == j, jr == j) {
                    (true, true) if i < j => own[x].1,
                    (true, true) => rev_d2[y],
                    (true, false) => own[x].1,
                    _ => rev_d2[y],
                };
                row.push((j, weight(j, d2)));
                x += usize::from(jo == j);
                y += usize::from(jr == j);
            }
            row
        })
        .collect();
    drop((rsrc, rd2));
    let mut ptr = Vec::with_capacity(n + 1);
    ptr.push(0);
    for r in &rows {
        ptr.push(ptr.last().expect("ptr") + r.len());
    }
    let mut col = Vec::with_capacity(ptr[n]);
    let mut val = Vec::with_capacity(ptr[n]);
    for r in rows {
        for (j, w) in r {
            col.push(j);
            val.push(w);
        }
    }
    SymCsr { n, ptr, col, val }
}

/// α-normalise `k` in place (K^α_ij = K_ij/(q_i^α q_j^α)); returns (q, d) with d the row sums
/// of K^α. Then turn it into S = D^{−½} K^α D^{−½} in place.
pub fn normalise(k: &mut SymCsr, alpha: f64) -> (Vec<f64>, Vec<f64>) {
    let (q, d, _) = normalise_scaled(k, alpha, &[], 0.0);
    (q, d)
}

/// The normalisation of a variable-bandwidth kernel (Berry & Harlim 2016), in place.
///
/// With local scales ρ (empty: all 1) and the dimension `dim` of the density estimate:
/// q_i = (Σ_j K_ij)/ρ_i^dim, K^a_ij = K_ij/(q_i^a q_j^a), d_i = Σ_j K^a_ij, R = diag(ρ²). The
/// generator R⁻¹(D⁻¹K^a − I) is self-adjoint under D R; `k` becomes its symmetric, shifted form
/// A = I + c·((DR)^{−½} K^a (DR)^{−½} − R⁻¹) with c = min ρ², whose spectrum lies in [−1, 1]
/// with the trivial eigenvalue 1 (eigenvector (DR)^{½}·1). With ρ = 1 this is
/// S = D^{−½} K^a D^{−½}. Returns (q, d, c).
pub fn normalise_scaled(
    k: &mut SymCsr,
    a: f64,
    rho: &[f64],
    dim: f64,
) -> (Vec<f64>, Vec<f64>, f64) {
    let mut q = k.row_sums();
    if !rho.is_empty() {
        q.iter_mut().zip(rho).for_each(|(v, r)| *v /= r.powf(dim));
    }
    let qa: Vec<f64> = q.iter().map(|v| v.powf(a)).collect();
    scale_sym(k, &qa);
    let d = k.row_sums();
    let r2: Vec<f64> = (0..k.n)
        .map(|i| rho.get(i).map_or(1.0, |r| r * r))
        .collect();
    let c = r2.iter().copied().fold(f64::INFINITY, f64::min);
    let sd: Vec<f64> = d.iter().zip(&r2).map(|(v, r)| (v * r).sqrt()).collect();
    scale_sym(k, &sd);
    if !rho.is_empty() {
        for (i, &ri) in r2.iter().enumerate() {
            for e in k.ptr[i]..k.ptr[i + 1] {
                k.val[e] *= c;
                if k.col[e] == i {
                    k.val[e] += 1.0 - c / ri;
                }
            }
        }
    }
    (q, d, c)
}

/// The block of `s` on the rows and columns `idx` (increasing), renumbered 0..idx.len().
pub fn submatrix(s: &SymCsr, idx: &[usize]) -> SymCsr {
    let mut pos = std::collections::HashMap::with_capacity(idx.len());
    for (r, &i) in idx.iter().enumerate() {
        pos.insert(i, r);
    }
    let mut ptr = Vec::with_capacity(idx.len() + 1);
    let (mut col, mut val) = (Vec::new(), Vec::new());
    ptr.push(0);
    for &i in idx {
        for e in s.ptr[i]..s.ptr[i + 1] {
            if let Some(&c) = pos.get(&s.col[e]) {
                col.push(c);
                val.push(s.val[e]);
            }
        }
        ptr.push(col.len());
    }
    SymCsr {
        n: idx.len(),
        ptr,
        col,
        val,
    }
}

/// Divide entry (i, j) by f_i f_j.
fn scale_sym(k: &mut SymCsr, f: &[f64]) {
    for i in 0..k.n {
        for e in k.ptr[i]..k.ptr[i + 1] {
            k.val[e] /= f[i] * f[k.col[e]];
        }
    }
}

/// A⁻¹ for A = (1+σ)I − S, applied through a sparse Cholesky factor.
#[derive(Debug)]
struct ShiftInvert {
    n: usize,
    symbolic: SymbolicCholesky<u32>,
    values: Vec<f64>,
}

impl LinOp<f64> for ShiftInvert {
    fn apply_scratch(&self, rhs_ncols: usize, par: Par) -> StackReq {
        self.symbolic.solve_in_place_scratch::<f64>(rhs_ncols, par)
    }
    fn nrows(&self) -> usize {
        self.n
    }
    fn ncols(&self) -> usize {
        self.n
    }
    fn apply(&self, out: MatMut<'_, f64>, rhs: MatRef<'_, f64>, par: Par, st: &mut MemStack) {
        let mut out = out;
        out.copy_from(rhs);
        LltRef::<u32, f64>::new(&self.symbolic, &self.values).solve_in_place_with_conj(
            Conj::No,
            out,
            par,
            st,
        );
        crate::cpu::clear_upper_state_here();
    }
    fn conj_apply(&self, out: MatMut<'_, f64>, rhs: MatRef<'_, f64>, par: Par, s: &mut MemStack) {
        self.apply(out, rhs, par, s);
    }
}

/// Column groups of a block solve, solved side by side (see `run_block`).
const SPLIT: usize = 2;

/// The lower triangle of A = (1+σ)I − S in compressed columns. S is symmetric with sorted
/// rows, so the entries j ≥ i of its row i are, in order, the rows of column i of the lower
/// triangle: no sort is needed. Indices are 32-bit (half the memory of the ordering and the
/// symbolic analysis); `None` when the matrix is too large for them.
fn shifted_lower(s: &SymCsr) -> Option<SparseColMat<u32, f64>> {
    if s.n >= u32::MAX as usize || s.nnz() >= u32::MAX as usize {
        return None;
    }
    let n = s.n;
    let mut col_ptr = Vec::with_capacity(n + 1);
    let mut row_idx = Vec::with_capacity(s.nnz() / 2 + n);
    let mut val = Vec::with_capacity(s.nnz() / 2 + n);
    col_ptr.push(0u32);
    for i in 0..n {
        for e in s.ptr[i]..s.ptr[i + 1] {
            let j = s.col[e];
            if j >= i {
                row_idx.push(j as u32);
                val.push(if j == i {
                    1.0 + SHIFT - s.val[e]
                } else {
                    -s.val[e]
                });
            }
        }
        col_ptr.push(row_idx.len() as u32);
    }
    let symbolic = SymbolicSparseColMat::new_checked(n, n, col_ptr, None, row_idx);
    Some(SparseColMat::new(symbolic, val))
}

/// Sparse Cholesky factor of the lower triangle `a`, or `None` when the factor would exceed
/// `budget` stored values or the factorisation fails.
/// `fits` is set as soon as the symbolic analysis finds the factor within its budget.
fn factor(a: &SparseColMat<u32, f64>, budget: usize, fits: &AtomicBool) -> Option<ShiftInvert> {
    let symbolic = factorize_symbolic_cholesky(
        a.symbolic(),
        Side::Lower,
        SymmetricOrdering::Amd,
        Default::default(),
    )
    .ok()?;
    let len = symbolic.len_val();
    if len > budget {
        return None;
    }
    fits.store(true, Ordering::Relaxed);
    // Sequential on purpose: parallel supernode updates sum in an order that depends on the
    // thread count, and the eigenvalues then differ in their last bits between `--jobs` values.
    let par = Par::Seq;
    let mut values = vec![0.0; len];
    let mut mem =
        MemBuffer::try_new(symbolic.factorize_numeric_llt_scratch::<f64>(par, Default::default()))
            .ok()?;
    symbolic
        .factorize_numeric_llt::<f64>(
            &mut values,
            a.as_ref(),
            Side::Lower,
            Default::default(),
            par,
            MemStack::new(&mut mem),
            Default::default(),
        )
        .ok()?;
    crate::cpu::clear_upper_state_here();
    Some(ShiftInvert {
        n: a.nrows(),
        symbolic,
        values,
    })
}

/// Which solver produced the eigenpairs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Solver {
    /// Shift-invert with a sparse Cholesky factor.
    ShiftInvert,
    /// Chebyshev-filtered subspace iteration on S (when the Cholesky factor would not fit its
    /// budget or fails); see [`super::chebyshev`].
    Chebyshev,
    /// Each connected component solved on its own and the spectra joined
    /// ([`super::components`]).
    Components,
    /// Dense symmetric eigendecomposition, for graphs too small for a Krylov subspace (the
    /// Krylov–Schur iteration needs a subspace smaller than the matrix).
    Dense,
}

/// The `nev` largest eigenpairs of the dense symmetric `a` (non-increasing), by a sequential
/// decomposition: `Mat::self_adjoint_eigen` runs with the global (thread-count dependent)
/// parallelism, the sequential one gives the same bits for every thread count.
pub(crate) fn top_dense_seq(a: &Mat<f64>, nev: usize) -> Result<(Vec<f64>, Mat<f64>)> {
    let n = a.nrows();
    let mut vals = faer::diag::Diag::<f64>::zeros(n);
    let mut u = Mat::<f64>::zeros(n, n);
    let mut mem = MemBuffer::new(faer::linalg::evd::self_adjoint_evd_scratch::<f64>(
        n,
        faer::linalg::evd::ComputeEigenvectors::Yes,
        Par::Seq,
        Default::default(),
    ));
    faer::linalg::evd::self_adjoint_evd(
        a.as_ref(),
        vals.as_mut(),
        Some(u.as_mut()),
        Par::Seq,
        MemStack::new(&mut mem),
        Default::default(),
    )
    .map_err(|e| Error::Analysis(format!("diffusion map eigensolver failed: {e:?}")))?;
    crate::cpu::clear_upper_state_here();
    let vals = vals.column_vector();
    // Dense eigenvalues come in non-decreasing order.
    let values: Vec<f64> = (0..nev.min(n)).map(|l| vals[n - 1 - l]).collect();
    if values.iter().any(|v| !v.is_finite()) {
        return Err(Error::Analysis(
            "diffusion map eigensolver gave non-finite eigenvalues".into(),
        ));
    }
    let vectors = Mat::<f64>::from_fn(n, nev.min(n), |i, j| u[(i, n - 1 - j)]);
    Ok((values, vectors))
}

/// Graphs up to this many points are solved densely (at most 8 MB of matrix).
pub const DENSE_MAX_POINTS: usize = 1000;

/// Top eigenpairs of a sparse symmetric S.
#[derive(Debug, Clone)]
pub struct TopEigen {
    /// Eigenvalues of S, non-increasing.
    pub values: Vec<f64>,
    /// Eigenvectors as columns (unit length), same order.
    pub vectors: Mat<f64>,
    /// Largest residual ‖S v − λ v‖ over the pairs.
    pub residual: f64,
    /// Residual ‖S v − λ v‖ of each pair, same order.
    pub residuals: Vec<f64>,
    /// Solver used.
    pub solver: Solver,
    /// Chebyshev solver: its block products and the lower spectrum bound (0 and NaN for the
    /// other solvers).
    pub chebyshev_work: (usize, f64),
}

fn run_krylov(op: &dyn LinOp<f64>, n: usize, nev: usize, seed: u64) -> (Vec<f64>, Mat<f64>, usize) {
    // Sequential so the result does not depend on the rayon pool's size (see `factor`).
    let par = Par::Seq;
    let params = PartialEigenParams {
        max_restarts: 1000,
        max_dim: (2 * nev + 20).max(40).min(n),
        ..PartialEigenParams::default()
    };
    let mut mem = MemBuffer::new(partial_self_adjoint_eigen_scratch(op, nev, par, params));
    let mut rng = ChaCha8Rng::seed_from_u64(seed ^ 0x5eed_1a2c);
    let v0 = Col::<f64>::from_fn(n, |_| rng.gen::<f64>() - 0.5);
    let mut vecs = Mat::<f64>::zeros(n, nev);
    let mut vals = vec![0.0; nev];
    let info = partial_self_adjoint_eigen(
        vecs.as_mut(),
        &mut vals,
        op,
        v0.as_ref(),
        TOLERANCE,
        par,
        MemStack::new(&mut mem),
        params,
    );
    (vals, vecs, info.n_converged_eigen)
}

/// Block Krylov–Schur on A⁻¹ ([`super::block_krylov`]): each step solves for a block of
/// [`super::block_krylov::BLOCK`] right-hand sides in [`SPLIT`] fixed column groups, each
/// group one sequential call that reads the factor once for its columns, the groups side by
/// side on the thread pool. Group widths are fixed, so the bits do not depend on the thread
/// count.
/// `None`: no convergence or a breakdown (the single-vector Krylov–Schur is used then).
fn run_block(
    op: &ShiftInvert,
    n: usize,
    nev: usize,
    seed: u64,
) -> Result<Option<super::block_krylov::BlockEigen>> {
    let p = super::block_krylov::BLOCK;
    // The block's columns are solved in SPLIT fixed groups, one sequential solve each, the
    // groups side by side on the thread pool: a column's bits depend on its group's width only,
    // which is fixed, so they do not depend on the thread count.
    let q = p / SPLIT;
    let scratch = op.symbolic.solve_in_place_scratch::<f64>(q, Par::Seq);
    let solve_cols = |x: &[f64], j0: usize| -> Result<Mat<f64>> {
        let mut m = Mat::<f64>::from_fn(n, q, |i, j| x[i * p + j0 + j]);
        let mut mem = MemBuffer::try_new(scratch)
            .map_err(|_| Error::Analysis("shift-invert solve: out of memory".into()))?;
        LltRef::<u32, f64>::new(&op.symbolic, &op.values).solve_in_place_with_conj(
            Conj::No,
            m.as_mut(),
            Par::Seq,
            MemStack::new(&mut mem),
        );
        crate::cpu::clear_upper_state_here();
        Ok(m)
    };
    let apply = |x: &[f64]| -> Result<Vec<f64>> {
        let groups: Vec<Result<Mat<f64>>> = (0..SPLIT)
            .into_par_iter()
            .map(|g| solve_cols(x, g * q))
            .collect();
        let mut out = vec![0.0; n * p];
        for (g, m) in groups.into_iter().enumerate() {
            let m = m?;
            for (i, row) in out.chunks_exact_mut(p).enumerate() {
                for j in 0..q {
                    row[g * q + j] = m[(i, j)];
                }
            }
        }
        Ok(out)
    };
    // ‖A‖ ≤ 2 + σ, so the bound below holds for ‖S v − λ v‖.
    super::block_krylov::top_eigen_block(&apply, n, nev, seed, BLOCK_TOLERANCE, 2.0 + SHIFT, p)
}

/// The `nev` largest eigenpairs of S (see the module notes). Errors: the solver does not
/// converge, or `nev` exceeds the size.
pub fn top_eigen_sparse(s: &SymCsr, nev: usize, seed: u64) -> Result<TopEigen> {
    // Budget for the Cholesky factor: FILL_FACTOR times the stored entries of S, at least
    // 1 million values; above it (heavy fill-in, e.g. a kNN graph of a high-dimensional cloud)
    // the Chebyshev-filtered iteration on S is cheaper.
    top_eigen_sparse_within(s, nev, seed, (FILL_FACTOR * s.nnz()).max(1 << 20))
}

/// [`top_eigen_sparse`] with the Cholesky factor's budget (stored values) given.
pub(crate) fn top_eigen_sparse_within(
    s: &SymCsr,
    nev: usize,
    seed: u64,
    budget: usize,
) -> Result<TopEigen> {
    let n = s.n;
    if nev > n {
        return Err(Error::Analysis(format!(
            "eigensolver: {nev} eigenpairs asked of a {n}-point graph"
        )));
    }
    // faer's Krylov–Schur panics unless its subspace, max(our `max_dim`, 64, 2·nev) vectors
    // (faer 0.24, `operator::eigen`), is smaller than the matrix. Small graphs (up to 1000
    // points, an 8 MB matrix) are decomposed densely instead.
    if n <= DENSE_MAX_POINTS.max(2 * nev + 21) {
        let mut dense = Mat::<f64>::zeros(n, n);
        for i in 0..n {
            for e in s.ptr[i]..s.ptr[i + 1] {
                dense[(i, s.col[e])] = s.val[e];
            }
        }
        let (values, vectors) = top_dense_seq(&dense, nev)?;
        return finish(s, values, vectors, Solver::Dense);
    }
    // The ordering and symbolic analysis that decide whether the factor fits are sequential,
    // and so is the numeric factorisation; the Chebyshev iteration runs beside them on the
    // other threads and gives up as soon as the factor is known to fit. Which solver's answer
    // is used depends only on the symbolic analysis, so the result does not depend on timing
    // or on the thread count (with one thread the two run one after the other).
    let fits = AtomicBool::new(false);
    let (llt, beside) = rayon::join(
        || shifted_lower(s).and_then(|a| factor(&a, budget, &fits)),
        || super::chebyshev::top_eigen_chebyshev_unless(s, nev, seed, CHEBYSHEV_TOLERANCE, &fits),
    );
    let mut work = (0, f64::NAN);
    let (values, vectors, solver) = match llt {
        Some(op) => {
            if let Some(r) = run_block(&op, n, nev, seed)? {
                let lam: Vec<f64> = r.values.iter().map(|m| 1.0 + SHIFT - 1.0 / m).collect();
                let v = Mat::<f64>::from_fn(n, nev, |i, j| r.vectors[i * nev + j]);
                let mut out = finish(s, lam, v, Solver::ShiftInvert)?;
                out.chebyshev_work = work;
                return Ok(out);
            }
            let (mu, v, conv) = run_krylov(&op, n, nev, seed);
            if conv < nev || mu.iter().any(|m| !(m.is_finite() && *m > 0.0)) {
                return Err(Error::Analysis(format!(
                    "diffusion map eigensolver (shift-invert) converged on {conv} of {nev} \
                     eigenpairs"
                )));
            }
            let lam: Vec<f64> = mu.iter().map(|m| 1.0 + SHIFT - 1.0 / m).collect();
            (lam, v, Solver::ShiftInvert)
        }
        None => {
            // Stopped only when the symbolic analysis fitted but the numeric factorisation
            // then failed: run it again to the end.
            let r = match (fits.load(Ordering::Relaxed), beside?) {
                (false, Some(r)) => r,
                _ => super::chebyshev::top_eigen_chebyshev(s, nev, seed, CHEBYSHEV_TOLERANCE)?,
            };
            work = (r.products, r.lower_bound);
            (r.values, r.vectors, Solver::Chebyshev)
        }
    };
    let mut out = finish(s, values, vectors, solver)?;
    out.chebyshev_work = work;
    Ok(out)
}

/// Sort eigenpairs non-increasing and measure the largest residual ‖S v − λ v‖.
pub(crate) fn finish(
    s: &SymCsr,
    values: Vec<f64>,
    vectors: Mat<f64>,
    solver: Solver,
) -> Result<TopEigen> {
    let n = s.n;
    let nev = values.len();
    // Sort non-increasing.
    let mut order: Vec<usize> = (0..nev).collect();
    order.sort_by(|&a, &b| values[b].total_cmp(&values[a]).then(a.cmp(&b)));
    let vals: Vec<f64> = order.iter().map(|&i| values[i]).collect();
    let vecs = Mat::<f64>::from_fn(n, nev, |i, j| vectors[(i, order[j])]);
    // Residuals.
    let mut residuals = Vec::with_capacity(nev);
    let mut x = vec![0.0; n];
    let mut y = vec![0.0; n];
    for (l, &lam) in vals.iter().enumerate() {
        for (i, xi) in x.iter_mut().enumerate() {
            *xi = vecs[(i, l)];
        }
        s.matvec(&x, &mut y);
        let r: f64 = x
            .iter()
            .zip(&y)
            .map(|(a, b)| (b - lam * a) * (b - lam * a))
            .sum();
        residuals.push(r.sqrt());
    }
    Ok(TopEigen {
        values: vals,
        vectors: vecs,
        residual: residuals.iter().copied().fold(0.0, f64::max),
        residuals,
        solver,
        chebyshev_work: (0, f64::NAN),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::collections::BTreeMap;

    /// A kNN table of random points on a line (k = 4, itself first), so the lists are
    /// asymmetric: a point's neighbours need not list it.
    fn line_table(n: usize, seed: u64) -> (Vec<f64>, Neighbors) {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let x: Vec<f64> = (0..n).map(|_| rng.gen::<f64>()).collect();
        let k = 4;
        let (mut index, mut dist2) = (Vec::new(), Vec::new());
        for i in 0..n {
            let mut d: Vec<(f64, usize)> = (0..n).map(|j| ((x[i] - x[j]).powi(2), j)).collect();
            d.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
            for &(v, j) in &d[..k] {
                index.push(j);
                dist2.push(v);
            }
        }
        (x, Neighbors { n, k, index, dist2 })
    }

    #[test]
    fn kernel_graph_is_the_symmetrised_knn_kernel() {
        // Definition (module notes; Coifman & Lafon 2006): an edge when either point lists the
        // other, weight exp(−d²/s_ij), K_ii = 1; checked against a map built from it directly.
        let (x, nb) = line_table(300, 5);
        let scale = |a: usize, b: usize| 0.01 + 0.001 * ((a + b) % 7) as f64;
        let k = kernel_graph(&nb, &scale);
        let mut want: BTreeMap<(usize, usize), f64> = BTreeMap::new();
        for i in 0..nb.n {
            want.insert((i, i), 1.0);
            for &j in nb.index_of(i) {
                if j != i {
                    let (a, b) = (i.min(j), i.max(j));
                    let w = (-(x[a] - x[b]).powi(2) / scale(a, b)).exp();
                    want.insert((a, b), w);
                    want.insert((b, a), w);
                }
            }
        }
        assert_eq!(k.nnz(), want.len());
        for (e, (&(i, j), &w)) in want.iter().enumerate() {
            assert!(e >= k.ptr[i] && e < k.ptr[i + 1], "row of entry ({i}, {j})");
            assert_eq!(k.col[e], j);
            assert!(
                (k.val[e] - w).abs() <= 1e-15,
                "({i}, {j}): {} vs {w}",
                k.val[e]
            );
        }
        // Symmetric bit for bit.
        for i in 0..k.n {
            for e in k.ptr[i]..k.ptr[i + 1] {
                let j = k.col[e];
                let t = (k.ptr[j]..k.ptr[j + 1]).find(|&f| k.col[f] == i).unwrap();
                assert_eq!(k.val[e].to_bits(), k.val[t].to_bits());
            }
        }
    }

    #[test]
    fn either_solver_has_the_same_bits_for_one_and_two_threads() {
        // The Cholesky attempt and the Chebyshev iteration run side by side; which answer is
        // used depends only on whether the factor fits its budget, never on which finishes
        // first. A budget of 0 forces the Chebyshev answer, a large one the shift-invert one;
        // each must have the same bits in pools of 1 and 2 threads, and the two must agree
        // (residuals ≤ 1e-10, so eigenvalues to about 1e-9 on this graph's gaps).
        // 1500 seeded points in the unit square, 10 neighbours: a connected graph whose top
        // eigenvalues are apart by about 10⁻², so both solvers converge in a few rounds.
        let mut rng = ChaCha8Rng::seed_from_u64(4);
        let xy: Vec<f64> = (0..3000).map(|_| rng.gen::<f64>()).collect();
        let pts = crate::points::Points::new(1500, 2, xy).unwrap();
        let nb = crate::neighbours::knn(&pts, &pts, 11).unwrap();
        let mut s = kernel_graph(&nb, &|_, _| 0.01);
        normalise(&mut s, 1.0);
        let run = |threads: usize, budget: usize| {
            rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap()
                .install(|| top_eigen_sparse_within(&s, 4, 5, budget).unwrap())
        };
        for budget in [0, 1 << 30] {
            let (a, b) = (run(1, budget), run(2, budget));
            let want = if budget == 0 {
                Solver::Chebyshev
            } else {
                Solver::ShiftInvert
            };
            assert_eq!((a.solver, b.solver), (want, want));
            assert_eq!(a.values, b.values);
            for j in 0..4 {
                for i in 0..s.n {
                    assert_eq!(a.vectors[(i, j)].to_bits(), b.vectors[(i, j)].to_bits());
                }
            }
        }
        let (c, f) = (run(2, 0), run(2, 1 << 30));
        for (x, y) in c.values.iter().zip(&f.values) {
            assert!((x - y).abs() < 1e-9, "{x} vs {y}");
        }
    }

    #[test]
    fn shifted_lower_triangle_holds_one_plus_shift_minus_s() {
        // A = (1+σ)I − S, lower triangle (definition in the module notes).
        let (_, nb) = line_table(200, 9);
        let mut s = kernel_graph(&nb, &|_, _| 0.01);
        normalise(&mut s, 1.0);
        let a = shifted_lower(&s).unwrap();
        let mut count = 0;
        for (i, j, v) in a.triplet_iter().map(|t| (t.row, t.col, *t.val)) {
            assert!(i >= j);
            let e = (s.ptr[i]..s.ptr[i + 1]).find(|&f| s.col[f] == j).unwrap();
            let want = if i == j { 1.0 + SHIFT } else { 0.0 } - s.val[e];
            assert!((v - want).abs() <= 1e-15);
            count += 1;
        }
        assert_eq!(count, (s.nnz() + s.n) / 2);
    }
}
