#!/usr/bin/env python3
"""Time scikit-dimension's TwoNN, MLE, CorrInt and lPCA on the points written by
`cargo run --release --example bench_dimension_speed -- DIR` and print the ratio to beatfold's
time for the same four estimators (no bootstrap; calibration cache cold in memory, and on disk
cold or warm as DIR/beatfold.json records) from DIR/beatfold.json.

Both sides use every point (the example sets the suite's `max_points` to N; DIR/subset.u32 is
all N indices, shuffled; skdim's TwoNN builds the full 20 000 x 20 000 distance matrix, 3.2 GB). skdim settings: TwoNN
(discard_fraction=0.1); MLE(comb="mle") for n_neighbors 10..20; CorrInt() defaults;
lPCA(ver="FO", alphaFO=0.1) point-wise with 80 neighbours. Pinned: scikit-dimension==0.5.0.

Run:
  /tmp/venv-dim/bin/python scripts/dimension_speed_ratio.py DIR
"""
import json
import os
import sys
import time
from importlib.metadata import version

import numpy as np
import skdim


def main():
    folder = sys.argv[1]
    with open(os.path.join(folder, "beatfold.json")) as f:
        ours = json.load(f)
    n, dim = ours["n"], ours["dim"]
    x = np.fromfile(os.path.join(folder, "points.f64"), dtype="<f8").reshape(n, dim)
    xs = x[np.fromfile(os.path.join(folder, "subset.u32"), dtype="<u4")]
    runs = {
        "twonn": lambda: skdim.id.TwoNN(discard_fraction=0.1).fit(xs).dimension_,
        "mle": lambda: np.mean(
            [skdim.id.MLE().fit(xs, n_neighbors=k, comb="mle").dimension_ for k in range(10, 21)]
        ),
        "correlation": lambda: skdim.id.CorrInt().fit(xs).dimension_,
        "local_pca": lambda: np.median(
            skdim.id.lPCA(ver="FO", alphaFO=0.1).fit_pw(xs, n_neighbors=80).dimension_pw_
        ),
    }
    total = 0.0
    print(f"scikit-dimension {version('scikit-dimension')} on {len(xs)} of {n} points, {dim}-D")
    for name, fn in runs.items():
        t0 = time.perf_counter()
        d = float(fn())
        dt = time.perf_counter() - t0
        total += dt
        print(f"  {name:<12} d {d:6.2f}  {dt:6.2f} s   (beatfold raw d {ours['estimates'][name]:.2f})")
    ours_s = ours["seconds_one_cold"]
    state = "disk cache warm" if ours.get("disk_cache_warm") else "cold cache"
    print(f"skdim total {total:.2f} s; beatfold {ours_s:.2f} s "
          f"(with correction and consensus, {state})")
    print(f"ratio skdim / beatfold: {total / ours_s:.1f}x (target >= 10x)")
    print(f"beatfold bootstrap cost: 30 resamples / none = "
          f"{ours['seconds_boot30_warm'] / ours['seconds_one_warm']:.2f} (target < 2)")


if __name__ == "__main__":
    main()
