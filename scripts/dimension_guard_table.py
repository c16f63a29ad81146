#!/usr/bin/env python3
"""The uniformity guard of the dimension consensus (rule 6 of src/dimension/consensus.rs), read
from the per-set lines of `bench_dimension_manifolds`: for every group of seed and noise level,
how many sets were resolved before the guard (every set that prints `spread/cube`: the suite
measures the spread only for answers that are resolved without it), how many of those were
off by more than 25 %, and both counts after the guard at the threshold given (and at the
candidates of --sweep).

Run (logs of the example on the development family or on the benchmark):
  python3 scripts/dimension_guard_table.py /tmp/dev-0.log /tmp/dev-0.01.log /tmp/dev-0.05.log
  python3 scripts/dimension_guard_table.py --sweep 1.1 1.15 1.2 1.3 /tmp/dev-0.log
"""
import argparse
import re
from collections import defaultdict

LINE = re.compile(
    r"(\S+)\s+d\s+(\d+) D\s+\d+ seed (\d+) noise (\S+).*\| consensus (\S+) (Resolved|Unresolved)"
    r"(?: spread/cube (\S+))?"
)


def read(paths):
    rows = []
    for path in paths:
        with open(path) as fh:
            for line in fh:
                m = LINE.match(line)
                if not m:
                    continue
                name, d, seed, noise, cd, status, ratio = m.groups()
                err = abs(float(cd) - int(d)) / int(d)
                rows.append((name, int(seed), noise, err, status, float(ratio) if ratio else None))
    return rows


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("logs", nargs="+")
    ap.add_argument("--threshold", type=float, default=1.15)
    ap.add_argument("--sweep", type=float, nargs="*", default=[])
    ap.add_argument("--list", action="store_true", help="print every set resolved before")
    a = ap.parse_args()
    rows = read(a.logs)
    groups = defaultdict(list)
    for r in rows:
        groups[(r[1], r[2])].append(r)
    print("| seed | noise | sets | resolved before | > 25 % before | resolved after | > 25 % after |")
    print("| --- | --- | --- | --- | --- | --- | --- |")
    for (seed, noise), rs in sorted(groups.items()):
        before = [r for r in rs if r[5] is not None]
        after = [r for r in rs if r[4] == "Resolved"]
        bad = lambda v: sum(1 for r in v if r[3] > 0.25)
        print(f"| {seed} | {noise} | {len(rs)} | {len(before)} | {bad(before)} | {len(after)} | "
              f"{bad(after)} |")
    for t in a.sweep:
        before = [r for r in rows if r[5] is not None]
        kept = [r for r in before if r[5] <= t]
        print(f"threshold {t}: resolved {len(before)} -> {len(kept)}, off by > 25 %: "
              f"{sum(r[3] > 0.25 for r in before)} -> {sum(r[3] > 0.25 for r in kept)}")
    if a.list:
        for r in sorted((r for r in rows if r[5] is not None), key=lambda r: -r[5]):
            print(f"{r[0]:<18} seed {r[1]} noise {r[2]:<5} error {100 * r[3]:5.1f} % "
                  f"spread/cube {r[5]:.2f} {r[4]}")


if __name__ == "__main__":
    main()
