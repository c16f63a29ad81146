#!/usr/bin/env python3
"""Write tests/data/dimension/skdim_fixture.json: small seeded point clouds and the intrinsic
dimension that scikit-dimension (skdim, a general-purpose reference library) finds on them, for
tests/dimension_skdim.rs.

Per cloud: the points (rounded to 8 decimals; skdim sees exactly the rounded points), skdim's
TwoNN(discard_fraction=0.1) and skdim's MLE().fit(X, n_neighbors=k, comb="mle") for k = 10..20
(and their mean, which is beatfold's `mle(points, 10, 20)`). Versions of Python, numpy and
skdim are recorded. With --bench, also time skdim's TwoNN, MLE, CorrInt and lPCA on a
20 000-point cloud in 50 dimensions (a 5-dimensional cube linearly embedded, plus noise; the
same construction as examples/bench_dimension.rs but not the same random numbers) and store the
seconds under "timings".

Run:
  python3 -m venv /tmp/skdim-venv && /tmp/skdim-venv/bin/pip install numpy scikit-dimension
  /tmp/skdim-venv/bin/python scripts/make_dimension_fixture.py [--bench]
"""
import json
import os
import platform
import sys
import time
from importlib.metadata import version

import numpy as np
import skdim


def embed(z, ambient, rng):
    q, _ = np.linalg.qr(rng.standard_normal((ambient, ambient)))
    return z @ q[: z.shape[1], :]


def clouds(rng):
    n = 500
    cube3 = embed(rng.random((n, 3)), 6, rng)
    g = rng.standard_normal((n, 3))
    sphere2 = embed(g / np.linalg.norm(g, axis=1, keepdims=True), 5, rng)
    u, v = rng.random(n), rng.random(n)
    t = 1.5 * np.pi * (1 + 2 * u)
    roll = np.stack([t * np.cos(t), 21 * v, t * np.sin(t)], axis=1)
    cube5 = embed(rng.random((n, 5)), 8, rng)
    return {"cube3_in6": cube3, "sphere2_in5": sphere2, "swiss_roll": roll, "cube5_in8": cube5}


def main():
    rng = np.random.default_rng(20260)
    out = {
        "generator": "scripts/make_dimension_fixture.py",
        "python": platform.python_version(),
        "numpy": version("numpy"),
        "scikit_dimension": version("scikit-dimension"),
        "clouds": [],
    }
    for name, x in clouds(rng).items():
        x = np.round(x, 8)
        twonn = float(skdim.id.TwoNN(discard_fraction=0.1).fit(x).dimension_)
        mle_k = {
            str(k): float(skdim.id.MLE().fit(x, n_neighbors=k, comb="mle").dimension_)
            for k in range(10, 21)
        }
        out["clouds"].append(
            {
                "name": name,
                "n": int(x.shape[0]),
                "dim": int(x.shape[1]),
                "points": x.tolist(),
                "twonn_discard_0_1": twonn,
                "mle_by_k": mle_k,
                "mle_mean_k10_20": float(np.mean(list(mle_k.values()))),
            }
        )
    if "--bench" in sys.argv:
        n, d, ambient = 20000, 5, 50
        x = embed(rng.random((n, d)), ambient, rng) + 0.001 * rng.standard_normal((n, ambient))
        timings = {"n": n, "ambient_dim": ambient, "intrinsic_dim": d}
        for label, est, kw in [
            ("twonn", skdim.id.TwoNN(), {}),
            ("mle_k20", skdim.id.MLE(), {"n_neighbors": 20}),
            ("corrint", skdim.id.CorrInt(), {}),
            ("lpca", skdim.id.lPCA(), {}),
        ]:
            t0 = time.perf_counter()
            dim = est.fit(x, **kw).dimension_
            timings[label] = {"seconds": time.perf_counter() - t0, "d": float(dim)}
        out["timings"] = timings
    path = os.path.join(os.path.dirname(__file__), "..", "tests", "data", "dimension",
                        "skdim_fixture.json")
    os.makedirs(os.path.dirname(path), exist_ok=True)
    with open(path, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    print(json.dumps({k: v for k, v in out.items() if k != "clouds"}, indent=1))
    for c in out["clouds"]:
        print(c["name"], c["twonn_discard_0_1"], c["mle_mean_k10_20"])


if __name__ == "__main__":
    main()
