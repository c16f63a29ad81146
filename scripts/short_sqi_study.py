#!/usr/bin/env python3
"""Signal-quality indices of the short labelled records as readability rules or score measures.

Run with /tmp/venv-c (numpy, scipy):

    cargo run --release --example fit_short -- ../shared/data/cinc2017-sample --dump /tmp/short.csv
    /tmp/venv-c/bin/python scripts/short_sqi_study.py ../shared/data/cinc2017-sample /tmp/short.csv

For every record (a MATLAB v4 `.mat` of 16-bit samples after a 24-byte header, 1000 units/mV,
300 Hz, as the folder's headers say) it computes, after Clifford, Behar, Li & Rezek (2012):
kSQI, the kurtosis of the lead band-passed 0.5-40 Hz (2nd-order Butterworth, forward and
backward; not the library's conditioning); sSQI, its skewness; pSQI, the power in 5-15 Hz over
5-40 Hz and basSQI, 1 - the power below 1 Hz over 0-40 Hz (Welch periodogram of the raw lead);
the share of 0.1 s windows with a range below 0.01 mV (flat). Then, with the nested
cross-validation of `short_measure_selection.py` (numpy's folds, means over 8 fold seeds):
- readability: each agreement rule (0.8, 0.7, 0.6, without the kurtosis rule) joined with
  kSQI >= 5, pSQI <= 0.9 or both, either for every record ("always") or only for records read
  below 80 % detector agreement ("fallback"); grids of the agreement rules alone and with these;
- score measures: the score's thirteen measures plus one index.
Research use only.
"""

import csv
import sys
from pathlib import Path

import numpy as np
from scipy import signal, stats

sys.path.insert(0, str(Path(__file__).resolve().parent))
import short_measure_selection as S  # noqa: E402

FS = 300.0


def indices(path):
    raw = np.fromfile(path, dtype="<i2", offset=24).astype(float) / 1000.0
    b, a = signal.butter(2, [0.5 / (FS / 2), 40 / (FS / 2)], "band")
    x = signal.filtfilt(b, a, raw)
    f, p = signal.welch(raw - raw.mean(), FS, nperseg=min(len(raw), 1024))

    def band(lo, hi):
        return p[(f >= lo) & (f < hi)].sum()

    w = int(0.1 * FS)
    n = len(raw) // w
    return {
        "ksqi": stats.kurtosis(x, fisher=False),
        "ssqi": stats.skew(x),
        "psqi": band(5, 15) / band(5, 40),
        "bassqi": 1 - band(0, 1) / band(0, 40),
        "flat": np.mean(np.ptp(raw[: n * w].reshape(n, w), axis=1) < 0.01),
    }


def main():
    folder, dump = Path(sys.argv[1]), sys.argv[2]
    recs = [r["record"] for r in csv.DictReader(open(dump, newline=""))]
    cols, y, _ = S.read(dump)
    q = [indices(folder / f"{r}.mat") for r in recs]
    for k in q[0]:
        cols[k] = np.array([v[k] for v in q])
    cols["ln_ksqi"] = np.log(cols["ksqi"])
    base = np.stack(
        [(cols[f"readable_{m}_k0"] > 0.5) & ~(cols["base_cycle"] > 0.5) for m in (0.8, 0.7, 0.6)],
        axis=1,
    )
    conds = [
        ("kSQI >= 5", cols["ksqi"] >= 5),
        ("pSQI <= 0.9", cols["psqi"] <= 0.9),
        ("both", (cols["ksqi"] >= 5) & (cols["psqi"] <= 0.9)),
    ]
    x = np.stack([cols[n] for n in S.SCORE], axis=1)
    print("| rules | Se % | Sp % | F1 | F1 range over seeds | Sp range over seeds |")
    print("|---|---:|---:|---:|---:|---:|")
    S.show("agreement alone", np.array([S.out_of_fold(x, y, base, s, "f1") for s in S.FOLD_SEEDS]))
    for mode in ("always", "fallback"):
        for name, c in conds:
            ok = c if mode == "always" else c | (cols["agreement"] >= 0.8)
            for grid in ("fixed", "with off"):
                fo = base & ok[:, None]
                if grid == "with off":
                    fo = np.concatenate([base, fo], axis=1)
                res = np.array([S.out_of_fold(x, y, fo, s, "f1") for s in S.FOLD_SEEDS])
                S.show(f"{mode}, {name}, {grid}", res)
    print()
    print("| measures | Se % | Sp % | F1 | F1 range over seeds | Sp range over seeds |")
    print("|---|---:|---:|---:|---:|---:|")
    for n in ("ln_ksqi", "ssqi", "psqi", "bassqi", "flat"):
        S.show(f"thirteen + {n}", S.judge(cols, y, base, S.SCORE + [n], "f1"))


if __name__ == "__main__":
    main()
