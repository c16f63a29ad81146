#!/usr/bin/env python3
"""Write the 24 benchmark manifolds of scikit-dimension's BenchmarkManifolds (Hein & Audibert
2005, M1-M13; Campadelli et al. 2015, Mbeta, Mn1, Mn2, Mp1-Mp3) to a folder, for
`cargo run --release --example bench_dimension_manifolds -- DIR`.

Pinned: scikit-dimension==0.5.0 (with numpy and pandas; versions are written to the manifest).

For every seed (random_state of BenchmarkManifolds) and noise level f, each manifold X (N x D)
gets isotropic Gaussian noise of SD f * s in every coordinate, s = sqrt(mean per-coordinate
variance of X) (the manifold's typical coordinate spread), drawn with numpy's
default_rng(seed * 1000 + level index). Files: NAME__seedS__noiseF.f64 (row-major little-endian
float64) and manifest.json (file, name, true d, D, N, seed, noise).

Run:
  python3 -m venv /tmp/venv-dim
  /tmp/venv-dim/bin/pip install scikit-dimension==0.5.0 numpy pandas
  /tmp/venv-dim/bin/python scripts/make_dimension_benchmark.py /tmp/dimbench --seeds 0 1 \
      --noise 0 0.01 0.05 --n 2500
"""
import argparse
import json
import os
from importlib.metadata import version

import numpy as np
from skdim.datasets import BenchmarkManifolds


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("out")
    ap.add_argument("--seeds", type=int, nargs="+", default=[0])
    ap.add_argument("--noise", type=float, nargs="+", default=[0.0, 0.01, 0.05])
    ap.add_argument("--n", type=int, default=2500)
    a = ap.parse_args()
    if version("scikit-dimension") != "0.5.0":
        raise SystemExit(f"scikit-dimension {version('scikit-dimension')}; pinned 0.5.0")
    os.makedirs(a.out, exist_ok=True)
    entries = []
    for seed in a.seeds:
        bm = BenchmarkManifolds(random_state=seed)
        data = bm.generate(n=a.n)
        truth = bm.truth
        for li, f in enumerate(a.noise):
            rng = np.random.default_rng(seed * 1000 + li)
            for name, x in data.items():
                x = np.asarray(x, dtype=np.float64)
                s = float(np.sqrt(np.mean(np.var(x, axis=0))))
                y = x + rng.normal(0.0, f * s, size=x.shape) if f > 0 else x
                fname = f"{name}__seed{seed}__noise{f:g}.f64"
                y.astype("<f8").tofile(os.path.join(a.out, fname))
                entries.append(
                    {
                        "file": fname,
                        "name": name,
                        "d": int(truth.loc[name, "Intrinsic Dimension"]),
                        "dim": int(x.shape[1]),
                        "n": int(x.shape[0]),
                        "seed": seed,
                        "noise": f,
                    }
                )
    manifest = {
        "versions": {
            "scikit-dimension": version("scikit-dimension"),
            "numpy": np.__version__,
            "pandas": version("pandas"),
        },
        "entries": entries,
    }
    with open(os.path.join(a.out, "manifest.json"), "w") as fh:
        json.dump(manifest, fh, indent=1)
    print(f"wrote {len(entries)} point sets to {a.out}")


if __name__ == "__main__":
    main()
