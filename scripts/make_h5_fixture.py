#!/usr/bin/env python3
"""Write tests/data/h5/signals.h5 with h5py (a general-purpose HDF5 library), for beatfold's
HDF5 signal reader tests.

Contents (values are simple closed forms, so the test can recompute them):
  /ecg            float32 [500, 2], attrs fs_hz=360.0, unit="mV";
                  column j, row i = sin(0.05 i) * (j + 1)
  /rec/lead       float64 [400], no attrs; its group /rec has attr sampling_rate=128 (int)
                  value i = 0.001 i
  /rec/bad        float64 [3, 3, 3]

Run: scripts/check-results-h5.sh installs the pinned h5py venv in target/py-venv; then
  target/py-venv/bin/python scripts/make_h5_fixture.py
"""
import os

import h5py
import numpy as np

out = os.path.join(os.path.dirname(__file__), "..", "tests", "data", "h5", "signals.h5")
os.makedirs(os.path.dirname(out), exist_ok=True)
i = np.arange(500)
ecg = np.stack([np.sin(0.05 * i) * (j + 1) for j in range(2)], axis=1).astype(np.float32)
with h5py.File(out, "w") as f:
    d = f.create_dataset("ecg", data=ecg)
    d.attrs["fs_hz"] = 360.0
    d.attrs["unit"] = "mV"
    g = f.create_group("rec")
    g.attrs["sampling_rate"] = np.int64(128)
    g.create_dataset("lead", data=0.001 * np.arange(400, dtype=np.float64))
    g.create_dataset("bad", data=np.zeros((3, 3, 3)))
print("wrote", out, "with h5py", h5py.__version__)
