#!/usr/bin/env python3
"""Cut small excerpts of two open annotated records into tests/data, and a reference fixture.

Source data: MIT-BIH Arrhythmia Database 1.0.0 (Moody & Mark 2001; PhysioNet, ODC-By 1.0), as
laid out in ../shared/data/mitdb (see its SOURCE.md for licence and citations).

Writes into tests/data/mitdb-excerpt/:
  - 100x.hea/.dat/.atr: record 100, the first 10 s (3600 samples per signal), both signals in
    format 212 exactly as in the release (the bytes are a prefix of 100.dat); the header keeps the
    release's initial values and carries the checksums of the excerpt; the annotation file is the
    prefix of 100.atr up to the last annotation before sample 3600, then the end word.
  - 208x.hea/.dat: record 208 samples 422820..426419 (10 s), both signals, format 212 (the bytes
    are the slice of 208.dat); no annotations.
  - scipy_ecg_208.json: the first 3600 values of scipy.misc.electrocardiogram(), which SciPy's
    documentation describes as record 208, signal 0 (MLII), from 19:34.5, in mV = (adu-1024)/200.
    This is an independent reference decoding for the 208x excerpt.

Run (pinned): python3 -m venv /tmp/venv-scipy && /tmp/venv-scipy/bin/pip install scipy==1.11.4 numpy==1.26.4
              /tmp/venv-scipy/bin/python scripts/make_mitdb_excerpt.py ../shared/data/mitdb
"""
import json
import os
import struct
import sys

import numpy as np
import scipy
import scipy.misc

SRC = sys.argv[1] if len(sys.argv) > 1 else "../shared/data/mitdb"
OUT = os.path.join(os.path.dirname(__file__), "..", "tests", "data", "mitdb-excerpt")
N = 3600


def decode212(b):
    b = np.frombuffer(b, dtype=np.uint8).astype(np.int32)
    b = b[: len(b) // 3 * 3].reshape(-1, 3)
    s0 = b[:, 0] | ((b[:, 1] & 0x0F) << 8)
    s1 = b[:, 2] | ((b[:, 1] & 0xF0) << 4)
    s0 = np.where(s0 & 0x800, s0 - 0x1000, s0)
    s1 = np.where(s1 & 0x800, s1 - 0x1000, s1)
    return s0, s1


def checksum(x):
    return int(((int(np.sum(x)) + 32768) % 65536) - 32768)


def excerpt(rec, start, name):
    with open(os.path.join(SRC, rec + ".dat"), "rb") as f:
        f.seek(start * 3)
        data = f.read(N * 3)
    s0, s1 = decode212(data)
    with open(os.path.join(SRC, rec + ".hea")) as f:
        lines = [l.rstrip("\r\n") for l in f]
    head = lines[0].split()
    out = [f"{name} 2 {head[2]} {N}"]
    for i, s in enumerate((s0, s1)):
        t = lines[1 + i].split()
        t[0] = name + ".dat"
        t[5] = str(int(s[0]))
        t[6] = str(checksum(s))
        out.append(" ".join(t))
    out.append(f"# excerpt of MIT-BIH Arrhythmia Database record {rec}, samples {start}..{start + N - 1}")
    with open(os.path.join(OUT, name + ".hea"), "w") as f:
        f.write("\n".join(out) + "\n")
    with open(os.path.join(OUT, name + ".dat"), "wb") as f:
        f.write(data)


def atr_prefix(rec, name):
    b = open(os.path.join(SRC, rec + ".atr"), "rb").read()
    i, t, cut = 0, 0, 0
    while i + 2 <= len(b):
        (w,) = struct.unpack_from("<H", b, i)
        if w == 0:
            break
        code, val = w >> 10, w & 0x3FF
        i += 2
        if code == 59:
            hi, lo = struct.unpack_from("<HH", b, i)
            i += 4
            t += ((hi << 16) | lo)
        elif code == 63:
            i += val + (val & 1)
        elif code in (60, 61, 62):
            pass
        else:
            t += val
            if t >= N:
                break
            # include any AUX that follows this annotation
            j = i
            if j + 2 <= len(b):
                (w2,) = struct.unpack_from("<H", b, j)
                if w2 >> 10 == 63:
                    j += 2 + (w2 & 0x3FF) + ((w2 & 0x3FF) & 1)
            cut = j
            i = j
    with open(os.path.join(OUT, name + ".atr"), "wb") as f:
        f.write(b[:cut] + b"\x00\x00")


os.makedirs(OUT, exist_ok=True)
excerpt("100", 0, "100x")
atr_prefix("100", "100x")
excerpt("208", 422820, "208x")
ref = scipy.misc.electrocardiogram()[:N]
with open(os.path.join(OUT, "scipy_ecg_208.json"), "w") as f:
    json.dump({"source": f"scipy {scipy.__version__} scipy.misc.electrocardiogram()[:{N}]",
               "fs_hz": 360, "mv": [float(v) for v in ref]}, f)
print("wrote", OUT)
