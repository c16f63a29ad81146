#!/usr/bin/env python3
"""Side study for docs/validation-dimension.md: does the reference family (uniform cube, ball or
sphere) or a smooth fit through the reference curve change the accuracy of the finite-sample
correction? Also computes an angle-moment estimator (1 / mean cos^2 of the angles between a
point's neighbour directions; E cos^2 = 1/d for isotropic directions) and a MiND_ML-style
estimator (Rozza et al. 2012: maximum likelihood of rho = r1 / r_(k+1), k = 10).

Reads the sets written by scripts/make_dimension_benchmark.py (seeds 0 and 1, no noise), draws
its own seeded references (N = 2500, numpy default_rng(12345 + delta)), prints the MRE per
estimator, reference family and inversion rule. Needs numpy, scipy, scikit-learn (the venv of
make_dimension_benchmark.py plus scikit-learn, which scikit-dimension pulls in).

Run:
  /tmp/venv-dim/bin/python scripts/dimension_reference_study.py /tmp/dimbench
"""
import json
import sys

import numpy as np
from sklearn.neighbors import NearestNeighbors

def knn(x, k):
    nn = NearestNeighbors(n_neighbors=k+1).fit(x)
    d, i = nn.kneighbors(x)
    return d[:,1:], i[:,1:]

def twonn(dist, f=0.1):
    r = dist[dist[:,0]>0]
    mu = np.sort(r[:,1]/r[:,0]); n=len(mu)
    keep = min(int(np.floor(n*(1-f))), n-1)
    x = np.log(mu[:keep]); y = -np.log(1-np.arange(1,keep+1)/n)
    return (x*y).sum()/(x*x).sum()

def mle(dist, k1=10, k2=20):
    r = dist[dist[:,0]>0]; tot=0
    for k in range(k1,k2+1):
        inv = np.mean(np.log(r[:,k-1:k]) - np.log(r[:,:k-1]), axis=1).mean()
        tot += 1/inv
    return tot/(k2-k1+1)

def angle(x, idx, k=10):
    v = x[idx[:,:k]] - x[:,None,:]
    nrm = np.linalg.norm(v, axis=2); ok = (nrm>0).all(1)
    v = v[ok]/nrm[ok][:,:,None]
    g = np.einsum('nid,njd->nij', v, v)**2
    s = (g.sum((1,2)) - k)/(k*(k-1))
    return 1/np.mean(s)

def mind(dist, k=10):
    r = dist[dist[:,0]>0]
    rho = r[:,0]/r[:,k]
    lr = np.log(rho)
    def ll(d):
        return np.sum(np.log(d*k) + (k-1)*np.log1p(-rho**d) + (d-1)*lr)
    lo, hi = 0.1, 200.0
    for _ in range(100):
        a = lo+(hi-lo)*0.382; b = lo+(hi-lo)*0.618
        if ll(a) < ll(b): lo = a
        else: hi = b
    return (lo+hi)/2

def ests(x):
    dist, idx = knn(x, 20)
    return dict(twonn=twonn(dist), mle=mle(dist), angle=angle(x, idx), mind=mind(dist))

def ladder(D):
    out=[]; d=1
    while d < D:
        out.append(d); d = d+1 if d<12 else int(np.ceil(d*1.12))
    out.append(max(D,1)); return out

def ref(kind, n, delta, seed=12345):
    rng = np.random.default_rng(seed+delta)
    if kind=='cube': return rng.random((n,delta))
    if kind=='ball':
        g = rng.normal(size=(n,delta)); g/= np.linalg.norm(g,axis=1)[:,None]
        return g * rng.random(n)[:,None]**(1/delta)
    if kind=='sphere':
        g = rng.normal(size=(n,delta+1)); return g/np.linalg.norm(g,axis=1)[:,None]


def curve(refs, kind, est, D):
    ds, g = [], []
    for d in ladder(D):
        if (kind, d) in refs:
            ds.append(d)
            g.append(refs[(kind, d)][est])
    return np.array(ds, float), np.array(g)


def inv_interp(ds, g, r):
    g = np.maximum.accumulate(g)
    if r <= g[0]:
        return r / g[0] * ds[0]
    for i in range(1, len(g)):
        if r <= g[i]:
            t = (r - g[i - 1]) / (g[i] - g[i - 1]) if g[i] > g[i - 1] else 0
            return ds[i - 1] + t * (ds[i] - ds[i - 1])
    return ds[-1]


def inv_fit(ds, g, r, deg):
    c = np.polyfit(np.log(ds), np.log(g / ds), min(deg, len(ds) - 1))
    grid = np.exp(np.linspace(0, np.log(ds[-1]), 2000))
    gg = np.maximum.accumulate(grid * np.exp(np.polyval(c, np.log(grid))))
    if r <= gg[0]:
        return r / gg[0]
    if r >= gg[-1]:
        return ds[-1]
    return np.interp(r, gg, grid)


def main():
    folder = sys.argv[1]
    man = json.load(open(folder + "/manifest.json"))["entries"]
    res = []
    for e in man:
        if e["seed"] in (0, 1) and e["noise"] == 0.0:
            x = np.fromfile(folder + "/" + e["file"], dtype="<f8").reshape(e["n"], e["dim"])
            r = ests(x)
            r.update(name=e["name"], d=e["d"], D=e["dim"])
            res.append(r)
            print(e["name"], e["seed"], {k: round(float(v), 2) for k, v in r.items() if k in ("twonn", "mle", "angle", "mind")}, flush=True)
    refs = {}
    for kind in ["cube", "ball", "sphere"]:
        for delta in ladder(96):
            refs[(kind, delta)] = ests(ref(kind, 2500, delta))
            if delta >= 80:
                break
    for est in ["twonn", "mle", "mind"]:
        for kind in ["cube", "ball", "sphere"]:
            for meth in ["interp", "fit2", "fit3"]:
                errs, low = [], []
                for r in res:
                    ds, g = curve(refs, kind, est, r["D"])
                    v = inv_interp(ds, g, r[est]) if meth == "interp" else inv_fit(ds, g, r[est], int(meth[-1]))
                    e = abs(v - r["d"]) / r["d"]
                    errs.append(e)
                    if r["d"] <= 10:
                        low.append(e)
                print(f"{est:6} {kind:6} {meth:6} MRE all {100 * np.mean(errs):5.1f} %  d<=10 {100 * np.mean(low):5.1f} %")


if __name__ == "__main__":
    main()
