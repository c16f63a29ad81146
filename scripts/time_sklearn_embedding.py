#!/usr/bin/env python3
"""Time scikit-learn's SpectralEmbedding (a general-purpose reference library) on exactly the
points of `cargo run --release --example bench_embed -- 100000 --dump DIR`, next to beatfold's
diffusion-map fit.

Reads DIR/points.f64 (row-major little-endian float64) and DIR/beatfold.json (shape and
beatfold's fit seconds). Runs SpectralEmbedding(n_components=10, affinity="nearest_neighbors",
n_neighbors=15, eigen_solver=S, random_state=0) on the 64-dimensional points for each solver S
given (default: arpack), with a wall-clock limit per run (default 600 s, enforced by running
each in a child process). This is a Laplacian-eigenmap embedding on a 0/1 kNN graph, not our
Gaussian-weighted, alpha-normalised kernel, so it is a timing reference for the same
size of problem, not a numerical check (the numerical checks are in tests/embed_reference.rs).
Writes DIR/sklearn.json and prints a Markdown table for docs/performance.md.

Run:
  python3 -m venv /tmp/skdim-venv && /tmp/skdim-venv/bin/pip install numpy scikit-learn
  cargo run --release --example bench_embed -- 100000 --dump /tmp/embdump
  /tmp/skdim-venv/bin/python scripts/time_sklearn_embedding.py /tmp/embdump [arpack lobpcg]
"""
import json
import multiprocessing as mp
import os
import sys
import time
from importlib.metadata import version

import numpy as np


def run(folder, n, dim, solver, queue):
    from sklearn.manifold import SpectralEmbedding

    x = np.fromfile(os.path.join(folder, "points.f64"), dtype="<f8").reshape(n, dim)
    t0 = time.perf_counter()
    SpectralEmbedding(
        n_components=10,
        affinity="nearest_neighbors",
        n_neighbors=15,
        eigen_solver=solver,
        random_state=0,
    ).fit_transform(x)
    queue.put(time.perf_counter() - t0)


def main():
    if len(sys.argv) < 2:
        sys.exit("usage: time_sklearn_embedding.py DIR [SOLVER ...]")
    folder = sys.argv[1]
    solvers = sys.argv[2:] or ["arpack"]
    limit = float(os.environ.get("LIMIT_S", "600"))
    with open(os.path.join(folder, "beatfold.json")) as f:
        ours = json.load(f)
    n, dim = ours["n"], ours["dim"]
    out = {"versions": {"scikit-learn": version("scikit-learn"), "numpy": np.__version__},
           "n": n, "dim": dim, "limit_s": limit, "runs": {}}
    for solver in solvers:
        queue = mp.Queue()
        p = mp.Process(target=run, args=(folder, n, dim, solver, queue))
        p.start()
        p.join(limit)
        if p.is_alive():
            p.terminate()
            p.join()
            out["runs"][solver] = {"seconds": None, "note": f"stopped after {limit:.0f} s"}
        elif p.exitcode != 0:
            out["runs"][solver] = {"seconds": None, "note": f"failed (exit {p.exitcode})"}
        else:
            out["runs"][solver] = {"seconds": queue.get()}
    with open(os.path.join(folder, "sklearn.json"), "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    print(f"| run ({n} x {dim}, k = 15, 10 components) | seconds |")
    print("| --- | --- |")
    print(f"| beatfold diffusion map (PCA to 20 axes, Gaussian kernel) | {ours['fit_seconds']:.2f} |")
    for solver, r in out["runs"].items():
        secs = f"{r['seconds']:.2f}" if r["seconds"] is not None else r["note"]
        print(f"| scikit-learn {version('scikit-learn')} SpectralEmbedding, {solver} | {secs} |")


if __name__ == "__main__":
    main()
