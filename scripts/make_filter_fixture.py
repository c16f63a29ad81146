#!/usr/bin/env python3
"""Write scipy.signal reference values for beatfold's filter tests (src/signal/filter.rs).

Pinned versions (the values depend on them only at rounding level):
    Python 3.11, numpy==2.1.3, scipy==1.14.1

How to run (from the repository root):
    python3 -m venv /tmp/venv-fx
    /tmp/venv-fx/bin/pip install numpy==2.1.3 scipy==1.14.1
    /tmp/venv-fx/bin/python scripts/make_filter_fixture.py

Writes tests/data/filter_scipy_butter.json with, for each case: the scipy design call, its
second-order sections, |H| at listed frequencies (from scipy.signal.sosfreqz), a deterministic
500-sample test input (chirp + step + 50 Hz hum) and scipy.signal.sosfiltfilt's output on it
(default padtype 'odd', default padlen), plus the default padlen scipy used.
"""
import json
import os

import numpy as np
import scipy
from scipy import signal

FS = 250.0
N = 500


def test_input():
    t = np.arange(N) / FS
    chirp = np.sin(2.0 * np.pi * (2.0 * t + 10.0 * t * t))
    step = (np.arange(N) >= N // 2).astype(float)
    hum = 0.3 * np.cos(2.0 * np.pi * 50.0 * t)
    return chirp + step + hum


def default_padlen(sos):
    # scipy.signal.sosfiltfilt's documented default.
    ntaps = 2 * len(sos) + 1
    ntaps -= min(int((sos[:, 2] == 0).sum()), int((sos[:, 5] == 0).sum()))
    return 3 * ntaps


def case(name, call, sos, freqs, x):
    _, h = signal.sosfreqz(sos, worN=np.array(freqs, dtype=float), fs=FS)
    y = signal.sosfiltfilt(sos, x)
    return {
        "name": name,
        "call": call,
        "fs_hz": FS,
        "sos": sos.tolist(),
        "freqs_hz": list(freqs),
        "magnitude": np.abs(h).tolist(),
        "padlen": default_padlen(sos),
        "filtfilt_output": y.tolist(),
    }


def main():
    x = test_input()
    freqs = [1.0, 3.0, 5.0, 10.0, 12.0, 15.0, 20.0, 50.0, 60.0]
    cases = [
        case("band4", "butter(4, [5, 15], 'band', fs=250, output='sos')",
             signal.butter(4, [5, 15], "band", fs=FS, output="sos"), freqs, x),
        case("band2_cond", "butter(2, [0.5, 40], 'band', fs=250, output='sos')",
             signal.butter(2, [0.5, 40], "band", fs=FS, output="sos"),
             [0.1, 0.3, 0.5, 1.0, 10.0, 40.0, 60.0, 100.0], x),
        case("low3", "butter(3, 10, 'low', fs=250, output='sos')",
             signal.butter(3, 10, "low", fs=FS, output="sos"), [1.0, 5.0, 10.0, 20.0, 50.0], x),
        case("high3", "butter(3, 1, 'high', fs=250, output='sos')",
             signal.butter(3, 1, "high", fs=FS, output="sos"), [0.2, 0.5, 1.0, 2.0, 10.0], x),
    ]
    b, a = signal.iirnotch(50.0, 30.0, fs=FS)
    notch = {"call": "iirnotch(50, 30, fs=250)", "b": b.tolist(), "a": a.tolist()}
    out = {
        "generator": "scripts/make_filter_fixture.py",
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "input": x.tolist(),
        "cases": cases,
        "notch": notch,
    }
    path = os.path.join(os.path.dirname(__file__), "..", "tests", "data", "filter_scipy_butter.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    print("wrote", os.path.normpath(path))


if __name__ == "__main__":
    main()
