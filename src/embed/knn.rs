//! Exact k-nearest-neighbour search with memory O(N·k).
//!
//! In: reference points, query points and k. Out: a [`Neighbors`] table: for each query the k
//! nearest reference rows and their squared Euclidean distances, nearest first.
//!
//! Two exact searches, chosen by dimension ([`KD_TREE_MAX_DIM`]):
//! - a k-d tree (Bentley 1975; Friedman, Bentley & Finkel 1977): median split on the coordinate
//!   of widest spread, buckets of at most [`LEAF_SIZE`] points, depth-first search that visits
//!   the nearer child first and prunes a child whose slab lies farther than the current k-th
//!   distance. Fast in low dimension (after PCA, or for low-dimensional feature sets);
//! - blocked brute force for any dimension: ‖x−y‖² = ‖x‖² + ‖y‖² − 2x·y with the cross products
//!   of a block of queries against a block of references computed by one dense matrix product
//!   (faer), the k best kept per query in a small sorted buffer. Blocks of queries run in
//!   parallel (rayon); memory is one block product per thread, never N×N.
//!
//! Ties are broken by the smaller reference index, so results do not depend on thread count.

use crate::error::{Error, Result};
use crate::points::Points;
use faer::reborrow::ReborrowMut;
use faer::{Mat, Par};
use rayon::prelude::*;

/// Largest dimension for which [`knn`] uses the k-d tree; above it, blocked brute force.
/// In higher dimension a tree prunes little and the dense products are faster (common practice;
/// the crossover on this machine is documented in docs/performance.md).
pub const KD_TREE_MAX_DIM: usize = 20;
/// Largest bucket of a k-d tree leaf.
pub const LEAF_SIZE: usize = 16;
/// Queries per brute-force block.
const QUERY_BLOCK: usize = 256;
/// References per brute-force block.
const REF_BLOCK: usize = 2048;

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
}

/// The k best (squared distance, index) pairs seen so far, sorted ascending.
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

/// A k-d tree over the rows of a point set (indices into it).
#[derive(Debug, Clone)]
pub struct KdTree<'a> {
    points: &'a Points,
    /// Point indices, permuted so that every node covers a contiguous range.
    perm: Vec<usize>,
    nodes: Vec<Node>,
    /// The points in `perm` order, so a leaf's rows are contiguous in memory.
    sorted: Vec<f64>,
}

#[derive(Debug, Clone)]
enum Node {
    Leaf {
        start: usize,
        end: usize,
    },
    Split {
        dim: usize,
        value: f64,
        left: usize,
        right: usize,
    },
}

impl<'a> KdTree<'a> {
    /// Build the tree (O(N log N) time, O(N) memory).
    pub fn new(points: &'a Points) -> Self {
        let mut tree = KdTree {
            points,
            perm: (0..points.n).collect(),
            nodes: Vec::new(),
            sorted: Vec::new(),
        };
        if points.n > 0 {
            tree.build(0, points.n);
        }
        let mut sorted = Vec::with_capacity(points.n * points.dim);
        for &i in &tree.perm {
            sorted.extend_from_slice(points.row(i));
        }
        tree.sorted = sorted;
        tree
    }

    fn build(&mut self, start: usize, end: usize) -> usize {
        let id = self.nodes.len();
        self.nodes.push(Node::Leaf { start, end });
        if end - start <= LEAF_SIZE || self.points.dim == 0 {
            return id;
        }
        // Coordinate of widest spread.
        let dim = self.points.dim;
        let mut lo = vec![f64::INFINITY; dim];
        let mut hi = vec![f64::NEG_INFINITY; dim];
        for &i in &self.perm[start..end] {
            for (d, &v) in self.points.row(i).iter().enumerate() {
                lo[d] = lo[d].min(v);
                hi[d] = hi[d].max(v);
            }
        }
        let (axis, spread) = (0..dim)
            .map(|d| (d, hi[d] - lo[d]))
            .fold((0, -1.0), |b, x| if x.1 > b.1 { x } else { b });
        if spread <= 0.0 {
            return id; // all points equal: one leaf
        }
        let mid = start + (end - start) / 2;
        let pts = self.points;
        self.perm[start..end].select_nth_unstable_by(mid - start, |&a, &b| {
            pts.row(a)[axis].total_cmp(&pts.row(b)[axis])
        });
        let value = pts.row(self.perm[mid])[axis];
        let left = self.build(start, mid);
        let right = self.build(mid, end);
        self.nodes[id] = Node::Split {
            dim: axis,
            value,
            left,
            right,
        };
        id
    }

    /// Depth-first search with the incremental distance of Arya & Mount (1993): `off[d]` is
    /// the query's offset from the current cell along axis d (0 inside), `rd` = Σ off², a lower
    /// bound on the squared distance to any point of the cell. A cell is skipped when that
    /// bound exceeds the current k-th distance (by more than a relative 1e-12, so rounding in
    /// the running sum never drops a point the plain search would keep).
    fn search(&self, node: usize, q: &[f64], rd: f64, off: &mut [f64], top: &mut TopK) {
        match self.nodes[node] {
            Node::Leaf { start, end } => {
                let dim = self.points.dim;
                for t in start..end {
                    let row = &self.sorted[t * dim..(t + 1) * dim];
                    let worst = top.worst();
                    // Partial sums of non-negative terms only grow, so stopping once one
                    // exceeds the k-th distance rejects only points `push` would reject.
                    let mut d2 = 0.0;
                    let mut rejected = false;
                    for (c, (x, y)) in q.chunks(4).zip(row.chunks(4)).enumerate() {
                        d2 += x.iter().zip(y).map(|(a, b)| (a - b) * (a - b)).sum::<f64>();
                        if d2 > worst * (1.0 + 1e-12) && (c + 1) * 4 < dim {
                            rejected = true;
                            break;
                        }
                    }
                    if !rejected {
                        top.push(Points::dist2(q, row), self.perm[t]);
                    }
                }
            }
            Node::Split {
                dim,
                value,
                left,
                right,
            } => {
                let diff = q[dim] - value;
                let (near, far) = if diff < 0.0 {
                    (left, right)
                } else {
                    (right, left)
                };
                self.search(near, q, rd, off, top);
                let old = off[dim];
                let far_rd = rd - old * old + diff * diff;
                if far_rd <= top.worst() * (1.0 + 1e-12) && diff * diff <= top.worst() {
                    off[dim] = diff;
                    self.search(far, q, far_rd, off, top);
                    off[dim] = old;
                }
            }
        }
    }

    /// The leaf the search for `q` starts in (the node reached by always taking the nearer
    /// child).
    fn leaf_of(&self, q: &[f64]) -> usize {
        let mut node = 0;
        if self.nodes.is_empty() {
            return 0;
        }
        while let Node::Split {
            dim,
            value,
            left,
            right,
        } = self.nodes[node]
        {
            node = if q[dim] - value < 0.0 { left } else { right };
        }
        node
    }

    /// The `k` nearest points of `q`: (squared distance, index), nearest first.
    pub fn nearest(&self, q: &[f64], k: usize) -> Vec<(f64, usize)> {
        let mut top = TopK::new(k);
        if !self.nodes.is_empty() {
            let mut off = vec![0.0; self.points.dim];
            self.search(0, q, 0.0, &mut off, &mut top);
        }
        top.items
    }
}

/// Check the shapes of a neighbour search.
fn check(reference: &Points, queries: &Points, k: usize) -> Result<()> {
    check_shapes(reference, queries, k, "neighbors")
}

/// Check the shapes of a neighbour search whose k is the parameter `key`.
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

/// Exact k nearest rows of `reference` for every row of `queries`, by k-d tree
/// ([`knn_kdtree`]) when the dimension is at most [`KD_TREE_MAX_DIM`], else by blocked brute
/// force ([`knn_brute`]). A query that is itself a reference row finds itself at distance 0.
pub fn knn(reference: &Points, queries: &Points, k: usize) -> Result<Neighbors> {
    if reference.dim <= KD_TREE_MAX_DIM {
        knn_kdtree(reference, queries, k)
    } else {
        knn_brute(reference, queries, k)
    }
}

/// Exact kNN by k-d tree (see the module notes). Errors: dimension mismatch, k out of range.
pub fn knn_kdtree(reference: &Points, queries: &Points, k: usize) -> Result<Neighbors> {
    check(reference, queries, k)?;
    let tree = KdTree::new(reference);
    let mut index = vec![0usize; queries.n * k];
    let mut dist2 = vec![0.0; queries.n * k];
    if std::ptr::eq(reference, queries) {
        // The references themselves, searched in the tree's order: consecutive queries are
        // close and visit the same cells, which stay in cache. Each query's answer does not
        // depend on the order.
        let found: Vec<Vec<(f64, usize)>> = tree
            .perm
            .par_iter()
            .map(|&i| tree.nearest(queries.row(i), k))
            .collect();
        for (&i, f) in tree.perm.iter().zip(found) {
            for (j, (d, idx)) in f.into_iter().enumerate() {
                index[i * k + j] = idx;
                dist2[i * k + j] = d;
            }
        }
    } else {
        // Queries searched in the order of the leaves they fall in, so consecutive searches
        // visit the same cells while they are in cache; the answers are then put back in
        // query order. Each query's answer does not depend on the order.
        let mut order: Vec<(usize, usize)> = (0..queries.n)
            .into_par_iter()
            .map(|i| (tree.leaf_of(queries.row(i)), i))
            .collect();
        order.par_sort_unstable();
        let mut s_index = vec![0usize; queries.n * k];
        let mut s_dist2 = vec![0.0; queries.n * k];
        s_index
            .par_chunks_mut(k)
            .zip(s_dist2.par_chunks_mut(k))
            .zip(order.par_iter())
            .for_each(|((ri, rd), &(_, i))| {
                for (j, (d, idx)) in tree.nearest(queries.row(i), k).into_iter().enumerate() {
                    ri[j] = idx;
                    rd[j] = d;
                }
            });
        let mut pos = vec![0usize; queries.n];
        for (r, &(_, i)) in order.iter().enumerate() {
            pos[i] = r;
        }
        index
            .par_chunks_mut(k)
            .zip(dist2.par_chunks_mut(k))
            .zip(pos.par_iter())
            .for_each(|((ri, rd), &r)| {
                ri.copy_from_slice(&s_index[r * k..(r + 1) * k]);
                rd.copy_from_slice(&s_dist2[r * k..(r + 1) * k]);
            });
    }
    Ok(Neighbors {
        n: queries.n,
        k,
        index,
        dist2,
    })
}

/// Squared row norms.
fn norms2(p: &Points) -> Vec<f64> {
    p.rows().map(|r| r.iter().map(|v| v * v).sum()).collect()
}

/// Exact kNN by blocked brute force with dense products (see the module notes). Errors:
/// dimension mismatch, k out of range.
pub fn knn_brute(reference: &Points, queries: &Points, k: usize) -> Result<Neighbors> {
    check(reference, queries, k)?;
    let dim = reference.dim;
    let rn = norms2(reference);
    let qn = norms2(queries);
    let mut index = vec![0usize; queries.n * k];
    let mut dist2 = vec![0.0; queries.n * k];
    index
        .par_chunks_mut(QUERY_BLOCK * k)
        .zip(dist2.par_chunks_mut(QUERY_BLOCK * k))
        .enumerate()
        .for_each(|(b, (bi, bd))| {
            let q0 = b * QUERY_BLOCK;
            let nq = bi.len() / k;
            let qm = Mat::<f64>::from_fn(nq, dim, |i, d| queries.data[(q0 + i) * dim + d]);
            let mut tops: Vec<TopK> = (0..nq).map(|_| TopK::new(k)).collect();
            let mut g = Mat::<f64>::zeros(nq, REF_BLOCK.min(reference.n));
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
                for (i, top) in tops.iter_mut().enumerate() {
                    let qi = qn[q0 + i];
                    for j in 0..nr {
                        // Rounding can make the expansion slightly negative: clamp at 0.
                        let d = (qi + rn[r0 + j] - 2.0 * gb[(i, j)]).max(0.0);
                        if d <= top.worst() {
                            top.push(d, r0 + j);
                        }
                    }
                }
            }
            for (i, top) in tops.into_iter().enumerate() {
                for (j, (_, idx)) in top.items.into_iter().enumerate() {
                    bi[i * k + j] = idx;
                    // Exact distance for the kept pairs (the expansion loses digits when
                    // ‖x‖ ≫ ‖x−y‖).
                    bd[i * k + j] = Points::dist2(queries.row(q0 + i), reference.row(idx));
                }
            }
        });
    // Re-sort each row by the exact distances.
    let mut out = Neighbors {
        n: queries.n,
        k,
        index,
        dist2,
    };
    sort_rows(&mut out);
    Ok(out)
}

/// Sort each row by (distance, index).
fn sort_rows(nb: &mut Neighbors) {
    let k = nb.k;
    nb.index
        .par_chunks_mut(k)
        .zip(nb.dist2.par_chunks_mut(k))
        .for_each(|(ri, rd)| {
            let mut pairs: Vec<(f64, usize)> = rd.iter().copied().zip(ri.iter().copied()).collect();
            pairs.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
            for (j, (d, i)) in pairs.into_iter().enumerate() {
                rd[j] = d;
                ri[j] = i;
            }
        });
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    fn cloud(n: usize, dim: usize, seed: u64) -> Points {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        Points::new(n, dim, (0..n * dim).map(|_| rng.gen::<f64>()).collect()).unwrap()
    }

    /// Naive O(N²) reference search.
    fn naive(r: &Points, q: &Points, k: usize) -> Vec<Vec<usize>> {
        q.rows()
            .map(|x| {
                let mut d: Vec<(f64, usize)> = r
                    .rows()
                    .enumerate()
                    .map(|(j, y)| (Points::dist2(x, y), j))
                    .collect();
                d.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
                d.into_iter().take(k).map(|p| p.1).collect()
            })
            .collect()
    }

    #[test]
    fn tree_and_brute_force_equal_naive_search() {
        // Exactness against the definition (common practice: compare with exhaustive search).
        for dim in [2, 7, 30] {
            let r = cloud(700, dim, dim as u64);
            let q = cloud(90, dim, 100 + dim as u64);
            let want = naive(&r, &q, 9);
            for nb in [
                knn_kdtree(&r, &q, 9).unwrap(),
                knn_brute(&r, &q, 9).unwrap(),
            ] {
                for (i, w) in want.iter().enumerate() {
                    assert_eq!(nb.index_of(i), &w[..], "dim {dim} query {i}");
                    let d = nb.dist2_of(i);
                    assert!(d.windows(2).all(|p| p[0] <= p[1]));
                }
            }
        }
        let r = cloud(50, 3, 1);
        assert!(knn(&r, &r, 0).is_err());
        assert!(knn(&r, &r, 51).is_err());
        assert!(knn(&r, &cloud(3, 2, 1), 2).is_err());
        // Self at distance 0 first.
        let nb = knn(&r, &r, 3).unwrap();
        assert!((0..50).all(|i| nb.index_of(i)[0] == i && nb.dist2_of(i)[0] == 0.0));
    }

    #[test]
    fn self_search_in_tree_order_equals_naive_search_for_any_pool() {
        // The references as their own queries take the tree-order path; exactness against the
        // definition (common practice: exhaustive search), with duplicated points for ties.
        for dim in [3, 12, 20] {
            let mut r = cloud(1500, dim, 7 + dim as u64);
            let first: Vec<f64> = r.row(0).to_vec();
            r.data[dim..2 * dim].copy_from_slice(&first);
            let want = naive(&r, &r, 11);
            let run = |threads: usize| {
                rayon::ThreadPoolBuilder::new()
                    .num_threads(threads)
                    .build()
                    .unwrap()
                    .install(|| knn_kdtree(&r, &r, 11).unwrap())
            };
            let (a, b) = (run(1), run(2));
            assert_eq!(a, b, "dim {dim}: 1 and 2 threads differ");
            for (i, w) in want.iter().enumerate() {
                assert_eq!(a.index_of(i), &w[..], "dim {dim} query {i}");
                for (&j, &d) in a.index_of(i).iter().zip(a.dist2_of(i)) {
                    assert_eq!(d, Points::dist2(r.row(i), r.row(j)));
                }
            }
        }
    }
}
