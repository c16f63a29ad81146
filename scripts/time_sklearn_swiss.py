#!/usr/bin/env python3
"""Same-run timing of beatfold's diffusion map and scikit-learn's SpectralEmbedding on one
Swiss roll, printing the ratio (docs/performance.md, section "Diffusion map").

Runs `target/release/examples/bench_embed_swiss N --dump DIR` (beatfold: three fits, best
wall time; k = 15, 10 components, default variable-bandwidth kernel), then, on exactly the
points it wrote, SpectralEmbedding(n_components=10, affinity="nearest_neighbors",
n_neighbors=15, eigen_solver="arpack", random_state=0).fit_transform three times (best wall
time), then prints both, the ratio, and the load average before and after. SpectralEmbedding is
a Laplacian eigenmap on a 0/1 kNN graph, not our Gaussian α-normalised kernel: the comparison is
of the same size of problem (N points, 15 neighbours, 10 coordinates), not of the numbers.

Pinned versions (the run prints the ones it used): scikit-learn 1.9.1, numpy 2.4.6,
scipy 1.17.1.

Run:
  python3 -m venv /tmp/sk-venv && /tmp/sk-venv/bin/pip install scikit-learn==1.9.1 \
      numpy==2.4.6 scipy==1.17.1
  cargo build --release --example bench_embed_swiss
  /tmp/sk-venv/bin/python scripts/time_sklearn_swiss.py [N] [DIR]

BEATFOLD_SWISS_BIN=PATH runs another build of the example (e.g. a copy of an earlier commit's,
to compare two versions under the same machine load).
"""
import json
import os
import subprocess
import sys
import tempfile
import time
from importlib.metadata import version

import numpy as np


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 50_000
    folder = sys.argv[2] if len(sys.argv) > 2 else tempfile.mkdtemp(prefix="swiss-")
    here = os.path.dirname(os.path.abspath(__file__))
    binary = os.environ.get("BEATFOLD_SWISS_BIN") or os.path.join(
        here, "..", "target", "release", "examples", "bench_embed_swiss")
    load0 = os.getloadavg()
    subprocess.run([binary, str(n), "--dump", folder], check=True)
    with open(os.path.join(folder, "beatfold.json")) as f:
        ours = json.load(f)

    from sklearn.manifold import SpectralEmbedding

    x = np.fromfile(os.path.join(folder, "points.f64"), dtype="<f8").reshape(n, 3)
    times = []
    for _ in range(3):
        t0 = time.perf_counter()
        SpectralEmbedding(
            n_components=10,
            affinity="nearest_neighbors",
            n_neighbors=15,
            eigen_solver="arpack",
            random_state=0,
        ).fit_transform(x)
        times.append(time.perf_counter() - t0)
    load1 = os.getloadavg()
    theirs = min(times)
    print(f"versions: scikit-learn {version('scikit-learn')}, numpy {np.__version__}, "
          f"scipy {version('scipy')}; beatfold threads {ours['threads']}")
    print(f"load average (1, 5, 15 min) before {load0[0]:.2f} {load0[1]:.2f} {load0[2]:.2f}, "
          f"after {load1[0]:.2f} {load1[1]:.2f} {load1[2]:.2f}")
    print(f"| Swiss roll {n} points, k = 15, 10 components | best of 3, s | all, s |")
    print("| --- | --- | --- |")
    print(f"| beatfold diffusion map (variable bandwidth) | {ours['fit_seconds']:.2f} | "
          + ", ".join(f"{t:.2f}" for t in ours["fit_seconds_all"]) + " |")
    print(f"| scikit-learn SpectralEmbedding, arpack | {theirs:.2f} | "
          + ", ".join(f"{t:.2f}" for t in times) + " |")
    print(f"ratio scikit-learn / beatfold: {theirs / ours['fit_seconds']:.2f}")
    print(f"beatfold Spearman(psi1, roll angle): {ours['spearman_psi1_angle']:.4f}")


if __name__ == "__main__":
    main()
