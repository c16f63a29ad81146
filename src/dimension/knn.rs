//! Exact k-nearest-neighbour search: brute force or a k-d tree, same answer.
//!
//! In: [`Points`] and k. Out: for every point the distances to its k nearest other points,
//! ascending (row-major `n × k`), and with [`knn_table`] their indices (ties broken by index).
//! Ties are kept; a duplicate point counts as a neighbour at distance 0.
//!
//! [`knn_table`] searches a k-d tree (Friedman, Bentley & Finkel 1977; median splits on the
//! coordinate of widest spread, leaves of at most [`LEAF`] points, the incremental
//! box distance of Arya & Mount 1993) when that is cheaper: it first answers a few seeded probe
//! queries and falls back to brute force (O(N²·dim)) when they had to look at more than
//! [`PROBE_SHARE`] of the points, which happens when the intrinsic dimension is high. Both
//! paths compute every distance with the same function and keep the same (distance, index)
//! order, so the table does not depend on the path or on the thread count.

use crate::error::{Error, Result};
use crate::points::Points;
use rayon::prelude::*;

/// `k` neighbours must exist (1 ≤ k < n) and the points must have coordinates.
fn check_k(points: &Points, k: usize) -> Result<()> {
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

/// Distances from each point to its `k` nearest other points, ascending; row-major `n × k`.
///
/// Errors: k = 0, or k ≥ n (not enough other points), or points without coordinates.
pub fn knn_distances(points: &Points, k: usize) -> Result<Vec<f64>> {
    check_k(points, k)?;
    let mut out = vec![0.0; points.n * k];
    out.par_chunks_mut(k).enumerate().for_each(|(i, best)| {
        // `best` holds squared distances, ascending; `filled` of them are valid.
        let xi = points.row(i);
        let mut filled = 0;
        for (j, xj) in points.rows().enumerate() {
            if j == i {
                continue;
            }
            let d = sqdist(xi, xj);
            if filled < k {
                let mut pos = filled;
                while pos > 0 && best[pos - 1] > d {
                    best[pos] = best[pos - 1];
                    pos -= 1;
                }
                best[pos] = d;
                filled += 1;
            } else if d < best[k - 1] {
                let mut pos = k - 1;
                while pos > 0 && best[pos - 1] > d {
                    best[pos] = best[pos - 1];
                    pos -= 1;
                }
                best[pos] = d;
            }
        }
        best.iter_mut().for_each(|v| *v = v.sqrt());
    });
    Ok(out)
}

/// Squared Euclidean distance with four independent accumulators (the compiler can keep them in
/// vector registers); the same value as [`Points::dist2`] up to rounding.
#[inline]
pub(crate) fn sqdist(a: &[f64], b: &[f64]) -> f64 {
    let mut acc = [0.0f64; 4];
    let ca = a.chunks_exact(4);
    let cb = b.chunks_exact(4);
    let (ra, rb) = (ca.remainder(), cb.remainder());
    for (x, y) in ca.zip(cb) {
        for l in 0..4 {
            let d = x[l] - y[l];
            acc[l] += d * d;
        }
    }
    let mut s = (acc[0] + acc[1]) + (acc[2] + acc[3]);
    for (x, y) in ra.iter().zip(rb) {
        s += (x - y) * (x - y);
    }
    s
}

/// Most points in a k-d tree leaf.
pub const LEAF: usize = 16;
/// Fewest points for which the k-d tree is tried.
const MIN_TREE_POINTS: usize = 1000;
/// Share of the points the probe queries may visit on average before brute force is used.
pub const PROBE_SHARE: f64 = 0.25;
/// Probe queries.
const PROBES: usize = 24;

/// A k-d tree over the rows of a [`Points`] (see the module notes).
struct KdTree {
    /// Point indices, permuted so that every node owns a contiguous range.
    perm: Vec<usize>,
    /// Nodes; the root is node 0.
    nodes: Vec<Node>,
}

enum Node {
    Leaf {
        start: usize,
        end: usize,
    },
    Split {
        axis: usize,
        value: f64,
        left: usize,
        right: usize,
    },
}

/// Entry of a query's candidate list: squared distance, then index.
type Cand = (f64, usize);

fn cand_less(a: &Cand, b: &Cand) -> bool {
    a.0 < b.0 || (a.0 == b.0 && a.1 < b.1)
}

impl KdTree {
    fn build(points: &Points) -> KdTree {
        let mut tree = KdTree {
            perm: (0..points.n).collect(),
            nodes: Vec::new(),
        };
        tree.build_node(points, 0, points.n);
        tree
    }

    fn build_node(&mut self, points: &Points, start: usize, end: usize) -> usize {
        let id = self.nodes.len();
        self.nodes.push(Node::Leaf { start, end });
        if end - start <= LEAF {
            return id;
        }
        let dim = points.dim;
        let mut lo = vec![f64::INFINITY; dim];
        let mut hi = vec![f64::NEG_INFINITY; dim];
        for &i in &self.perm[start..end] {
            for (a, &x) in points.row(i).iter().enumerate() {
                lo[a] = lo[a].min(x);
                hi[a] = hi[a].max(x);
            }
        }
        let axis = (0..dim)
            .max_by(|&a, &b| (hi[a] - lo[a]).total_cmp(&(hi[b] - lo[b])))
            .unwrap_or(0);
        if hi[axis] - lo[axis] <= 0.0 {
            return id; // all points coincide: one leaf
        }
        let mid = (start + end) / 2;
        self.perm[start..end].select_nth_unstable_by(mid - start, |&a, &b| {
            points.row(a)[axis].total_cmp(&points.row(b)[axis])
        });
        let value = points.row(self.perm[mid])[axis];
        let left = self.build_node(points, start, mid);
        let right = self.build_node(points, mid, end);
        self.nodes[id] = Node::Split {
            axis,
            value,
            left,
            right,
        };
        id
    }

    /// The k nearest other points of point `q` (ascending); returns how many distances it took.
    fn query(
        &self,
        points: &Points,
        q: usize,
        k: usize,
        best: &mut Vec<Cand>,
        off: &mut [f64],
    ) -> usize {
        best.clear();
        off.iter_mut().for_each(|o| *o = 0.0);
        let mut visited = 0;
        self.visit(points, 0, q, k, best, off, 0.0, &mut visited);
        visited
    }

    #[allow(clippy::too_many_arguments)]
    fn visit(
        &self,
        points: &Points,
        node: usize,
        q: usize,
        k: usize,
        best: &mut Vec<Cand>,
        off: &mut [f64],
        rd: f64,
        visited: &mut usize,
    ) {
        match self.nodes[node] {
            Node::Leaf { start, end } => {
                let xq = points.row(q);
                for &j in &self.perm[start..end] {
                    if j == q {
                        continue;
                    }
                    *visited += 1;
                    let c = (sqdist(xq, points.row(j)), j);
                    if best.len() < k {
                        let pos = best.partition_point(|b| cand_less(b, &c));
                        best.insert(pos, c);
                    } else if cand_less(&c, &best[k - 1]) {
                        best.pop();
                        let pos = best.partition_point(|b| cand_less(b, &c));
                        best.insert(pos, c);
                    }
                }
            }
            Node::Split {
                axis,
                value,
                left,
                right,
            } => {
                let diff = points.row(q)[axis] - value;
                let (near, far) = if diff < 0.0 {
                    (left, right)
                } else {
                    (right, left)
                };
                self.visit(points, near, q, k, best, off, rd, visited);
                let old = off[axis];
                let rd_far = rd - old * old + diff * diff;
                // Not `>=`: a point at exactly the k-th distance with a smaller index must
                // still be found.
                if best.len() < k || rd_far <= best[k - 1].0 {
                    off[axis] = diff;
                    self.visit(points, far, q, k, best, off, rd_far, visited);
                    off[axis] = old;
                }
            }
        }
    }

    /// Whether seeded probe queries visit few enough points for the tree to pay.
    fn worth_it(&self, points: &Points, k: usize) -> bool {
        let n = points.n;
        let step = (n / PROBES).max(1);
        let mut best = Vec::with_capacity(k + 1);
        let mut off = vec![0.0; points.dim];
        let total: usize = (0..PROBES.min(n))
            .map(|p| self.query(points, (p * step + step / 2) % n, k, &mut best, &mut off))
            .sum();
        (total as f64) / (PROBES.min(n) as f64) <= PROBE_SHARE * n as f64
    }

    fn table(&self, points: &Points, rows: usize, k: usize) -> (Vec<usize>, Vec<f64>) {
        let mut idx = vec![0usize; rows * k];
        let mut dist = vec![0.0; rows * k];
        idx.par_chunks_mut(k)
            .zip(dist.par_chunks_mut(k))
            .enumerate()
            .for_each_init(
                || (Vec::with_capacity(k + 1), vec![0.0; points.dim]),
                |(best, off), (i, (ir, dr))| {
                    self.query(points, i, k, best, off);
                    for (slot, (d2, j)) in best.iter().enumerate() {
                        ir[slot] = *j;
                        dr[slot] = d2.sqrt();
                    }
                },
            );
        (idx, dist)
    }
}

/// Exact k-nearest-neighbour table: for every point, the indices and distances of its `k`
/// nearest other points, ascending by distance (ties broken by index). Row-major `n × k`.
/// A k-d tree or brute force (see the module notes), in parallel over points; O(N·k) output.
///
/// Errors: as [`knn_distances`].
pub fn knn_table(points: &Points, k: usize) -> Result<(Vec<usize>, Vec<f64>)> {
    knn_table_rows(points, points.n, k)
}

/// [`knn_table`] for the first `rows` points only (their neighbours among all points):
/// row-major `rows × k`.
///
/// Errors: as [`knn_distances`].
pub fn knn_table_rows(points: &Points, rows: usize, k: usize) -> Result<(Vec<usize>, Vec<f64>)> {
    check_k(points, k)?;
    let rows = rows.min(points.n);
    if points.n >= MIN_TREE_POINTS {
        let tree = KdTree::build(points);
        if tree.worth_it(points, k) {
            return Ok(tree.table(points, rows, k));
        }
    }
    brute_rows(points, rows, k)
}

/// Brute-force form of [`knn_table`] (every pair).
#[cfg(test)]
pub(crate) fn knn_table_brute(points: &Points, k: usize) -> Result<(Vec<usize>, Vec<f64>)> {
    check_k(points, k)?;
    brute_rows(points, points.n, k)
}

fn brute_rows(points: &Points, rows: usize, k: usize) -> Result<(Vec<usize>, Vec<f64>)> {
    let n = points.n;
    let mut idx = vec![0usize; rows * k];
    let mut dist = vec![0.0; rows * k];
    idx.par_chunks_mut(k)
        .zip(dist.par_chunks_mut(k))
        .enumerate()
        .for_each_init(
            || Vec::with_capacity(n),
            |buf: &mut Vec<(f64, usize)>, (i, (ir, dr))| {
                buf.clear();
                let xi = points.row(i);
                buf.extend(
                    points
                        .rows()
                        .enumerate()
                        .filter(|&(j, _)| j != i)
                        .map(|(j, xj)| (sqdist(xi, xj), j)),
                );
                let cmp =
                    |a: &(f64, usize), b: &(f64, usize)| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1));
                if buf.len() > k {
                    buf.select_nth_unstable_by(k - 1, cmp);
                    buf.truncate(k);
                }
                buf.sort_unstable_by(cmp);
                for (slot, (d2, j)) in buf.iter().enumerate() {
                    ir[slot] = *j;
                    dr[slot] = d2.sqrt();
                }
            },
        );
    Ok((idx, dist))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn table_matches_distances() {
        let pts = Points::new(5, 1, vec![0.0, 1.0, 3.0, 6.0, 10.0]).unwrap();
        let (i, d) = knn_table(&pts, 2).unwrap();
        assert_eq!(i, vec![1, 2, 0, 2, 1, 0, 2, 4, 3, 2]);
        assert_eq!(d, knn_distances(&pts, 2).unwrap());
        assert!((sqdist(&[1.0, 2.0, 3.0, 4.0, 5.0], &[0.0; 5]) - 55.0).abs() < 1e-12);
    }

    #[test]
    fn tree_equals_brute_force_with_ties_and_duplicates() {
        use rand::{Rng, SeedableRng};
        // A 3-d cloud on a coarse grid (many equal distances) with duplicated points, and a
        // 2-d one in 6 coordinates: the tree must give exactly the brute-force table.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(5);
        let mut data: Vec<f64> = (0..3 * 1500)
            .map(|_| (rng.gen::<f64>() * 8.0).floor())
            .collect();
        data.extend_from_within(..3 * 200);
        let grid = Points::new(1700, 3, data).unwrap();
        let tree = KdTree::build(&grid);
        assert_eq!(
            tree.table(&grid, 1700, 12),
            knn_table_brute(&grid, 12).unwrap()
        );
        let flat: Vec<f64> = (0..2000)
            .flat_map(|_| {
                let (u, v) = (rng.gen::<f64>(), rng.gen::<f64>());
                [u, v, u + v, u - v, 0.5 * u, 0.0]
            })
            .collect();
        let flat = Points::new(2000, 6, flat).unwrap();
        let tree = KdTree::build(&flat);
        assert!(tree.worth_it(&flat, 20));
        assert_eq!(
            tree.table(&flat, 2000, 20),
            knn_table_brute(&flat, 20).unwrap()
        );
        assert_eq!(
            knn_table(&flat, 20).unwrap(),
            knn_table_brute(&flat, 20).unwrap()
        );
    }

    #[test]
    fn line_neighbours() {
        // Points 0, 1, 3, 6 on a line.
        let pts = Points::new(4, 1, vec![0.0, 1.0, 3.0, 6.0]).unwrap();
        let d = knn_distances(&pts, 2).unwrap();
        assert_eq!(d, vec![1.0, 3.0, 1.0, 2.0, 2.0, 3.0, 3.0, 5.0]);
        assert!(knn_distances(&pts, 4).is_err());
        assert!(knn_distances(&pts, 0).is_err());
    }
}
