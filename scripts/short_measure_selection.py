#!/usr/bin/env python3
"""Forward selection of the irregular-rhythm score's measures on the short labelled records.

Run with /tmp/venv-c (Python 3, numpy 2.4.6; nothing else is imported):

    cargo run --release --example fit_short -- ../shared/data/cinc2017-sample --dump /tmp/short.csv
    /tmp/venv-c/bin/python scripts/short_measure_selection.py /tmp/short.csv

The input has one line per record (`fit_short --dump`): the label, the readability of the record
under each rule of `rhythm::score_fit::READABILITY_RULES` (columns `readable_*`), the organised-pattern
rule, the score's measures and further candidate measures.

The judge of a measure set is the same nested cross-validation as `rhythm::score_fit::out_of_fold`
(Varma & Simon 2006): logistic regression (Cox 1958) on the standardised measures with an L2
penalty on the weights (le Cessie & van Houwelingen 1992), a NaN measure at its centre; an inner
stratified 5-fold cross-validation chooses the readability rule, the penalty (30, 10, 3, 1) and
the threshold (0.1-0.9, steps of 0.05) by the highest irregular-vs-rest F1, first of equals; the
outer stratified 10-fold cross-validation scores the held-out records (an irregular record called
unreadable is a miss; a record whose RR follows an organised pattern is never called irregular).
Unlike the Rust code, the folds are drawn by numpy's PCG64 generator, so one seed gives other folds
than `validate_short`; the numbers are means over the fold seeds FOLD_SEEDS (outer seed s, inner
seeds s + 1 + fold).

Forward selection: starting from BASE, every remaining candidate is added in turn, the one with
the highest mean out-of-fold F1 is kept if it raises that mean, and again, until none does.

`--rule se_at_sp97` replaces the inner choice by: the highest inner Se among the choices whose
inner Sp is at least 97 % (the highest Sp when none is); `--sets` only scores BASE, the ten measures before
this selection (TEN) and the score's present measures (SCORE), without selection. Research use only.
"""

import argparse
import csv
import math

import numpy as np

# Readability rules (min_agreement_plausible, min_kurtosis_plausible), as READABILITY_RULES.
READABILITY_RULES = [(0.8, 0.0), (0.7, 5.0), (0.7, 0.0), (0.6, 5.0), (0.6, 0.0)]
RIDGE_GRID = [30.0, 10.0, 3.0, 1.0]
THRESHOLD_GRID = [round(0.1 + 0.05 * k, 2) for k in range(17)]
INNER_FOLDS = 5
OUTER_FOLDS = 10
FOLD_SEEDS = list(range(2017, 2025))

BASE = [
    "cosen",
    "drr_median_rel",
    "drr_occupancy",
    "drr_origin_share",
    "p_wave",
    "log10_fwave_amplitude",
    "agreement",
    "ln_median_rr",
]
TEN = BASE + ["fwave_organisation", "qrs_match"]
SCORE = BASE + ["fwave_dominant_hz", "qrs_match", "off_base_share", "turning_point_ratio", "nrmssd"]
CANDIDATES = [
    "fwave_organisation",
    "qrs_match",
    "nrmssd",
    "off_base_share",
    "turning_point_ratio",
    "fwave_band_share",
    "fwave_dominant_hz",
    "p_wave_segment_share",
    "flagged_fraction",
]


def read(path):
    with open(path, newline="") as f:
        rows = list(csv.DictReader(f))
    cols = {k: np.array([float(r[k]) for r in rows]) for k in rows[0] if k not in ("record", "label")}
    y = cols["irregular"] > 0.5
    readable = np.stack([cols[f"readable_{m:g}_k{k:g}"] > 0.5 for m, k in READABILITY_RULES], axis=1)
    fit_ok = readable & ~(cols["base_cycle"] > 0.5)[:, None]
    return cols, y, fit_ok


def stratified_folds(y, k, seed):
    rng = np.random.Generator(np.random.PCG64(seed))
    fold = np.zeros(len(y), dtype=int)
    nxt = 0
    for cls in (True, False):
        idx = np.flatnonzero(y == cls)
        rng.shuffle(idx)
        for i in idx:
            fold[i] = nxt % k
            nxt += 1
    return fold


def fit_logistic(x, y, ridge):
    center = np.zeros(x.shape[1])
    scale = np.ones(x.shape[1])
    for k in range(x.shape[1]):
        v = x[:, k][np.isfinite(x[:, k])]
        if len(v) >= 2:
            center[k] = v.mean()
            sd = v.std(ddof=1)
            scale[k] = sd if sd > 0 else 1.0
    z = standardise(x, center, scale)
    beta = np.zeros(z.shape[1])
    pen = np.full(z.shape[1], ridge)
    pen[0] = 1e-9
    t = y.astype(float)
    for _ in range(100):
        p = 1.0 / (1.0 + np.exp(-(z @ beta)))
        w = np.maximum(p * (1 - p), 1e-12)
        g = z.T @ (t - p)
        g[1:] -= ridge * beta[1:]
        h = (z * w[:, None]).T @ z + np.diag(pen)
        d = np.linalg.solve(h, g)
        if not np.all(np.isfinite(d)):
            break
        beta += d
        if np.max(np.abs(d)) < 1e-10:
            break
    return center, scale, beta


def standardise(x, center, scale):
    z = (x - center) / scale
    z[~np.isfinite(z)] = 0.0
    return np.hstack([np.ones((len(x), 1)), z])


def probabilities(model, x, ok):
    center, scale, beta = model
    p = 1.0 / (1.0 + np.exp(-(standardise(x, center, scale) @ beta)))
    return np.where(ok, p, 0.0)


def counts(prob, y, t):
    call = (prob >= t) & (prob > 0)
    tp = int(np.sum(call & y))
    fp = int(np.sum(call & ~y))
    fn = int(np.sum(~call & y))
    tn = int(np.sum(~call & ~y))
    return tp, fp, fn, tn


def f1(tp, fp, fn):
    return 0.0 if tp == 0 else 2 * tp / (2 * tp + fp + fn)


def choose_and_fit(x, y, fit_ok, seed, rule):
    folds = stratified_folds(y, INNER_FOLDS, seed)
    best, best_key = None, None
    for a in range(fit_ok.shape[1]):
        for ridge in RIDGE_GRID:
            prob = np.zeros(len(y))
            for f in range(INNER_FOLDS):
                tr, te = folds != f, folds == f
                m = tr & fit_ok[:, a]
                model = fit_logistic(x[m], y[m], ridge)
                prob[te] = probabilities(model, x[te], fit_ok[te, a])
            for t in THRESHOLD_GRID:
                tp, fp, fn, tn = counts(prob, y, t)
                if rule == "f1":
                    key = (f1(tp, fp, fn),)
                else:
                    sp = tn / max(tn + fp, 1)
                    se = tp / max(tp + fn, 1)
                    key = (1, se, sp) if sp >= 0.97 else (0, sp, se)
                if best_key is None or key > best_key:
                    best_key, best = key, (a, ridge, t)
    a, ridge, t = best
    m = fit_ok[:, a]
    return fit_logistic(x[m], y[m], ridge), a, t


def out_of_fold(x, y, fit_ok, seed, rule):
    folds = stratified_folds(y, OUTER_FOLDS, seed)
    call = np.zeros(len(y), dtype=bool)
    for f in range(OUTER_FOLDS):
        tr, te = folds != f, folds == f
        model, a, t = choose_and_fit(x[tr], y[tr], fit_ok[tr], seed + 1 + f, rule)
        p = probabilities(model, x[te], fit_ok[te, a])
        call[te] = (p >= t) & (p > 0)
    tp = int(np.sum(call & y))
    fp = int(np.sum(call & ~y))
    fn = int(np.sum(~call & y))
    tn = int(np.sum(~call & ~y))
    return tp / (tp + fn), tn / (tn + fp), f1(tp, fp, fn)


def judge(cols, y, fit_ok, names, rule):
    x = np.stack([cols[n] for n in names], axis=1)
    res = np.array([out_of_fold(x, y, fit_ok, s, rule) for s in FOLD_SEEDS])
    return res


def show(label, res):
    se, sp, f = res.mean(axis=0)
    print(
        f"| {label} | {100 * se:.1f} | {100 * sp:.1f} | {f:.3f} | "
        f"{res[:, 2].min():.3f}-{res[:, 2].max():.3f} | {100 * res[:, 1].min():.1f}-{100 * res[:, 1].max():.1f} |",
        flush=True,
    )


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("dump")
    ap.add_argument("--rule", choices=["f1", "se_at_sp97"], default="f1")
    ap.add_argument("--sets", action="store_true")
    args = ap.parse_args()
    cols, y, fit_ok = read(args.dump)
    print(
        f"{len(y)} records, {int(y.sum())} irregular; inner rule {args.rule}; "
        f"fold seeds {FOLD_SEEDS[0]}-{FOLD_SEEDS[-1]}; mean out-of-fold numbers"
    )
    print("| measures | Se % | Sp % | F1 | F1 range over seeds | Sp range over seeds |")
    print("|---|---:|---:|---:|---:|---:|")
    if args.sets:
        show("the eight earlier measures", judge(cols, y, fit_ok, BASE, args.rule))
        show("the ten measures before the selection", judge(cols, y, fit_ok, TEN, args.rule))
        show("the score's thirteen measures", judge(cols, y, fit_ok, SCORE, args.rule))
        return
    chosen = list(BASE)
    best = judge(cols, y, fit_ok, chosen, args.rule)
    show("the eight earlier measures", best)
    left = list(CANDIDATES)
    while left:
        trials = []
        for c in left:
            res = judge(cols, y, fit_ok, chosen + [c], args.rule)
            show(f"step {len(chosen) - len(BASE) + 1}: + {c}", res)
            trials.append((res[:, 2].mean(), c, res))
        f, c, res = max(trials, key=lambda t: t[0])
        if not f > best[:, 2].mean() or math.isnan(f):
            print(f"stop: no candidate raises the mean F1 above {best[:, 2].mean():.3f}")
            break
        chosen.append(c)
        left.remove(c)
        best = res
        print(f"kept: {c} (mean F1 {f:.3f})", flush=True)
    print("chosen: " + ", ".join(chosen))


if __name__ == "__main__":
    main()
