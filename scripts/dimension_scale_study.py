#!/usr/bin/env python3
"""Side study for docs/validation-dimension.md: can a nearest-neighbour estimator that looks at
the smallest scales, or a consensus rule that uses it, lower the error on the benchmark sets of
d <= 10 without hurting the others or the noisy sets?

Estimators (all corrected against uniform reference cubes as src/dimension/calibrate.rs does:
reference curve on the ladder 1..12 then x1.12 up to the ambient dimension, running maximum,
linear interpolation; references numpy default_rng(0xC0FFEE + delta), N = 2500):
- twonn: TwoNN (Facco et al. 2017), 10 % of the largest ratios discarded;
- mle: Levina & Bickel (2004) with the MacKay & Ghahramani (2005) averaging of inverses, k 10-20;
- gride_n: GRIDE (Denti, Doimo, Laio & Mira 2022), maximum likelihood of r_2n / r_n, n = 2, 4, 8,
  16, and gride_plateau_T: the corrected GRIDE read at the smallest n of 1 (TwoNN without
  discarding), 2, 4, 8 whose value is within T of the value at 2n (the scale where the estimate
  stops changing, as Denti et al. read it off the d-against-n curve), T = 0.05, 0.1, 0.2;
- mle0_kK: the MLE at each k = K..20 (MacKay-Ghahramani per k) against the mean k-th neighbour
  distance R_k, fitted linearly in R_k^2 and read at R = 0 (the regression-to-zero-radius idea
  of GeoMLE, Gomtsyan, Mokrov, Panov & Yanovich 2019; smooth density and curvature change the
  mass of a small ball by a relative O(R^2), hence R^2), K = 4, 6, 8, 10;
- twonn_in / mle_in: TwoNN and MLE on the half of the points whose 20 neighbours are most evenly
  spread around them (norm of the mean neighbour offset over the mean neighbour distance, the
  first-moment boundary statistic of Berry & Sauer 2017), in the data and in the references.

Consensus rules: the per-set corrected TwoNN, MLE, correlation and local-PCA values that
bench_dimension_manifolds printed into docs/validation-dimension.md, plus mle0_k4 from here;
the agreeing group is that of src/dimension/consensus.rs.

--mbeta-scaling: TwoNN and MLE on Mbeta (skdim generator, random_state 7) and on the uniform
10-cube at N = 2500, 10 000 and 40 000: does Mbeta's deficit shrink with N?

Run (the venv of scripts/make_dimension_benchmark.py):
  /tmp/venv-dim/bin/python scripts/dimension_scale_study.py /tmp/dimbench --seeds 0 1 --noise 0
  /tmp/venv-dim/bin/python scripts/dimension_scale_study.py /tmp/dimbench --seeds 0 1 --noise 0 \
      --rules docs/validation-dimension.md
  /tmp/venv-dim/bin/python scripts/dimension_scale_study.py --mbeta-scaling
"""
import argparse
import json
import re

import numpy as np
from scipy.special import betaln
from sklearn.neighbors import NearestNeighbors

from dimension_consensus_rules import AG as AGREE
from dimension_consensus_rules import group as consensus_group
from dimension_reference_study import inv_interp as invert

KMAX = 20
GRIDE_NS = (1, 2, 4, 8, 16)


def knn(x, k):
    d, i = NearestNeighbors(n_neighbors=k + 1).fit(x).kneighbors(x)
    return d[:, 1:], i[:, 1:]


def twonn(dist, f=0.1):
    r = dist[dist[:, 0] > 0]
    mu = np.sort(r[:, 1] / r[:, 0])
    n = len(mu)
    keep = min(int(np.floor(n * (1 - f))), n - 1)
    x = np.log(mu[:keep])
    y = -np.log(1 - np.arange(1, keep + 1) / n)
    return (x * y).sum() / (x * x).sum()


def mle_k(r, k):
    return 1 / np.mean(np.log(r[:, k - 1:k]) - np.log(r[:, :k - 1]), axis=1).mean()


def mle(dist, k1=10, k2=20):
    r = dist[dist[:, 0] > 0]
    return float(np.mean([mle_k(r, k) for k in range(k1, k2 + 1)]))


def gride(dist, n1):
    n2 = 2 * n1
    r = dist[dist[:, 0] > 0]
    lm = np.log(r[:, n2 - 1] / r[:, n1 - 1])
    lm = lm[lm > 0]

    def ll(d):
        a = d * lm
        return np.sum(np.log(d) + (n2 - n1 - 1) * (a + np.log(-np.expm1(-a))) - (d * (n2 - 1) + 1) * lm) - len(lm) * betaln(n2 - n1, n1)

    lo, hi = 0.05, 300.0
    for _ in range(120):
        a = lo + (hi - lo) * 0.382
        b = lo + (hi - lo) * 0.618
        if ll(a) < ll(b):
            lo = a
        else:
            hi = b
    return (lo + hi) / 2


def mle0(dist, k_lo):
    r = dist[dist[:, 0] > 0]
    ks = range(k_lo, KMAX + 1)
    rk = np.array([r[:, k - 1].mean() for k in ks])
    dk = np.array([mle_k(r, k) for k in ks])
    return float(np.polyfit(rk ** 2, dk, 1)[1])


def evenness(x, idx):
    v = x[idx] - x[:, None, :]
    m = np.linalg.norm(v, axis=2).mean(1)
    return np.linalg.norm(v.mean(1), axis=1) / np.where(m > 0, m, 1)


def estimates(x):
    dist, idx = knn(x, 2 * GRIDE_NS[-1])
    idx = idx[:, :KMAX]
    sel = evenness(x, idx)
    sel = sel <= np.median(sel)
    out = {"twonn": twonn(dist), "mle": mle(dist)}
    for n in GRIDE_NS:
        out[f"gride_{n}"] = gride(dist, n) if n > 1 else twonn(dist, 0.0)
    for k in (4, 6, 8, 10):
        out[f"mle0_k{k}"] = mle0(dist, k)
    out["twonn_in"] = twonn(dist[sel])
    out["mle_in"] = mle(dist[sel])
    return out


def gride_plateau(c, tol):
    for a, b in zip(GRIDE_NS, GRIDE_NS[1:]):
        if abs(c[f"gride_{a}"] / c[f"gride_{b}"] - 1) <= tol:
            return c[f"gride_{a}"]
    return c[f"gride_{GRIDE_NS[-1]}"]


def ladder(dim):
    out, d = [], 1
    while d < dim:
        out.append(d)
        d = d + 1 if d < 12 else int(np.ceil(d * 1.12))
    out.append(max(dim, 1))
    return out


def group(vals):
    """(median, members) of the largest agreeing group (the consensus rule's grouping)."""
    best = consensus_group(vals)
    return best[2], best[3]


def rules(c, x):
    """Consensus candidates from corrected values c (twonn, mle, correlation, local_pca) and x."""
    med, mem = group(c)
    out = {"current: min(twonn, group median)": min(c["twonn"], med) if "twonn" in mem else med}
    cur = out["current: min(twonn, group median)"]
    out["x if within AGREE of group median, else current"] = x if abs(x / med - 1) <= AGREE else cur
    out["x if within AGREE of current, else current"] = x if abs(x / cur - 1) <= AGREE else cur
    out["x if within 10 % of current, else current"] = x if abs(x / cur - 1) <= 0.1 else cur
    c5 = dict(c, x=x)
    med5, mem5 = group(c5)
    out["x joins, min(twonn, median)"] = min(c["twonn"], med5) if "twonn" in mem5 else med5
    out["x joins, x if member"] = x if "x" in mem5 else med5
    out["x joins, min(x, median)"] = min(x, med5) if "x" in mem5 else med5
    for name in ("mle", "twonn"):
        cr = {k: v for k, v in c.items() if k != name}
        cr["x"] = x
        medr, memr = group(cr)
        out[f"x replaces {name}, median"] = medr
        other = "twonn" if name == "mle" else "x"
        out[f"x replaces {name}, min({other}, median)"] = min(cr[other], medr) if other in memr else medr
    out["x alone"] = x
    return out


def doc_values(path):
    vals = {}
    for line in open(path):
        m = re.match(r"^(\S+)\s+d\s+\d+\s+D\s+\d+\s+seed (\d) noise (\S+)\s+(.*)\| consensus", line)
        if m:
            name, seed, noise, rest = m.groups()
            vals[(name, int(seed), float(noise))] = {k: float(b) for k, _, b in re.findall(r"(\w+) ([\d.]+)/([\d.]+)", rest)}
    return vals


def mre(pairs):
    e = [abs(v - d) / d for d, v in pairs]
    low = [abs(v - d) / d for d, v in pairs if d <= 10]
    return 100 * np.mean(e), 100 * np.mean(low)


def mbeta_scaling():
    from skdim.datasets import BenchmarkManifolds

    bm = BenchmarkManifolds(random_state=7)
    for n in (2500, 10000, 40000):
        x = bm._gen_campadelli_beta_data(n, 40, 10)
        c = np.random.default_rng(1).random((n, 10))
        dx, _ = knn(x, KMAX)
        dc, _ = knn(c, KMAX)
        print(f"N {n:6}  Mbeta: TwoNN {twonn(dx):.2f} MLE {mle(dx):.2f}   10-cube: TwoNN {twonn(dc):.2f} MLE {mle(dc):.2f}"
              f"   ratio TwoNN {twonn(dx) / twonn(dc):.2f} MLE {mle(dx) / mle(dc):.2f}", flush=True)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("folder", nargs="?")
    ap.add_argument("--seeds", type=int, nargs="+", default=[0, 1])
    ap.add_argument("--noise", type=float, default=0.0)
    ap.add_argument("--rules", help="docs/validation-dimension.md, for the consensus rules")
    ap.add_argument("--per-set", action="store_true")
    ap.add_argument("--mbeta-scaling", action="store_true")
    a = ap.parse_args()
    if a.mbeta_scaling:
        mbeta_scaling()
        return
    man = json.load(open(a.folder + "/manifest.json"))["entries"]
    res = []
    for e in man:
        if e["seed"] in a.seeds and e["noise"] == a.noise:
            x = np.fromfile(a.folder + "/" + e["file"], dtype="<f8").reshape(e["n"], e["dim"])
            res.append(dict(est=estimates(x), name=e["name"], d=e["d"], D=e["dim"], seed=e["seed"]))
    refs = {}
    for dim in sorted({r["D"] for r in res}):
        for delta in ladder(dim):
            if delta not in refs:
                refs[delta] = estimates(np.random.default_rng(0xC0FFEE + delta).random((2500, delta)))
    keys = list(res[0]["est"])
    corr = []
    for r in res:
        ds = np.array(ladder(r["D"]), float)
        c = {k: invert(ds, np.array([refs[int(d)][k] for d in ds]), r["est"][k]) for k in keys}
        for t in (0.05, 0.1, 0.2):
            c[f"gride_plateau_{t}"] = gride_plateau(c, t)
        corr.append(c)
    keys = list(corr[0])
    print(f"seeds {a.seeds}, noise {a.noise}: MRE all / d <= 10 after the cube correction")
    for k in keys:
        print(f"  {k:18} {'%5.1f %% / %5.1f %%' % mre([(r['d'], c[k]) for r, c in zip(res, corr)])}")
    if a.per_set:
        for r, c in zip(res, corr):
            if r["d"] <= 10:
                print(f"  {r['name']:18} seed {r['seed']} d {r['d']:2}  " + " ".join(f"{k} {c[k]:.2f}" for k in keys))
    if a.rules:
        doc = doc_values(a.rules)
        acc = {}
        for r, c in zip(res, corr):
            for k, v in rules(doc[(r["name"], r["seed"], a.noise)], c["mle0_k4"]).items():
                acc.setdefault(k, []).append((r["d"], v))
        print("  consensus rules (x = mle0_k4):")
        for k, pairs in acc.items():
            print(f"    {k:36} {'%5.1f %% / %5.1f %%' % mre(pairs)}")


if __name__ == "__main__":
    main()
