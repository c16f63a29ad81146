#!/usr/bin/env python3
"""Compare rules that turn the four corrected dimension estimates into one consensus d, on the
per-set lines that `cargo run --release --example bench_dimension_manifolds` prints (copied into
docs/validation-dimension.md). Prints the MRE (all sets, d <= 10) of each rule for seeds 0-1 and
for seed 2 at every noise level. The agreeing group is that of src/dimension/consensus.rs (the
largest group within +-20 % of its median; ties: smallest relative range). Values on the lines
have two decimals, so the MREs can differ from the example's by 0.1 point.

Run:
  python3 scripts/dimension_consensus_rules.py docs/validation-dimension.md
"""
import itertools
import re
import statistics
import sys

AG = 0.2


def group(vals):
    best = None
    names = list(vals)
    for r in range(1, len(names) + 1):
        for c in itertools.combinations(names, r):
            v = [vals[n] for n in c]
            med = statistics.median(v)
            if any(abs(x / med - 1) > AG for x in v):
                continue
            sp = (max(v) - min(v)) / med
            if best is None or r > best[0] or (r == best[0] and sp < best[1]):
                best = (r, sp, med, c)
    return best


def rules(e):
    c = {k: v[1] for k, v in e.items()}
    _, _, med, members = group(c)
    tw = "twonn" in members
    return {
        "group median": med,
        "median of all": statistics.median(c.values()),
        "twonn alone": c["twonn"],
        "twonn if member": c["twonn"] if tw else med,
        "mean twonn mle": (c["twonn"] + c["mle"]) / 2,
        "median of twonn/mle members": statistics.median(
            [c[n] for n in members if n in ("twonn", "mle")] or [med]
        ),
        "group mean": statistics.mean(c[n] for n in members),
        "group geometric mean": statistics.geometric_mean(c[n] for n in members),
        "lower of twonn and median": min(c["twonn"], med) if tw else med,
        "lower of twonn and mle": min(c["twonn"], c["mle"]) if tw and "mle" in members else med,
    }


def main():
    rows = []
    for line in open(sys.argv[1]):
        m = re.match(r"^(\S+)\s+d\s+(\d+)\s+D\s+(\d+)\s+seed (\d) noise (\S+)\s+(.*)\| consensus", line)
        if not m:
            continue
        name, d, _, seed, noise, rest = m.groups()
        e = {k: (float(a), float(b)) for k, a, b in re.findall(r"(\w+) ([\d.]+)/([\d.]+)", rest)}
        rows.append((int(d), int(seed), float(noise), e))
    for seeds in [(0, 1), (2,)]:
        for noise in sorted({r[2] for r in rows}):
            acc = {}
            for d, seed, nz, e in rows:
                if seed in seeds and nz == noise:
                    for k, v in rules(e).items():
                        err = abs(v - d) / d
                        a = acc.setdefault(k, ([], []))
                        a[0].append(err)
                        if d <= 10:
                            a[1].append(err)
            if not acc:
                continue
            print(f"seeds {seeds}, noise {noise}")
            for k, (a, low) in acc.items():
                print(f"  {k:28} MRE all {100 * statistics.mean(a):5.1f} %  d<=10 {100 * statistics.mean(low):5.1f} %")


if __name__ == "__main__":
    main()
