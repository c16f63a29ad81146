#!/usr/bin/env python3
"""How far the published estimators get on the 24 benchmark manifolds, set by set, next to the
suite: is an MRE of 4 % over the sets of d <= 10 within reach of any of them?

Estimators (scikit-dimension 0.5.0, pinned as in scripts/make_dimension_benchmark.py; defaults
except where said):
- DANCo (Ceruti, Bassis, Rozza, Lombardi, Casiraghi & Campadelli 2014): k = 10, calibrated
  against its own reference balls up to the ambient dimension, random_state 0;
- MiND_ML (Rozza, Lombardi, Ceruti, Casiraghi & Campadelli 2012), version MLk, k = 20, with the
  largest dimension it may return raised from its default 10 to the ambient dimension D;
- TLE (Amsaleg, Chelly, Houle, Kawarabayashi, Radovanovic & Treeratanajaru 2019), defaults;
- MADA (Farahmand, Szepesvari & Audibert 2007), defaults;
- ESS (Johnsson, Soneson & Fontes 2015), defaults (ver "a"), only when asked (--estimators):
  it is much slower than the others here.
Beside them, the suite's own estimates (corrected TwoNN, MLE, correlation, local PCA and the
consensus) read from the per-set lines that `cargo run --release --example
bench_dimension_manifolds` prints (files given with --ours).

Per set the estimate and the CPU time are kept in a JSON cache (--cache), so a run can be
resumed and several runs (for example ESS in a second process) merged with --merge.

Printed / written (--write-doc FILE replaces the text between the markers
<!-- skdim-compare:start --> and <!-- skdim-compare:end -->): for every estimator the MRE
|d^ - d| / d over all sets and over d <= 10, per seed; per set the estimates (mean over the
seeds) and the best of all estimators ("oracle": for every set the estimator closest to the
truth, chosen after seeing the truth, so a bound no rule can beat with these estimators).

Run (after scripts/make_dimension_benchmark.py wrote /tmp/dimbench):
  /tmp/venv-dim/bin/python scripts/dimension_skdim_compare.py /tmp/dimbench --seeds 0 1 2 3 4 \
      --cache /tmp/skdim-compare.json
  /tmp/venv-dim/bin/python scripts/dimension_skdim_compare.py /tmp/dimbench --seeds 0 \
      --estimators ESS --cache /tmp/skdim-compare-ess.json
  /tmp/venv-dim/bin/python scripts/dimension_skdim_compare.py /tmp/dimbench --seeds 0 1 2 3 4 \
      --cache /tmp/skdim-compare.json --merge /tmp/skdim-compare-ess.json \
      --ours /tmp/bench.log --write-doc docs/validation-dimension.md
"""
import argparse
import json
import os
import re
import time
import warnings
from importlib.metadata import version

import numpy as np

SKDIM = ("DANCo", "MiND_ML", "TLE", "MADA")
OURS = ("twonn", "mle", "correlation", "local_pca", "consensus")
START, END = "<!-- skdim-compare:start -->", "<!-- skdim-compare:end -->"


def make(name, dim):
    import skdim

    if name == "DANCo":
        return skdim.id.DANCo(random_state=0)
    if name == "MiND_ML":
        return skdim.id.MiND_ML(D=dim)
    return getattr(skdim.id, name)()


def load_cache(path):
    if path and os.path.exists(path):
        with open(path) as fh:
            return json.load(fh)
    return {}


def save_cache(path, cache):
    if not path:
        return
    tmp = path + ".tmp"
    with open(tmp, "w") as fh:
        json.dump(cache, fh, indent=0, sort_keys=True)
    os.replace(tmp, path)


def run(a, entries):
    cache = load_cache(a.cache)
    for e in entries:
        x = None
        for est in a.estimators:
            key = f"{e['file']}|{est}"
            if key in cache:
                continue
            if x is None:
                x = np.fromfile(os.path.join(a.dir, e["file"]), dtype="<f8")
                x = x.reshape(e["n"], e["dim"])
            t = time.process_time()
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                try:
                    v = float(make(est, e["dim"]).fit(x).dimension_)
                except Exception as ex:  # an estimator that fails is recorded, not fatal
                    v = None
                    print(f"{e['file']} {est}: {ex!r}")
            cache[key] = {"d": v, "cpu": time.process_time() - t}
            print(f"{e['file']:40s} {est:8s} {v} ({cache[key]['cpu']:.1f} s cpu)", flush=True)
            save_cache(a.cache, cache)
    return cache


LINE = re.compile(
    r"^(\S+)\s+d\s+(\d+) D\s+(\d+) seed (\d+) noise (\S+)\s+(.*)\| consensus (\S+) (\w+)"
)


def read_ours(paths):
    """(name, seed, noise) -> {estimator: corrected value, consensus: value}."""
    out = {}
    for p in paths:
        with open(p) as fh:
            for line in fh:
                m = LINE.match(line.strip())
                if not m:
                    continue
                vals = dict(re.findall(r"(\w+) [\d.]+/([\d.]+)", m.group(6)))
                vals = {k: float(v) for k, v in vals.items()}
                vals["consensus"] = float(m.group(7))
                out[(m.group(1), int(m.group(4)), float(m.group(5)))] = vals
    return out


def mre(pairs):
    pairs = [(v, d) for v, d in pairs if v is not None]
    if not pairs:
        return float("nan"), 0
    return 100 * float(np.mean([abs(v - d) / d for v, d in pairs])), len(pairs)


def report(a, entries, cache, ours):
    names = [n for n in OURS if any(n in v for v in ours.values())]
    cols = names + [s for s in SKDIM + ("ESS",) if any(k.endswith("|" + s) for k in cache)]

    def value(e, col):
        if col in OURS:
            return ours.get((e["name"], e["seed"], e["noise"]), {}).get(col)
        c = cache.get(f"{e['file']}|{col}")
        return None if c is None else c["d"]

    seeds = sorted({e["seed"] for e in entries})
    lines = []
    lines.append(
        "| estimator | " + " | ".join(f"seed {s}" for s in seeds) + " | CPU s per set |"
    )
    lines.append("| --- " * (len(seeds) + 2) + "|")
    cols_oracle = cols + ["oracle (best per set)"]
    for col in cols_oracle:
        cells = []
        for s in seeds:
            es = [e for e in entries if e["seed"] == s]
            if col.startswith("oracle"):
                vals = []
                for e in es:
                    cand = [value(e, c) for c in cols]
                    cand = [v for v in cand if v is not None]
                    vals.append(
                        (min(cand, key=lambda v: abs(v - e["d"])) if cand else None, e["d"])
                    )
            else:
                vals = [(value(e, col), e["d"]) for e in es]
            m_all, n_all = mre(vals)
            m_low, n_low = mre([(v, d) for v, d in vals if d <= 10])
            if n_all == 0:
                cells.append("-")
            else:
                miss = "" if n_all == len(es) else f" ({n_all} sets)"
                cells.append(f"{m_all:.1f} / {m_low:.1f}{miss}")
        cpu = [c["cpu"] for k, c in cache.items() if k.endswith("|" + col)]
        cpu_s = f"{np.mean(cpu):.1f}" if cpu else "-"
        lines.append(f"| {col} | " + " | ".join(cells) + f" | {cpu_s} |")
    if "consensus" in cols:
        low = [e for e in entries if e["d"] <= 10]
        share = {}
        for e in low:
            v = value(e, "consensus")
            if v is not None:
                share[e["name"]] = share.get(e["name"], 0.0) + 100 * abs(v - e["d"]) / e["d"]
        n = len(low)
        top = sorted(share.items(), key=lambda kv: -kv[1])[:5]
        lines.append("")
        lines.append(
            "Points each set adds to the consensus's MRE over d ≤ 10 (mean over the seeds; the "
            "five largest): "
            + ", ".join(f"{k} {v / n:.2f}" for k, v in top)
            + f"; the other {len(share) - len(top)} sets together "
            + f"{sum(v for _, v in sorted(share.items(), key=lambda kv: -kv[1])[5:]) / n:.2f}."
        )
    lines.append("")
    lines.append(
        "Per set, mean over the seeds above (d ≤ 10 first; the value closest to d in bold):"
    )
    lines.append("")
    lines.append("| set | d | D | " + " | ".join(cols) + " |")
    lines.append("| --- " * (len(cols) + 3) + "|")
    sets = sorted({(e["d"], e["name"], e["dim"]) for e in entries})
    for d, name, dim in sets:
        es = [e for e in entries if e["name"] == name]
        means = []
        for col in cols:
            v = [value(e, col) for e in es]
            v = [x for x in v if x is not None]
            means.append(float(np.mean(v)) if v else None)
        best = min(
            (i for i, m in enumerate(means) if m is not None),
            key=lambda i: abs(means[i] - d),
            default=None,
        )
        cells = []
        for i, m in enumerate(means):
            s = "-" if m is None else f"{m:.2f}"
            cells.append(f"**{s}**" if i == best else s)
        lines.append(f"| {name} | {d} | {dim} | " + " | ".join(cells) + " |")
    return "\n".join(lines)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("dir")
    ap.add_argument("--seeds", type=int, nargs="+", default=[0])
    ap.add_argument("--noise", type=float, default=0.0)
    ap.add_argument("--estimators", nargs="+", default=list(SKDIM))
    ap.add_argument("--cache")
    ap.add_argument("--merge", nargs="*", default=[])
    ap.add_argument("--ours", nargs="*", default=[])
    ap.add_argument("--write-doc")
    ap.add_argument("--report-only", action="store_true")
    a = ap.parse_args()
    if version("scikit-dimension") != "0.5.0":
        raise SystemExit(f"scikit-dimension {version('scikit-dimension')}; pinned 0.5.0")
    with open(os.path.join(a.dir, "manifest.json")) as fh:
        manifest = json.load(fh)
    entries = [
        e
        for e in manifest["entries"]
        if e["seed"] in a.seeds and abs(e["noise"] - a.noise) < 1e-12
    ]
    cache = load_cache(a.cache) if a.report_only else run(a, entries)
    for p in a.merge:
        for k, v in load_cache(p).items():
            cache.setdefault(k, v)
    text = report(a, entries, cache, read_ours(a.ours))
    print(text)
    if a.write_doc:
        with open(a.write_doc) as fh:
            doc = fh.read()
        i, j = doc.index(START) + len(START), doc.index(END)
        doc = doc[:i] + "\n" + text + "\n" + doc[j:]
        tmp = a.write_doc + ".tmp"
        with open(tmp, "w") as fh:
            fh.write(doc)
        os.replace(tmp, a.write_doc)


if __name__ == "__main__":
    main()
