#!/usr/bin/env python3
"""Time scikit-dimension (skdim, a general-purpose reference library) on exactly the points of
`cargo run --release --example bench_dimension -- --dump DIR`, next to beatfold's own numbers.

Reads DIR/points.f64 (row-major little-endian float64), DIR/subset.u32 (the indices of the
subset beatfold's neighbour-based estimators use) and DIR/beatfold.json (shape, beatfold's
estimates and seconds per estimator, each run alone with 30 bootstrap resamples). Runs, on the
same subset: skdim TwoNN(discard_fraction=0.1); MLE(comb="mle") for n_neighbors 10..20, averaged
(beatfold's MLE estimate); CorrInt() with its defaults; lPCA(ver="ratio", alphaRatio=0.95)
point-wise with 80 neighbours (median of the point-wise values). On all points: MLE with
n_neighbors=20. Writes DIR/skdim.json and prints a Markdown table for docs/performance.md.
skdim's timings have no bootstrap; beatfold's include 30 resamples.

Run:
  python3 -m venv /tmp/skdim-venv && /tmp/skdim-venv/bin/pip install numpy scikit-dimension
  cargo run --release --example bench_dimension -- --dump /tmp/dimdump
  /tmp/skdim-venv/bin/python scripts/time_skdim_same_points.py /tmp/dimdump
"""
import json
import os
import sys
import time
from importlib.metadata import version

import numpy as np
import skdim


def timed(fn):
    t0 = time.perf_counter()
    value = fn()
    return float(value), time.perf_counter() - t0


def main():
    if len(sys.argv) != 2:
        sys.exit("usage: time_skdim_same_points.py DIR")
    folder = sys.argv[1]
    with open(os.path.join(folder, "beatfold.json")) as f:
        ours = json.load(f)
    n, dim = ours["n"], ours["dim"]
    x = np.fromfile(os.path.join(folder, "points.f64"), dtype="<f8")
    if x.size != n * dim:
        sys.exit(f"{folder}/points.f64 holds {x.size} numbers, expected {n} x {dim}")
    x = x.reshape(n, dim)
    subset = np.fromfile(os.path.join(folder, "subset.u32"), dtype="<u4")
    xs = x[subset]

    runs = {
        "twonn": lambda: skdim.id.TwoNN(discard_fraction=0.1).fit(xs).dimension_,
        "mle": lambda: np.mean(
            [skdim.id.MLE().fit(xs, n_neighbors=k, comb="mle").dimension_ for k in range(10, 21)]
        ),
        "correlation": lambda: skdim.id.CorrInt().fit(xs).dimension_,
        "local_pca": lambda: np.median(
            skdim.id.lPCA(ver="ratio", alphaRatio=0.95).fit_pw(xs, n_neighbors=80).dimension_pw_
        ),
    }
    out = {
        "versions": {"skdim": version("scikit-dimension"), "numpy": np.__version__},
        "n": n,
        "dim": dim,
        "subset_n": int(subset.size),
        "subset": {},
    }
    for name, fn in runs.items():
        d, secs = timed(fn)
        out["subset"][name] = {"d": d, "seconds": secs}
    d, secs = timed(lambda: skdim.id.MLE().fit(x, n_neighbors=20, comb="mle").dimension_)
    out["all_points_mle_k20"] = {"d": d, "seconds": secs}
    with open(os.path.join(folder, "skdim.json"), "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")

    print(f"| estimator (on the same {subset.size} of {n} points in {dim} dimensions) "
          "| beatfold d | beatfold s (with 30 resamples) | skdim d | skdim s |")
    print("| --- | --- | --- | --- | --- |")
    for name, r in out["subset"].items():
        print(f"| {name} | {ours['estimates'].get(name, float('nan')):.2f} "
              f"| {ours['seconds_alone'].get(name, float('nan')):.2f} "
              f"| {r['d']:.2f} | {r['seconds']:.2f} |")
    r = out["all_points_mle_k20"]
    print(f"| skdim MLE k = 20 on all {n} points | | | {r['d']:.2f} | {r['seconds']:.2f} |")


if __name__ == "__main__":
    main()
