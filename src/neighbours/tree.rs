//! The k-d tree of the neighbour search (Bentley 1975; Friedman, Bentley & Finkel 1977): median
//! split on the coordinate of widest spread, buckets of at most [`LEAF_SIZE`] points, depth-first
//! search that visits the nearer child first and skips a child whose cell lies farther than the
//! current k-th distance, with the incremental cell distance of Arya & Mount (1993).

use super::{Neighbors, TopK, PROBES, PROBE_SHARE};
use crate::points::Points;
use rayon::prelude::*;

/// Largest bucket of a k-d tree leaf (common practice).
pub const LEAF_SIZE: usize = 16;

/// Relative margin on the pruning bounds: rounding in a running sum never drops a point the
/// exhaustive search would keep (far above the rounding of a sum of squares in f64).
const SLACK: f64 = 1e-12;

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

    /// The point indices in the tree's order (a leaf's points are consecutive).
    pub fn order(&self) -> &[usize] {
        &self.perm
    }

    /// Depth-first search: `off[d]` is the query's offset from the current cell along axis d
    /// (0 inside), `rd` = Σ off², a lower bound on the squared distance to any point of the
    /// cell. Point `skip` is left out. Counts the points it looks at in `seen`.
    #[allow(clippy::too_many_arguments)]
    fn search(
        &self,
        node: usize,
        q: &[f64],
        skip: usize,
        rd: f64,
        off: &mut [f64],
        top: &mut TopK,
        seen: &mut usize,
    ) {
        match self.nodes[node] {
            Node::Leaf { start, end } => {
                let dim = self.points.dim;
                for t in start..end {
                    let j = self.perm[t];
                    if j == skip {
                        continue;
                    }
                    *seen += 1;
                    let d2 = Points::dist2(q, &self.sorted[t * dim..(t + 1) * dim]);
                    if d2 <= top.worst() {
                        top.push(d2, j);
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
                self.search(near, q, skip, rd, off, top, seen);
                let old = off[dim];
                let far_rd = rd - old * old + diff * diff;
                // Not `<`: a point at exactly the k-th distance with a smaller index must still
                // be found. `diff²` is a lower bound of every far point's computed distance.
                if far_rd <= top.worst() * (1.0 + SLACK) && diff * diff <= top.worst() {
                    off[dim] = diff;
                    self.search(far, q, skip, far_rd, off, top, seen);
                    off[dim] = old;
                }
            }
        }
    }

    /// The leaf the search for `q` starts in (the node reached by always taking the nearer
    /// child).
    pub(super) fn leaf_of(&self, q: &[f64]) -> usize {
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

    /// Fill `top` with the k nearest points of `q` other than `skip` (`usize::MAX`: none);
    /// returns how many points were looked at.
    fn query(&self, q: &[f64], skip: usize, top: &mut TopK, off: &mut [f64]) -> usize {
        top.clear();
        off.iter_mut().for_each(|o| *o = 0.0);
        let mut seen = 0;
        if !self.nodes.is_empty() {
            self.search(0, q, skip, 0.0, off, top, &mut seen);
        }
        seen
    }

    /// The `k` nearest points of `q`: (squared distance, index), nearest first.
    pub fn nearest(&self, q: &[f64], k: usize) -> Vec<(f64, usize)> {
        let mut top = TopK::new(k);
        let mut off = vec![0.0; self.points.dim];
        self.query(q, usize::MAX, &mut top, &mut off);
        top.items
    }

    /// Whether seeded probe queries (rows at a fixed stride, each without itself when
    /// `exclude_self`) look at few enough points on average for the tree to pay.
    pub(super) fn worth_it(&self, k: usize, exclude_self: bool) -> bool {
        let n = self.points.n;
        let probes = PROBES.min(n);
        if probes == 0 {
            return true;
        }
        let step = (n / PROBES).max(1);
        let mut top = TopK::new(k);
        let mut off = vec![0.0; self.points.dim];
        let total: usize = (0..probes)
            .map(|p| {
                let i = (p * step + step / 2) % n;
                let skip = if exclude_self { i } else { usize::MAX };
                self.query(self.points.row(i), skip, &mut top, &mut off)
            })
            .sum();
        (total as f64) / (probes as f64) <= PROBE_SHARE * n as f64
    }

    /// Answer the queries `order` (in that order; `query(i)` gives query i's row and the
    /// index it leaves out) and put the answers in query order: an `n × k` table, `order`
    /// being a permutation of `0..n`. Each answer does not depend on the order.
    pub(super) fn table<'q>(
        &self,
        order: &[usize],
        n: usize,
        k: usize,
        query: impl Fn(usize) -> (&'q [f64], usize) + Sync,
    ) -> Neighbors {
        let dim = self.points.dim;
        let mut s_index = vec![0usize; n * k];
        let mut s_dist2 = vec![0.0; n * k];
        s_index
            .par_chunks_mut(k)
            .zip(s_dist2.par_chunks_mut(k))
            .zip(order.par_iter())
            .for_each_init(
                || (TopK::new(k), vec![0.0; dim]),
                |(top, off), ((ri, rd), &i)| {
                    let (q, skip) = query(i);
                    self.query(q, skip, top, off);
                    for (j, &(d, idx)) in top.items().iter().enumerate() {
                        ri[j] = idx;
                        rd[j] = d;
                    }
                },
            );
        let mut pos = vec![0usize; n];
        for (r, &i) in order.iter().enumerate() {
            pos[i] = r;
        }
        let mut index = vec![0usize; n * k];
        let mut dist2 = vec![0.0; n * k];
        index
            .par_chunks_mut(k)
            .zip(dist2.par_chunks_mut(k))
            .zip(pos.par_iter())
            .for_each(|((ri, rd), &r)| {
                ri.copy_from_slice(&s_index[r * k..(r + 1) * k]);
                rd.copy_from_slice(&s_dist2[r * k..(r + 1) * k]);
            });
        Neighbors { n, k, index, dist2 }
    }
}
