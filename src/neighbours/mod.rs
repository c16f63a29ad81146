//! Exact k-nearest-neighbour search, shared by `embed` (the kNN graph), `dimension` (the
//! neighbour tables of its estimators) and `separate` (the vote).
//!
//! In: reference rows, query rows (the references themselves or other rows of the same width)
//! and k. Out: a [`Neighbors`] table: for each query the k nearest reference rows and their
//! squared Euclidean distances, nearest first, ties broken by the smaller reference index.
//!
//! One distance ([`Points::dist2`]), one running k-best list ([`TopK`]), one k-d tree
//! ([`KdTree`]), two exact paths ([`Path`]):
//! - the k-d tree (Bentley 1975; Friedman, Bentley & Finkel 1977; the incremental cell
//!   distance of Arya & Mount 1993), fast when the points have few intrinsic dimensions;
//! - blocked brute force: ‖x−y‖² = ‖x‖² + ‖y‖² − 2x·y with the cross products of a block of
//!   queries against a block of references from one dense matrix product (faer), used only as
//!   a screen: a pair whose expansion, less a bound on its rounding, exceeds the current k-th
//!   distance is dropped, every other pair is measured with [`Points::dist2`]. Fast in any
//!   dimension when the tree would visit most points.
//!
//! [`Path::Auto`] asks the tree first: below [`MIN_TREE_POINTS`] points, or when [`PROBES`]
//! seeded probe queries visit more than [`PROBE_SHARE`] of the points on average (high
//! intrinsic dimension), it takes brute force. Both paths return the exact k nearest with the
//! same distances (the same function on the same rows), so the table depends neither on the
//! path nor on the thread count. A query that is itself a reference row finds itself at
//! distance 0 unless [`Options::exclude_self`] leaves its own row out; duplicated points are
//! neighbours at distance exactly 0.

mod brute;
mod tree;

pub use tree::{KdTree, LEAF_SIZE};

use crate::error::{Error, Result};
use crate::points::Points;
use rayon::prelude::*;

/// Fewest reference points for which [`Path::Auto`] tries the k-d tree (common practice).
pub const MIN_TREE_POINTS: usize = 1000;
/// Share of the reference points the probe queries may visit on average before
/// [`Path::Auto`] takes brute force (common practice: a tree that visits a quarter of the
/// points is no faster than the dense products).
pub const PROBE_SHARE: f64 = 0.25;
/// Probe queries of [`Path::Auto`].
pub const PROBES: usize = 24;

/// The k nearest reference rows of every query row.
#[derive(Debug, Clone, PartialEq)]
pub struct Neighbors {
    /// Number of queries.
    pub n: usize,
    /// Neighbours per query.
    pub k: usize,
    /// Row-major `n × k` reference indices, nearest first.
    pub index: Vec<usize>,
    /// Row-major `n × k` squared distances, non-decreasing along each row.
    pub dist2: Vec<f64>,
}

impl Neighbors {
    /// Indices of the neighbours of query `i`.
    pub fn index_of(&self, i: usize) -> &[usize] {
        &self.index[i * self.k..(i + 1) * self.k]
    }
    /// Squared distances of the neighbours of query `i`.
    pub fn dist2_of(&self, i: usize) -> &[f64] {
        &self.dist2[i * self.k..(i + 1) * self.k]
    }
    /// The table as (indices, Euclidean distances), both row-major `n × k`.
    pub fn into_table(self) -> (Vec<usize>, Vec<f64>) {
        let dist = self.dist2.into_iter().map(f64::sqrt).collect();
        (self.index, dist)
    }
}

/// Which exact search answers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Path {
    /// The tree when its probe queries visit few points, else brute force (module notes).
    #[default]
    Auto,
    /// Always the k-d tree.
    Tree,
    /// Always blocked brute force.
    Brute,
}

/// Options of a search among a point set's own rows ([`knn_own`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Options {
    /// Leave each query's own row out: its k nearest *other* rows (a duplicate of it still
    /// counts, at distance 0).
    pub exclude_self: bool,
    /// Which exact search.
    pub path: Path,
}

/// The k best (squared distance, index) pairs seen so far, sorted ascending by distance, then
/// index.
pub(crate) struct TopK {
    k: usize,
    items: Vec<(f64, usize)>,
}

impl TopK {
    pub(crate) fn new(k: usize) -> Self {
        TopK {
            k,
            items: Vec::with_capacity(k + 1),
        }
    }
    /// Current k-th distance (infinity until k items are held).
    pub(crate) fn worst(&self) -> f64 {
        if self.items.len() < self.k {
            f64::INFINITY
        } else {
            self.items.last().map_or(f64::INFINITY, |x| x.0)
        }
    }
    pub(crate) fn push(&mut self, d2: f64, idx: usize) {
        if self.items.len() == self.k {
            match self.items.last() {
                Some(&(w, wi)) if d2 > w || (d2 == w && idx >= wi) => return,
                _ => {}
            }
        }
        let pos = self
            .items
            .partition_point(|&(d, i)| d < d2 || (d == d2 && i < idx));
        self.items.insert(pos, (d2, idx));
        self.items.truncate(self.k);
    }
    /// The pairs held, nearest first.
    pub(crate) fn items(&self) -> &[(f64, usize)] {
        &self.items
    }
    /// Empty again, for the next query.
    pub(crate) fn clear(&mut self) {
        self.items.clear();
    }
}

/// Check the shapes of a search of `queries` among `reference` whose k is the parameter `key`.
pub(crate) fn check_shapes(
    reference: &Points,
    queries: &Points,
    k: usize,
    key: &str,
) -> Result<()> {
    if queries.dim != reference.dim {
        return Err(Error::Analysis(format!(
            "neighbour search: queries have {} coordinates, references {}",
            queries.dim, reference.dim
        )));
    }
    if k == 0 || k > reference.n {
        return Err(Error::param(
            key,
            format!(
                "{k}; allowed 1 to the number of reference points ({})",
                reference.n
            ),
        ));
    }
    Ok(())
}

/// `k` other points must exist (1 ≤ k < n) and the points must have coordinates.
fn check_others(points: &Points, k: usize) -> Result<()> {
    if k == 0 || k >= points.n {
        return Err(Error::param(
            "k",
            format!(
                "{k} neighbours; allowed 1 to n − 1 = {} for {} points",
                points.n.saturating_sub(1),
                points.n
            ),
        ));
    }
    if points.dim == 0 {
        return Err(Error::Analysis(
            "nearest neighbours need points with at least one coordinate".to_string(),
        ));
    }
    Ok(())
}

/// Exact k nearest rows of `reference` for every row of `queries` ([`Path::Auto`]). A query
/// that is itself a reference row finds itself at distance 0; when `queries` is `reference`
/// (the same object) the search runs as [`knn_own`] with the self included.
///
/// Errors: dimension mismatch; k = 0 or more than the reference rows.
pub fn knn(reference: &Points, queries: &Points, k: usize) -> Result<Neighbors> {
    knn_path(reference, queries, k, Path::Auto)
}

/// [`knn`] by the given path.
///
/// Errors: as [`knn`].
pub fn knn_path(reference: &Points, queries: &Points, k: usize, path: Path) -> Result<Neighbors> {
    check_shapes(reference, queries, k, "neighbors")?;
    if std::ptr::eq(reference, queries) {
        return Ok(own(
            reference,
            reference.n,
            k,
            Options {
                exclude_self: false,
                path,
            },
        ));
    }
    let nq = queries.n;
    if let Some(tree) = choose(reference, k, false, path) {
        // Queries searched in the order of the leaves they fall in, so consecutive searches
        // visit the same cells while they are in cache; each answer does not depend on it.
        let mut order: Vec<(usize, usize)> = (0..nq)
            .into_par_iter()
            .map(|i| (tree.leaf_of(queries.row(i)), i))
            .collect();
        order.par_sort_unstable();
        let order: Vec<usize> = order.into_iter().map(|(_, i)| i).collect();
        Ok(tree.table(&order, nq, k, |i| (queries.row(i), usize::MAX)))
    } else {
        Ok(brute::table(reference, &queries.data, nq, k, false))
    }
}

/// Exact k nearest rows of `points` for each of its first `rows` rows (row-major `rows × k`).
/// With `exclude_self` each row's own index is left out.
///
/// Errors: k out of range (1 to n, or 1 to n − 1 without the self); without the self, also
/// points without coordinates.
pub fn knn_own(points: &Points, rows: usize, k: usize, opts: Options) -> Result<Neighbors> {
    if opts.exclude_self {
        check_others(points, k)?;
    } else {
        check_shapes(points, points, k, "neighbors")?;
    }
    Ok(own(points, rows.min(points.n), k, opts))
}

/// The search of [`knn_own`] after its checks.
fn own(points: &Points, rows: usize, k: usize, opts: Options) -> Neighbors {
    if let Some(tree) = choose(points, k, opts.exclude_self, opts.path) {
        // The rows searched in the tree's order: consecutive queries are close and visit the
        // same cells, which stay in cache.
        let order: Vec<usize> = tree.order().iter().copied().filter(|&i| i < rows).collect();
        let skip = |i: usize| if opts.exclude_self { i } else { usize::MAX };
        tree.table(&order, rows, k, |i| (points.row(i), skip(i)))
    } else {
        brute::table(points, &points.data, rows, k, opts.exclude_self)
    }
}

/// The tree when `path` (or, for [`Path::Auto`], the probe queries) says so; `None` for brute
/// force.
fn choose(reference: &Points, k: usize, exclude_self: bool, path: Path) -> Option<KdTree<'_>> {
    match path {
        Path::Tree => Some(KdTree::new(reference)),
        Path::Brute => None,
        Path::Auto if reference.dim == 0 => Some(KdTree::new(reference)),
        Path::Auto if reference.n < MIN_TREE_POINTS => None,
        Path::Auto => {
            let tree = KdTree::new(reference);
            tree.worth_it(k, exclude_self).then_some(tree)
        }
    }
}

/// Exact k-nearest-neighbour table among a point set: for every point the indices and
/// Euclidean distances of its `k` nearest *other* points, ascending (ties by index), row-major
/// `n × k` ([`knn_own`] without the self, [`Path::Auto`]).
///
/// Errors: k = 0, or k ≥ n (not enough other points), or points without coordinates.
pub fn knn_table(points: &Points, k: usize) -> Result<(Vec<usize>, Vec<f64>)> {
    knn_table_rows(points, points.n, k)
}

/// [`knn_table`] for the first `rows` points only (their neighbours among all points):
/// row-major `rows × k`.
///
/// Errors: as [`knn_table`].
pub fn knn_table_rows(points: &Points, rows: usize, k: usize) -> Result<(Vec<usize>, Vec<f64>)> {
    let opts = Options {
        exclude_self: true,
        path: Path::Auto,
    };
    Ok(knn_own(points, rows, k, opts)?.into_table())
}

/// Distances from each point to its `k` nearest other points, ascending; row-major `n × k`
/// (the distances of [`knn_table`]).
///
/// Errors: as [`knn_table`].
pub fn knn_distances(points: &Points, k: usize) -> Result<Vec<f64>> {
    Ok(knn_table(points, k)?.1)
}

#[cfg(test)]
pub(crate) mod tests;
