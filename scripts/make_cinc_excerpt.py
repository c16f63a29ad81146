#!/usr/bin/env python3
"""Copy four short single-lead records into tests/data, with an independent decoding.

Source data: PhysioNet/Computing in Cardiology Challenge 2017, validation subset (Clifford et al.
2017; PhysioNet, ODC-By 1.0), as laid out in ../shared/data/cinc2017-sample (see its SOURCE.md).

Writes into tests/data/cinc2017-excerpt/:
  - A00093, A00405, A00139, A03549 (.hea + .mat, copied byte for byte): the shortest record of
    each reference label (N, A, O, ~), 10 to 20 s each;
  - REFERENCE.csv: their reference labels, copied from the release's REFERENCE.csv;
  - scipy_loadmat.json: for each record, the matrix `val` as read by scipy.io.loadmat (a
    general-purpose MATLAB-file reader, independent of beatfold) in ADC units, and its shape.

Run (pinned): python3 -m venv /tmp/venv-scipy && /tmp/venv-scipy/bin/pip install scipy==1.11.4 numpy==1.26.4
              /tmp/venv-scipy/bin/python scripts/make_cinc_excerpt.py ../shared/data/cinc2017-sample
"""
import json
import os
import shutil
import sys

import scipy
import scipy.io

SRC = sys.argv[1] if len(sys.argv) > 1 else "../shared/data/cinc2017-sample"
OUT = os.path.join(os.path.dirname(__file__), "..", "tests", "data", "cinc2017-excerpt")
RECORDS = ["A00093", "A00405", "A00139", "A03549"]

os.makedirs(OUT, exist_ok=True)
labels = {}
with open(os.path.join(SRC, "REFERENCE.csv")) as f:
    for line in f:
        name, label = line.strip().split(",")
        labels[name] = label
fixture = {"scipy_version": scipy.__version__, "records": {}}
for r in RECORDS:
    for ext in (".hea", ".mat"):
        shutil.copyfile(os.path.join(SRC, r + ext), os.path.join(OUT, r + ext))
    m = scipy.io.loadmat(os.path.join(SRC, r + ".mat"))
    val = m["val"]
    fixture["records"][r] = {
        "label": labels[r],
        "shape": list(val.shape),
        "adu": [int(v) for v in val[0]],
    }
with open(os.path.join(OUT, "REFERENCE.csv"), "w") as f:
    for r in RECORDS:
        f.write(f"{r},{labels[r]}\n")
with open(os.path.join(OUT, "scipy_loadmat.json"), "w") as f:
    json.dump(fixture, f)
