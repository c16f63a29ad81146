#!/usr/bin/env python3
"""Check a beatfold results.h5 against the layout in docs/results-format.md, using h5py.

Usage: check_results_h5.py RESULTS.h5
Prints OK and exits 0 when the file matches; prints every problem and exits 1 otherwise
(2 for bad usage or an unreadable file).

Tested with: Python 3.11, h5py==3.16.0, numpy==2.4.6
  python3 -m venv /tmp/venv-h5 && /tmp/venv-h5/bin/pip install h5py==3.16.0 numpy==2.4.6
"""

import json
import sys

import h5py
import numpy as np

ROOT_TEXT_ATTRS = [
    "beatfold_version",
    "created_utc",
    "input_name",
    "input_sha256",
    "record",
    "parameters",
    "notice",
]
ROOT_FLOAT_ATTRS = ["duration_s", "elapsed_s"]

# (path, dtype kind, ndim or None, extra check) — kinds: "f8", "u8" (uint64), "u1" (uint8), "str".
DATASETS = [
    ("signal/conditioned", "f8", 1),
    ("signal/quality/start_s", "f8", 1),
    ("signal/quality/end_s", "f8", 1),
    ("signal/quality/flat", "u1", 1),
    ("signal/quality/clipped", "u1", 1),
    ("signal/quality/noisy", "u1", 1),
    ("signal/quality/non_finite", "u1", 1),
    ("signal/quality/lead_off", "u1", 1),
    ("signal/quality/gain_change", "u1", 1),
    ("beats/sample", "u8", 1),
    ("beats/time_s", "f8", 1),
    ("beats/rr_s", "f8", 1),
    ("beats/label", "u1", 1),
    ("beats/agreement", "f8", 1),
    ("beats/reference_sample", "u8", 1),
    ("beats/reference_label", "u1", 1),
    ("features/matrix", "f8", 2),
    ("features/names", "str", 1),
    ("features/beat_index", "u8", 1),
    ("embedding/coords", "f8", 2),
    ("embedding/eigenvalues", "f8", 1),
    ("dimension/ks", "u8", 1),
    ("dimension/distortion", "f8", 1),
    ("dimension/scale_curve", "f8", 2),
]

GROUP_ATTRS = {
    "signal": {"fs_hz": "f", "lead": "str", "unit": "str"},
    "beats": {"record_agreement": "f"},
    "embedding": {"epsilon": "f", "alpha": "f", "t": "f"},
    "dimension": {"d": "f", "noise_scale": "f", "fit_slope": "f", "fit_intercept": "f"},
    "rhythm": {
        "n_rr": "u",
        "mean_hr_bpm": "f",
        "mean_rr_ms": "f",
        "sdnn_ms": "f",
        "rmssd_ms": "f",
        "pnn50": "f",
    },
}

DTYPES = {"f8": np.dtype("<f8"), "u8": np.dtype("<u8"), "u1": np.dtype("u1")}


def is_text(value):
    return isinstance(value, str)


def check(path):
    problems = []

    def need(cond, msg):
        if not cond:
            problems.append(msg)

    with h5py.File(path, "r") as f:
        for name in ROOT_TEXT_ATTRS:
            need(name in f.attrs, f"root attribute {name} missing")
            if name in f.attrs:
                need(is_text(f.attrs[name]), f"root attribute {name} is not text: {type(f.attrs[name])}")
        if is_text(f.attrs.get("notice")):
            need(len(f.attrs["notice"].strip()) > 0, "notice is empty")
            need("research use only" in f.attrs["notice"].lower(), "notice lacks 'research use only'")
        if is_text(f.attrs.get("parameters")):
            try:
                json.loads(f.attrs["parameters"])
            except ValueError as e:
                problems.append(f"parameters is not JSON: {e}")
        created = f.attrs.get("created_utc")
        if is_text(created):
            need(len(created) == 20 and created[10] == "T" and created.endswith("Z"),
                 f"created_utc not RFC 3339 UTC: {created!r}")
        for name in ROOT_FLOAT_ATTRS:
            need(name in f.attrs and np.asarray(f.attrs[name]).dtype.kind == "f",
                 f"root attribute {name} missing or not float")

        for group in ["signal", "signal/quality", "beats", "features", "embedding", "dimension", "rhythm"]:
            need(isinstance(f.get(group), h5py.Group), f"group /{group} missing")

        shapes = {}
        for name, kind, ndim in DATASETS:
            obj = f.get(name)
            if not isinstance(obj, h5py.Dataset):
                problems.append(f"dataset /{name} missing")
                continue
            shapes[name] = obj.shape
            need(obj.ndim == ndim, f"/{name} has {obj.ndim} dimensions, expected {ndim}")
            if kind == "str":
                need(h5py.check_string_dtype(obj.dtype) is not None, f"/{name} is not a string dataset")
            else:
                need(obj.dtype == DTYPES[kind], f"/{name} has dtype {obj.dtype}, expected {DTYPES[kind]}")
            obj[()]  # every dataset must read

        for group, attrs in GROUP_ATTRS.items():
            g = f.get(group)
            if not isinstance(g, h5py.Group):
                continue
            for name, kind in attrs.items():
                if name not in g.attrs:
                    problems.append(f"/{group} attribute {name} missing")
                    continue
                v = g.attrs[name]
                if kind == "str":
                    need(is_text(v), f"/{group} attribute {name} is not text")
                else:
                    need(np.asarray(v).dtype.kind == kind, f"/{group} attribute {name} has dtype {np.asarray(v).dtype}")

        # Shapes that must agree with each other.
        def same_len(a, b):
            if a in shapes and b in shapes:
                need(shapes[a][0] == shapes[b][0], f"/{a} and /{b} differ in length: {shapes[a]} vs {shapes[b]}")

        for col in ["end_s", "flat", "clipped", "noisy", "non_finite", "lead_off", "gain_change"]:
            same_len("signal/quality/start_s", f"signal/quality/{col}")
        same_len("beats/sample", "beats/time_s")
        same_len("beats/sample", "beats/label")
        same_len("beats/reference_sample", "beats/reference_label")
        same_len("features/matrix", "features/beat_index")
        same_len("dimension/ks", "dimension/distortion")
        if "beats/sample" in shapes and "beats/rr_s" in shapes:
            n = shapes["beats/sample"][0]
            need(shapes["beats/rr_s"][0] == max(n - 1, 0), f"/beats/rr_s has {shapes['beats/rr_s'][0]} values for {n} beats")
        if "features/matrix" in shapes and "features/names" in shapes and shapes["features/matrix"][0] > 0:
            need(shapes["features/matrix"][1] == shapes["features/names"][0], "features/names does not match matrix columns")
        if "embedding/coords" in shapes and "embedding/eigenvalues" in shapes and shapes["embedding/coords"][0] > 0:
            need(shapes["embedding/coords"][1] == shapes["embedding/eigenvalues"][0],
                 "embedding/coords columns differ from eigenvalues")
        if "dimension/scale_curve" in shapes and shapes["dimension/scale_curve"][0] > 0:
            need(shapes["dimension/scale_curve"][1] == 2, "dimension/scale_curve is not (n, 2)")
        if "beats/sample" in shapes and shapes["beats/sample"][0] > 1:
            s = f["beats/sample"][:]
            need(bool(np.all(np.diff(s.astype(np.int64)) > 0)), "beats/sample is not increasing")
    return problems


def main(argv):
    if len(argv) != 2:
        print(__doc__, file=sys.stderr)
        return 2
    try:
        problems = check(argv[1])
    except OSError as e:
        print(f"{argv[1]}: cannot read: {e}", file=sys.stderr)
        return 2
    if problems:
        for p in problems:
            print(f"FAIL: {p}")
        return 1
    print(f"OK {argv[1]}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
