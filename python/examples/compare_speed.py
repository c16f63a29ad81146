"""Time DiffusionMap against scikit-learn's SpectralEmbedding on the same points in the same run
(both on a 15-nearest-neighbour graph, 10 components). Usage:

    python python/examples/compare_speed.py [N ...]

Prints one line per N: seconds of each and their ratio. On a shared machine, compare ratios.
Research use only; not for diagnosis.
"""

import sys
import time

import numpy as np
import sklearn
from sklearn.manifold import SpectralEmbedding

import beatfold


def swiss_roll(n, seed=0):
    rng = np.random.default_rng(seed)
    t = 1.5 * np.pi * (1 + 2 * rng.uniform(size=n))
    h = 10 * rng.uniform(size=n)
    return np.column_stack([t * np.cos(t), h, t * np.sin(t)])


def best_of(f, reps=3):
    ts = []
    for _ in range(reps):
        t0 = time.perf_counter()
        f()
        ts.append(time.perf_counter() - t0)
    return min(ts)


print(f"numpy {np.__version__}, scikit-learn {sklearn.__version__}, beatfold {beatfold.__version__}")
for n in [int(a) for a in sys.argv[1:]] or [5000, 20000]:
    X = swiss_roll(n)
    t_bf = best_of(lambda: beatfold.DiffusionMap(n_components=10, n_neighbors=15).fit(X))
    t_sk = best_of(lambda: SpectralEmbedding(n_components=10, affinity="nearest_neighbors",
                                             n_neighbors=15, eigen_solver="arpack",
                                             random_state=0).fit(X))
    print(f"N={n}: beatfold DiffusionMap {t_bf:.3f} s, SpectralEmbedding (arpack) {t_sk:.3f} s, "
          f"ratio {t_sk / t_bf:.1f}x")
