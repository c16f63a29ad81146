#!/usr/bin/env python3
"""Write tests/data/edf/edfio.edf with edfio, a general-purpose EDF/EDF+ library independent of
beatfold, and tests/data/edf/edfio.json with the values given to it; tests/edf_independent.rs
reads the file with beatfold's reader and checks them.

Pinned: edfio 0.4.18, numpy 2.4.6 (Python 3.11). Run:

    python3 -m venv /tmp/edf-venv
    /tmp/edf-venv/bin/pip install edfio==0.4.18 numpy==2.4.6
    /tmp/edf-venv/bin/python scripts/make_edf_fixture.py

The file: EDF+C, two ordinary signals at 250 Hz for 4 s (data records of 1 s), 16-bit digital
range -32768..32767 on the physical range -3.2768..3.2767 mV (one digital step = 0.1 uV), start
time 10:11:12 on 2 January 2020, and three annotations (a normal beat at 0.5 s, a ventricular beat
at 1.5 s, an atrial-fibrillation rhythm change at 2.0 s). The signal values are multiples of the
step, so a correct reader returns them to within rounding of the scaling.
"""
import datetime
import json
import math
import pathlib

import edfio
import numpy as np

FS = 250
SECONDS = 4
STEP = 0.0001  # mV per digital unit
OUT = pathlib.Path(__file__).resolve().parent.parent / "tests" / "data" / "edf"


def main():
    n = FS * SECONDS
    k = np.arange(n)
    # Lead 1: a 1.3 Hz sine of 1 mV with a 7 Hz ripple, rounded to the 0.1 uV step.
    a = np.round((np.sin(2 * math.pi * 1.3 * k / FS) + 0.2 * np.sin(2 * math.pi * 7 * k / FS)) / STEP) * STEP
    # Lead 2: a sawtooth over the whole physical range, both ends included.
    d = -32768 + (k * 131) % 65536
    d[0], d[1] = -32768, 32767
    b = d * STEP
    sig = [
        edfio.EdfSignal(a, FS, label="ECG I", physical_dimension="mV",
                        physical_range=(-3.2768, 3.2767), digital_range=(-32768, 32767)),
        edfio.EdfSignal(b, FS, label="ECG II", physical_dimension="mV",
                        physical_range=(-3.2768, 3.2767), digital_range=(-32768, 32767)),
    ]
    anns = [
        edfio.EdfAnnotation(0.5, None, "N"),
        edfio.EdfAnnotation(1.5, None, "V"),
        edfio.EdfAnnotation(2.0, None, "(AFIB"),
    ]
    edf = edfio.Edf(
        sig,
        recording=edfio.Recording(startdate=datetime.date(2020, 1, 2)),
        starttime=datetime.time(10, 11, 12),
        data_record_duration=1,
        annotations=anns,
    )
    OUT.mkdir(parents=True, exist_ok=True)
    edf.write(OUT / "edfio.edf")
    expect = {
        "writer": f"edfio {edfio.__version__}, numpy {np.__version__}",
        "fs_hz": FS,
        "labels": ["ECG I", "ECG II"],
        "unit": "mV",
        "step_mv": STEP,
        "start": "02.01.20 10.11.12",
        "beats": [[int(0.5 * FS), "N"], [int(1.5 * FS), "V"]],
        "rhythm": ["AFIB", 2.0],
        "leads": [[round(float(v), 4) for v in a], [round(float(v), 4) for v in b]],
    }
    (OUT / "edfio.json").write_text(json.dumps(expect) + "\n")
    # The library's own reading must agree with what was given (a check of this script).
    back = edfio.read_edf(OUT / "edfio.edf")
    for s, want in zip(back.signals, (a, b)):
        assert np.max(np.abs(s.data - want)) < STEP / 2, s.label
    print(f"wrote {OUT / 'edfio.edf'} and edfio.json with edfio {edfio.__version__}")


if __name__ == "__main__":
    main()
