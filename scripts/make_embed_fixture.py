#!/usr/bin/env python3
"""Reference diffusion map for tests/embed_reference.rs, written to tests/data/embed/.

An independent dense implementation with numpy/scipy of the same kernel that beatfold uses in
sparse mode (Coifman & Lafon 2006):
  - exact k nearest neighbours (scipy.spatial.cKDTree), each point counting itself;
  - K_ij = exp(-|x_i - x_j|^2 / eps) on the union of the kNN edges (symmetric), K_ii = 1;
  - q = K 1; K_a = K / (q_i^a q_j^a); d = K_a 1; S = D^-1/2 K_a D^-1/2;
  - all eigenpairs of the dense S by numpy.linalg.eigh; psi_l = v_l * sqrt(sum(d) / d).
As a second, general-purpose reference, scikit-learn's SpectralEmbedding (normalised graph
Laplacian eigenmaps on an affinity matrix) is run on the same precomputed kernel K; its
coordinates span the same subspace as psi_1..psi_c for alpha = 0.

Usage: python3 scripts/make_embed_fixture.py  (needs numpy, scipy, scikit-learn)
"""
import json
import os

import numpy as np
import scipy
import sklearn
from scipy.spatial import cKDTree
from sklearn.manifold import SpectralEmbedding

N, K, EPS, COMPONENTS = 600, 12, 1.5, 4


def points():
    """Noisy trefoil knot in 3-D: a closed curve, seeded."""
    rng = np.random.default_rng(20260)
    s = np.sort(rng.uniform(0, 2 * np.pi, N))
    x = np.stack([np.sin(s) + 2 * np.sin(2 * s), np.cos(s) - 2 * np.cos(2 * s), -np.sin(3 * s)], 1)
    return x + 0.05 * rng.standard_normal(x.shape)


def kernel(x):
    tree = cKDTree(x)
    dist, idx = tree.query(x, k=K + 1)
    n = len(x)
    kmat = np.eye(n)
    for i in range(n):
        for d, j in zip(dist[i], idx[i]):
            if j != i:
                w = np.exp(-d * d / EPS)
                kmat[i, j] = w
                kmat[j, i] = w
    return kmat


def diffusion(kmat, alpha):
    q = kmat.sum(1)
    ka = kmat / np.outer(q**alpha, q**alpha)
    d = ka.sum(1)
    s = ka / np.sqrt(np.outer(d, d))
    vals, vecs = np.linalg.eigh(s)
    order = np.argsort(vals)[::-1]
    vals, vecs = vals[order], vecs[:, order]
    psi = vecs * np.sqrt(d.sum() / d)[:, None]
    return vals[1 : COMPONENTS + 1], psi[:, 1 : COMPONENTS + 1]


def main():
    x = points()
    kmat = kernel(x)
    out = {
        "generator": "scripts/make_embed_fixture.py",
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__, "sklearn": sklearn.__version__},
        "n": N,
        "dim": 3,
        "neighbors": K,
        "epsilon": EPS,
        "components": COMPONENTS,
        "points": x.ravel().tolist(),
    }
    for alpha, key in [(1.0, "alpha1"), (0.0, "alpha0")]:
        vals, psi = diffusion(kmat, alpha)
        out[key] = {"eigenvalues": vals.tolist(), "psi": psi.ravel().tolist()}
    se = SpectralEmbedding(n_components=COMPONENTS, affinity="precomputed", random_state=0)
    out["sklearn_spectral_alpha0"] = se.fit_transform(kmat).ravel().tolist()
    here = os.path.dirname(os.path.abspath(__file__))
    dest = os.path.join(here, "..", "tests", "data", "embed", "trefoil_knn.json")
    os.makedirs(os.path.dirname(dest), exist_ok=True)
    with open(dest, "w") as f:
        json.dump(out, f)
    print("wrote", dest, out["versions"], out["alpha1"]["eigenvalues"])


if __name__ == "__main__":
    main()
