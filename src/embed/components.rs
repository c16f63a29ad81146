//! Connected components of the kernel graph, and eigenpairs assembled component by component.
//!
//! In: the edges of a kernel graph (weights above [`MIN_WEIGHT`]) and a solver for the top
//! eigenpairs of one component's block. Out: component labels (largest component first) and
//! the top eigenpairs of the whole block-diagonal operator.
//!
//! When the graph falls apart, no random walk crosses between the pieces, the eigenvalue 1
//! repeats once per component, and a single-vector Krylov iteration sees only one direction of
//! that repeated eigenspace. So each component is solved on its own (its block of the
//! operator, with the edges below [`MIN_WEIGHT`] between components dropped), and the spectra
//! are joined: the repeated eigenvalue 1 gets a fixed basis — the stationary vector of the
//! whole set first, then the indicator of each further component (largest first) made
//! orthogonal to those before it — followed by every component's other eigenpairs in
//! non-increasing order. This is exactly an eigenbasis of the block-diagonal operator, chosen
//! so the result does not depend on the solver's start vector (common practice: a Markov
//! chain's eigenvalue 1 has the multiplicity of its closed classes).

use crate::error::{Error, Result};
use faer::Mat;

/// Kernel weights at or below this do not connect two points.
pub const MIN_WEIGHT: f64 = 1e-12;

/// Component labels of `n` points, component 0 the largest (ties: smallest first point).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Components {
    /// Component of each point.
    pub label: Vec<usize>,
    /// Size of each component, non-increasing.
    pub sizes: Vec<usize>,
}

impl Components {
    /// Components of the graph on `n` points with the given undirected edges.
    pub fn from_edges(n: usize, edges: impl Iterator<Item = (usize, usize)>) -> Self {
        let mut parent: Vec<usize> = (0..n).collect();
        fn root(p: &mut [usize], mut i: usize) -> usize {
            while p[i] != i {
                p[i] = p[p[i]];
                i = p[i];
            }
            i
        }
        for (a, b) in edges {
            let (ra, rb) = (root(&mut parent, a), root(&mut parent, b));
            if ra != rb {
                let (lo, hi) = if ra < rb { (ra, rb) } else { (rb, ra) };
                parent[hi] = lo;
            }
        }
        let roots: Vec<usize> = (0..n).map(|i| root(&mut parent, i)).collect();
        // Roots in order of first appearance, then by size (stable sort keeps first appearance).
        let mut id = vec![usize::MAX; n];
        let mut first: Vec<(usize, usize)> = Vec::new(); // (root, size)
        for &r in &roots {
            if id[r] == usize::MAX {
                id[r] = first.len();
                first.push((r, 0));
            }
            first[id[r]].1 += 1;
        }
        let mut order: Vec<usize> = (0..first.len()).collect();
        order.sort_by(|&a, &b| first[b].1.cmp(&first[a].1));
        let mut rank = vec![0; first.len()];
        for (new, &old) in order.iter().enumerate() {
            rank[old] = new;
        }
        Components {
            label: roots.iter().map(|&r| rank[id[r]]).collect(),
            sizes: order.iter().map(|&o| first[o].1).collect(),
        }
    }

    /// Number of components.
    pub fn count(&self) -> usize {
        self.sizes.len()
    }

    /// The points of each component, in increasing order.
    pub fn members(&self) -> Vec<Vec<usize>> {
        let mut m = vec![Vec::new(); self.count()];
        for (i, &c) in self.label.iter().enumerate() {
            m[c].push(i);
        }
        m
    }
}

/// Top `nev` eigenpairs of a block-diagonal symmetric operator whose top eigenvalue is 1 on
/// every block with eigenvector √w restricted to it (see the module notes). `solve(members,
/// nev)` returns the top eigenpairs (non-increasing, unit columns) of one component's block.
pub fn join_components(
    comps: &Components,
    w: &[f64],
    nev: usize,
    mut solve: impl FnMut(&[usize], usize) -> Result<(Vec<f64>, Mat<f64>)>,
) -> Result<(Vec<f64>, Mat<f64>)> {
    let n = comps.label.len();
    let k = comps.count();
    let members = comps.members();
    let sw: Vec<f64> = w.iter().map(|v| v.max(0.0).sqrt()).collect();
    // The fixed basis of the eigenvalue 1.
    let mut basis: Vec<Vec<f64>> = Vec::with_capacity(k);
    for c in 0..k.min(nev) {
        let mut v: Vec<f64> = if c == 0 {
            sw.clone()
        } else {
            (0..n)
                .map(|i| if comps.label[i] == c { sw[i] } else { 0.0 })
                .collect()
        };
        for b in &basis {
            let dot: f64 = v.iter().zip(b).map(|(x, y)| x * y).sum();
            v.iter_mut().zip(b).for_each(|(x, y)| *x -= dot * y);
        }
        let norm = v.iter().map(|x| x * x).sum::<f64>().sqrt();
        if !(norm > 0.0) {
            return Err(Error::Analysis(
                "diffusion map: a component has zero stationary weight".into(),
            ));
        }
        v.iter_mut().for_each(|x| *x /= norm);
        basis.push(v);
    }
    // Every component's other eigenpairs: (value, component, column) with the vectors kept.
    let mut rest: Vec<(f64, usize, usize)> = Vec::new();
    let mut vecs: Vec<Mat<f64>> = Vec::with_capacity(k);
    for (c, idx) in members.iter().enumerate() {
        let want = nev.min(idx.len());
        if idx.len() < 2 || want < 2 {
            vecs.push(Mat::zeros(idx.len(), 0));
            continue;
        }
        let (vals, u) = solve(idx, want)?;
        for (l, &v) in vals.iter().enumerate().skip(1) {
            rest.push((v, c, l));
        }
        vecs.push(u);
    }
    rest.sort_by(|a, b| b.0.total_cmp(&a.0).then((a.1, a.2).cmp(&(b.1, b.2))));
    if basis.len() + rest.len() < nev {
        return Err(Error::Analysis(format!(
            "diffusion map: {nev} eigenpairs asked, but the {k} components of the kernel graph \
             hold only {}",
            basis.len() + rest.len()
        )));
    }
    let mut values = vec![1.0; basis.len()];
    let mut out = Mat::<f64>::zeros(n, nev);
    for (j, b) in basis.iter().enumerate() {
        for i in 0..n {
            out[(i, j)] = b[i];
        }
    }
    for (j, &(v, c, l)) in rest.iter().take(nev - basis.len()).enumerate() {
        let col = basis.len() + j;
        values.push(v);
        for (r, &i) in members[c].iter().enumerate() {
            out[(i, col)] = vecs[c][(r, l)];
        }
    }
    Ok((values, out))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn labels_largest_first() {
        // Points 0..6: {0, 2}, {1, 3, 4}, {5}.
        let c = Components::from_edges(6, [(0, 2), (1, 3), (4, 3)].into_iter());
        assert_eq!(c.sizes, vec![3, 2, 1]);
        assert_eq!(c.label, vec![1, 0, 1, 0, 0, 2]);
        assert_eq!(c.members()[0], vec![1, 3, 4]);
    }
}
