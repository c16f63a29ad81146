"""The notebook example of docs/python.md, as a script: the bundled demo recording through the
package. Usage (from the repository root, with the package installed):

    python python/examples/notebook_demo.py demo-data/telemetry-night.csv

Research use only; not for diagnosis.
"""

import sys
import tempfile

import numpy as np

import beatfold

path = sys.argv[1] if len(sys.argv) > 1 else "demo-data/telemetry-night.csv"

# 1. Read the recording: samples x leads, with its sampling rate and lead names.
rec = beatfold.read_record(path)
print(rec, rec.lead_names)

# 2. Beats of the first lead (the library's default parameters).
b = beatfold.detect_beats(rec.signal[:, 0], rec.fs_hz)
print("beats:", len(b["samples"]), "agreement:", round(b["agreement"], 3),
      "labels:", {str(k): int(c) for k, c in zip(*np.unique(b["labels"], return_counts=True))})

# 3. Rhythm measures of the RR series.
r = beatfold.rhythm(b["rr_s"], b["labels"], b["samples"] / rec.fs_hz)
v = r["variability"]
print("mean HR %.1f bpm, SDNN %.1f ms, RMSSD %.1f ms, sample entropy %.3f"
      % (v["mean_hr_bpm"], v["sdnn_ms"], v["rmssd_ms"], r["sample_entropy"]))

# 4. One window of 0.6 s around each beat as a point; embed with a diffusion map.
half = int(0.3 * rec.fs_hz)
x = rec.signal[:, 0]
keep = [s for s in b["samples"] if half <= s < len(x) - half]
beats = np.stack([x[s - half:s + half] for s in keep])
dm = beatfold.DiffusionMap(n_components=3)
psi = dm.fit_transform(beats)
print("diffusion map:", psi.shape, "eigenvalues", np.round(dm.eigenvalues_, 4),
      "epsilon %.4g" % dm.epsilon_)

# 5. Intrinsic dimension of the beat cloud.
d = beatfold.intrinsic_dimension(beats, bootstrap=10)
print("dimension:", {k: round(e["d"], 2) for k, e in d["estimates"].items()})

# 6. The whole chain, report included.
with tempfile.TemporaryDirectory() as out:
    s = beatfold.analyze(path, out)
    print("analyze:", s["beats"]["n_beats"], "beats;", s["notice"])
