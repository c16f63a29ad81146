#!/usr/bin/env python3
"""Side study for docs/validation-dimension.md: can a reference that matches the data's density
variation or its boundary (a "matched-reference" calibration in the spirit of MiND and DANCo,
Rozza et al. 2012, Ceruti et al. 2014, and of Lombardi, Rozza, Ceruti, Casiraghi & Campadelli
2011) remove the biases that non-uniform densities and missing boundaries give TwoNN and the
MLE, where the suite's uniform cubes cannot?

Development family (generated here, seeded: numpy default_rng(1000 * seed + 10 * shape index +
dimension index); not the benchmark), N = 2500, d = 2, 5, 8, 12, 16, each set rotated into
D = d + 4 coordinates by a random orthonormal map, optional Gaussian noise of SD f times the
coordinate spread as in scripts/make_dimension_benchmark.py:
- cube: uniform [0, 1]^d;
- power3: u^3 coordinate-wise (density piled towards one corner, unbounded there);
- beta25: Beta(2, 5) coordinates (smooth, bounded density);
- gauss: standard Gaussian;
- mixture: three Gaussians of SD 1, 0.5 and 0.25 around random centres at distance 4;
- sphere: uniform on the unit d-sphere (in d + 1 coordinates);
- curved: the uniform cube with four more coordinates 0.5 sin(2 pi a_j . x) / (2 pi), a_j
  random unit vectors.

Estimators (numpy, as scripts/dimension_scale_study.py): TwoNN (Facco et al. 2017, 10 %
discarded) and the MLE (Levina & Bickel 2004, MacKay & Ghahramani averaging, k 10-20).

Local density variation L (ours): for every point the mean |log r_10(x) - log r_10(y)| over its
10 nearest neighbours y, the median of that over points, divided by the median of
log(r_20 / r_10) (both scale as 1/d on a uniform set, so L is free of that factor).

Corrections (the reference curve is inverted as in src/dimension/calibrate.rs: ladder 1..12
then x1.12 up to D, running maximum, linear interpolation):
- cube: uniform cubes (the suite's rule);
- matched: for every ladder dimension delta, references u^p for p = 1 (the cube), 2, 3 and 5;
  the reference value g(delta) is interpolated (linearly in L, clamped at p = 1 and p = 5)
  at the data's L among them. So a set whose density varies like u^p is corrected against
  u^p;
- boundary: references on the uniform torus (the periodic unit cube, no boundary) and the
  uniform cube; g(delta) is interpolated (linearly, clamped) at the data's boundary statistic B
  between the two: B is the median over points of |mean offset to the 20 nearest neighbours| /
  mean neighbour distance (the first-moment boundary statistic of Berry & Sauer 2017; offsets
  wrap on the torus). So a set without boundary (a sphere) is corrected against the torus.
References: numpy default_rng(0xC0FFEE + 97 * delta + p) (p = 0: the torus), N as the data.

--write DIR: write the development family (--seeds, --noise) in the format of
scripts/make_dimension_benchmark.py instead, so the suite itself can run on it.

--reference-draws R: the cube correction of the benchmark sets with each of R independent
reference draws alone and with their mean: how much of the error is the references' own
sampling noise.

Also printed: the references themselves at delta = 10 (TwoNN, MLE, L and B of the torus, of
u^p and of a standard Gaussian): two densities with the same L can give raw estimates that
differ by half.

Run (the venv of scripts/make_dimension_benchmark.py; --bench adds the 24 benchmark sets):
  /tmp/venv-dim/bin/python scripts/dimension_density_study.py --seeds 0 1 --noise 0
  /tmp/venv-dim/bin/python scripts/dimension_density_study.py --seeds 0 1 --noise 0 \
      --bench /tmp/dimbench --bench-seeds 0 1
  /tmp/venv-dim/bin/python scripts/dimension_density_study.py --clifford-check
  /tmp/venv-dim/bin/python scripts/dimension_density_study.py --reference-draws 4 \
      --bench /tmp/dimbench --bench-seeds 0 1
  /tmp/venv-dim/bin/python scripts/dimension_density_study.py --write /tmp/dimdev --seeds 0 1 \
      --noise 0
"""
import argparse
import json
import os

import numpy as np
from scipy.spatial import cKDTree
from sklearn.neighbors import NearestNeighbors

from dimension_reference_study import inv_interp as invert
from dimension_scale_study import ladder, mle, twonn

KINDS = ("cube", "power3", "beta25", "gauss", "mixture", "sphere", "curved")
DIMS = (2, 5, 8, 12, 16)
POWERS = (1, 2, 3, 5)
N = 2500


def knn(x, k=20, box=None):
    if box is not None:
        d, i = cKDTree(x, boxsize=box).query(x, k + 1)
    else:
        d, i = NearestNeighbors(n_neighbors=k + 1).fit(x).kneighbors(x)
    return d[:, 1:], i[:, 1:]


def evenness(x, idx, box=None):
    """Median over points of |mean neighbour offset| / mean neighbour distance (20 neighbours;
    the first-moment boundary statistic of Berry & Sauer 2017); on a torus (box) offsets wrap."""
    v = x[idx] - x[:, None, :]
    if box is not None:
        v = (v + box / 2) % box - box / 2
    m = np.linalg.norm(v, axis=2).mean(1)
    ok = m > 0
    return float(np.median(np.linalg.norm(v.mean(1), axis=1)[ok] / m[ok]))


def local_variation(dist, idx, k=10):
    ok = dist[:, 0] > 0
    lr = np.log(np.where(dist[:, k - 1] > 0, dist[:, k - 1], np.nan))
    loc = np.nanmean(np.abs(lr[:, None] - lr[idx[:, :k]]), axis=1)[ok]
    return float(np.nanmedian(loc) / np.median(np.log(dist[ok, 2 * k - 1] / dist[ok, k - 1])))


def stats(x, box=None):
    dist, idx = knn(x, box=box)
    return {
        "twonn": twonn(dist),
        "mle": mle(dist),
        "L": local_variation(dist, idx),
        "B": evenness(x, idx, box),
    }


def dev_set(kind, d, rng):
    if kind == "cube":
        z = rng.random((N, d))
    elif kind == "power3":
        z = rng.random((N, d)) ** 3
    elif kind == "beta25":
        z = rng.beta(2, 5, size=(N, d))
    elif kind == "gauss":
        z = rng.normal(size=(N, d))
    elif kind == "mixture":
        c = rng.normal(size=(3, d))
        c *= 4 / np.linalg.norm(c, axis=1)[:, None]
        comp = rng.integers(0, 3, N)
        z = c[comp] + rng.normal(size=(N, d)) * np.array([1, 0.5, 0.25])[comp][:, None]
    elif kind == "sphere":
        z = rng.normal(size=(N, d + 1))
        z /= np.linalg.norm(z, axis=1)[:, None]
    elif kind == "curved":
        x = rng.random((N, d))
        a = rng.normal(size=(4, d))
        a /= np.linalg.norm(a, axis=1)[:, None]
        z = np.hstack([x, 0.5 * np.sin(2 * np.pi * x @ a.T) / (2 * np.pi)])
    else:
        raise ValueError(kind)
    big = d + 4
    q, _ = np.linalg.qr(rng.normal(size=(big, big)))
    return z @ q[: z.shape[1]]


def family(seed, noise):
    """The development family of one seed: (kind, d, points), drawn as the study draws them."""
    for ki, kind in enumerate(KINDS):
        for di, d in enumerate(DIMS):
            rng = np.random.default_rng(1000 * seed + 10 * ki + di)
            yield kind, d, add_noise(dev_set(kind, d, rng), noise, rng)


def write_family(out, seeds, noise):
    """Write the family in the format of scripts/make_dimension_benchmark.py, for
    `cargo run --release --example bench_dimension_manifolds -- OUT`."""
    os.makedirs(out, exist_ok=True)
    entries = []
    for seed in seeds:
        for kind, d, x in family(seed, noise):
            fname = f"dev_{kind}_{d}__seed{seed}__noise{noise:g}.f64"
            x.astype("<f8").tofile(os.path.join(out, fname))
            entries.append(
                {"file": fname, "name": f"dev_{kind}_{d}", "d": d, "dim": int(x.shape[1]),
                 "n": int(x.shape[0]), "seed": seed, "noise": noise}
            )
    with open(os.path.join(out, "manifest.json"), "w") as fh:
        json.dump({"versions": {"numpy": np.__version__}, "entries": entries}, fh, indent=1)
    print(f"wrote {len(entries)} point sets to {out}")


def add_noise(x, f, rng):
    if f == 0:
        return x
    s = float(np.sqrt(np.mean(np.var(x, axis=0))))
    return x + rng.normal(0, f * s, size=x.shape)


REF_CACHE = {}


def reference(n, delta, p):
    """Stats of n points u^p in [0, 1]^delta; p = 0: the uniform torus (periodic cube)."""
    key = (n, delta, p)
    if key not in REF_CACHE:
        rng = np.random.default_rng(0xC0FFEE + 97 * delta + p)
        u = rng.random((n, delta))
        REF_CACHE[key] = stats(u, box=1.0) if p == 0 else stats(u ** p)
    return REF_CACHE[key]


def corrected(s, n, dim):
    """{estimator: {cube: value, matched: value}} for the data's stats s."""
    out = {}
    for est in ("twonn", "mle"):
        ds, g_cube, g_match, g_bound = [], [], [], []
        for delta in ladder(dim):
            refs = [reference(n, delta, p) for p in POWERS]
            ls = np.array([r["L"] for r in refs])
            vs = np.array([r[est] for r in refs])
            order = np.argsort(ls)
            ds.append(delta)
            g_cube.append(refs[0][est])
            g_match.append(float(np.interp(s["L"], ls[order], vs[order])))
            tor = reference(n, delta, 0)
            bs, gs = (tor["B"], refs[0]["B"]), (tor[est], refs[0][est])
            if bs[0] > bs[1]:
                bs, gs = bs[::-1], gs[::-1]
            g_bound.append(float(np.interp(s["B"], bs, gs)))
            if min(g_cube[-1], g_match[-1], g_bound[-1]) > s[est]:
                break
        ds = np.array(ds, float)
        out[est] = {
            "cube": invert(ds, np.array(g_cube), s[est]),
            "matched": invert(ds, np.array(g_match), s[est]),
            "boundary": invert(ds, np.array(g_bound), s[est]),
        }
    return out


def cube_reference(n, delta, r):
    """Stats of the r-th independent uniform cube (r = 0 is the cube of `reference`)."""
    key = (n, delta, 1, r)
    if key not in REF_CACHE:
        rng = np.random.default_rng(0xC0FFEE + 97 * delta + 1 + 7919 * r)
        REF_CACHE[key] = stats(rng.random((n, delta)))
    return REF_CACHE[key]


def reference_noise(bench, seeds, draws):
    """How much of the error is the reference cubes' own sampling noise: the cube correction
    with each of `draws` independent reference draws alone, and with their mean."""
    with open(os.path.join(bench, "manifest.json")) as fh:
        ents = [e for e in json.load(fh)["entries"] if e["seed"] in seeds and e["noise"] == 0]
    data = []
    for e in ents:
        x = np.fromfile(os.path.join(bench, e["file"]), dtype="<f8").reshape(e["n"], e["dim"])
        data.append((e, stats(x)))
    for est in ("twonn", "mle"):
        variants = [[r] for r in range(draws)] + [list(range(draws))]
        for rs in variants:
            errs, low = [], []
            for e, s in data:
                ds, g = [], []
                for delta in ladder(e["dim"]):
                    ds.append(delta)
                    g.append(float(np.mean([cube_reference(e["n"], delta, r)[est] for r in rs])))
                    if g[-1] > s[est]:
                        break
                v = invert(np.array(ds, float), np.array(g), s[est])
                errs.append(abs(v - e["d"]) / e["d"])
                if e["d"] <= 10:
                    low.append(errs[-1])
            what = f"draw {rs[0]}" if len(rs) == 1 else f"mean of {len(rs)} draws"
            print(
                f"reference noise, benchmark seeds {seeds}, {est:5s} {what:16s} MRE "
                f"{100 * np.mean(errs):.1f} / {100 * np.mean(low):.1f}",
                flush=True,
            )


def clifford_check():
    """The torus references without a periodic search: the flat torus [0, 1)^delta sits
    isometrically in R^(2 delta) as (cos 2 pi u, sin 2 pi u) / (2 pi) per coordinate (the
    Clifford torus); chord and periodic distances differ at third order in the distance, so
    the neighbour statistics should agree."""
    for delta in (2, 5, 10, 16):
        rng = np.random.default_rng(0xC0FFEE + 97 * delta)
        u = rng.random((N, delta))
        per = stats(u, box=1.0)
        cl = stats(np.hstack([np.cos(2 * np.pi * u), np.sin(2 * np.pi * u)]) / (2 * np.pi))
        print(
            f"delta {delta:2d}  periodic: TwoNN {per['twonn']:.2f} MLE {per['mle']:.2f} B {per['B']:.3f}"
            f"   Clifford: TwoNN {cl['twonn']:.2f} MLE {cl['mle']:.2f} B {cl['B']:.3f}",
            flush=True,
        )


def mre(rows, est, corr, sel=lambda r: True):
    e = [abs(r["c"][est][corr] - r["d"]) / r["d"] for r in rows if sel(r)]
    return 100 * float(np.mean(e)) if e else float("nan")


def summary(rows, title, groups):
    print(f"\n{title}: MRE % (all / d <= 10)")
    for est in ("twonn", "mle"):
        for corr in ("cube", "matched", "boundary"):
            cells = [f"{mre(rows, est, corr):.1f} / {mre(rows, est, corr, lambda r: r['d'] <= 10):.1f}"]
            for g in groups:
                cells.append(f"{g} {mre(rows, est, corr, lambda r, g=g: r['kind'] == g):.1f}")
            print(f"  {est:5s} {corr:7s} " + "  ".join(cells))


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--seeds", type=int, nargs="+", default=[0])
    ap.add_argument("--noise", type=float, default=0.0)
    ap.add_argument("--bench")
    ap.add_argument("--bench-seeds", type=int, nargs="+", default=[0])
    ap.add_argument("--clifford-check", action="store_true")
    ap.add_argument("--reference-draws", type=int, default=0)
    ap.add_argument("--write")
    a = ap.parse_args()
    if a.write:
        write_family(a.write, a.seeds, a.noise)
        return
    if a.reference_draws:
        reference_noise(a.bench, a.bench_seeds, a.reference_draws)
        return
    if a.clifford_check:
        clifford_check()
        return
    print("references at delta = 10 (N = 2500): TwoNN, MLE, L")
    for p in (0,) + POWERS:
        r = reference(N, 10, p)
        what = "torus" if p == 0 else f"u^{p}"
        print(f"  {what}: {r['twonn']:.2f} {r['mle']:.2f} L {r['L']:.2f} B {r['B']:.3f}")
    g = stats(np.random.default_rng(0xC0FFEE + 10).normal(size=(N, 10)))
    print(f"  Gaussian: {g['twonn']:.2f} {g['mle']:.2f} L {g['L']:.2f} B {g['B']:.3f}")
    rows = []
    for seed in a.seeds:
        for kind, d, x in family(seed, a.noise):
            s = stats(x)
            c = corrected(s, N, x.shape[1])
            rows.append({"kind": kind, "d": d, "c": c})
            print(
                f"dev {kind:8s} d {d:2d} seed {seed} noise {a.noise:g}  L {s['L']:.2f}  "
                f"twonn {s['twonn']:.2f} -> cube {c['twonn']['cube']:.2f} matched {c['twonn']['matched']:.2f}  "
                f"mle {s['mle']:.2f} -> cube {c['mle']['cube']:.2f} matched {c['mle']['matched']:.2f}  "
                f"B {s['B']:.3f} boundary: twonn {c['twonn']['boundary']:.2f} mle {c['mle']['boundary']:.2f}",
                flush=True,
            )
    summary(rows, f"development family, seeds {a.seeds}, noise {a.noise:g}", KINDS)
    if a.bench:
        with open(os.path.join(a.bench, "manifest.json")) as fh:
            ents = json.load(fh)["entries"]
        brows = []
        for e in ents:
            if e["seed"] not in a.bench_seeds or abs(e["noise"] - a.noise) > 1e-12:
                continue
            x = np.fromfile(os.path.join(a.bench, e["file"]), dtype="<f8").reshape(e["n"], e["dim"])
            s = stats(x)
            c = corrected(s, e["n"], e["dim"])
            brows.append({"kind": e["name"], "d": e["d"], "c": c})
            print(
                f"bench {e['name']:18s} d {e['d']:2d} seed {e['seed']}  L {s['L']:.2f}  "
                f"twonn {s['twonn']:.2f} -> cube {c['twonn']['cube']:.2f} matched {c['twonn']['matched']:.2f}  "
                f"mle {s['mle']:.2f} -> cube {c['mle']['cube']:.2f} matched {c['mle']['matched']:.2f}  "
                    f"B {s['B']:.3f} boundary: twonn {c['twonn']['boundary']:.2f} mle {c['mle']['boundary']:.2f}",
                flush=True,
            )
        summary(brows, f"benchmark, seeds {a.bench_seeds}, noise {a.noise:g}", ["Mbeta", "Mp2_Paraboloid", "Mp3_Paraboloid", "M1_Sphere"])


if __name__ == "__main__":
    main()
