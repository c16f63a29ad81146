#!/usr/bin/env python3
"""Cut two-minute annotated excerpts of three difficult open records into tests/data, for the
detection test with expected TP/FP/FN.

Source data: MIT-BIH Arrhythmia Database 1.0.0 (Moody & Mark 2001; PhysioNet, ODC-By 1.0), as laid
out in ../shared/data/mitdb (see its SOURCE.md). Records 105 (heavy noise), 108 (large P waves,
noise) and 203 (multiform ventricular beats, atrial flutter/fibrillation, noise).

For each (record, start sample) below, writes tests/data/mitdb-excerpt/<rec>d.hea/.dat/.atr:
  - .dat: the byte slice of the release's format-212 file (both signals, 43200 samples each);
  - .hea: the release header with the excerpt's length, its checksums and first samples as
    initial values;
  - .atr: every annotation of the release whose time lies in the excerpt, re-timed to the
    excerpt's first sample, in the same MIT annotation format (the annotation words and their
    NUM/SUB/CHN/AUX modifier words copied verbatim; intervals over 1023 samples written with a
    SKIP word), then the end word.

Run: python3 scripts/make_detection_excerpt.py ../shared/data/mitdb   (standard library only)
"""
import os
import struct
import sys

SRC = sys.argv[1] if len(sys.argv) > 1 else "../shared/data/mitdb"
OUT = os.path.join(os.path.dirname(__file__), "..", "tests", "data", "mitdb-excerpt")
N = 43200  # two minutes at 360 Hz
CUTS = [("105", 432000), ("108", 604800), ("203", 518400)]


def decode212(b):
    s0, s1 = [], []
    for i in range(0, len(b) - 2, 3):
        a, m, c = b[i], b[i + 1], b[i + 2]
        x0 = a | ((m & 0x0F) << 8)
        x1 = c | ((m & 0xF0) << 4)
        s0.append(x0 - 4096 if x0 & 0x800 else x0)
        s1.append(x1 - 4096 if x1 & 0x800 else x1)
    return s0, s1


def checksum(x):
    return ((sum(x) + 32768) % 65536) - 32768


def parse_atr(b):
    """List of (time, code_word_bytes, modifier_bytes) with absolute sample times."""
    out = []
    i, t = 0, 0
    while i + 2 <= len(b):
        (w,) = struct.unpack_from("<H", b, i)
        a, v = w >> 10, w & 0x3FF
        if w == 0:
            break
        if a == 59:  # SKIP: PDP-11 long (high word first, each word little-endian)
            hi, lo = struct.unpack_from("<HH", b, i + 2)
            skip = (hi << 16) | lo
            if skip >= 1 << 31:
                skip -= 1 << 32
            t += skip
            i += 6
            continue
        if a in (60, 61, 62):  # NUM, SUB, CHN modify the previous annotation
            out[-1][2].extend(b[i : i + 2])
            i += 2
            continue
        if a == 63:  # AUX: v bytes follow, padded to even
            n = v + (v & 1)
            out[-1][2].extend(b[i : i + 2 + n])
            i += 2 + n
            continue
        t += v
        out.append([t, a, bytearray()])
        i += 2
    return out


def encode_atr(anns, start):
    b = bytearray()
    prev = start
    for t, a, mods in anns:
        d = t - prev
        if d > 1023:
            b += struct.pack("<H", 59 << 10)
            b += struct.pack("<HH", (d >> 16) & 0xFFFF, d & 0xFFFF)
            d = 0
        b += struct.pack("<H", (a << 10) | d)
        b += mods
        prev = t
    b += b"\x00\x00"
    return b


def cut(rec, start):
    name = rec + "d"
    with open(os.path.join(SRC, rec + ".dat"), "rb") as f:
        f.seek(start * 3)
        data = f.read(N * 3)
    s0, s1 = decode212(data)
    with open(os.path.join(SRC, rec + ".hea")) as f:
        lines = [l.rstrip("\r\n") for l in f]
    head = lines[0].split()
    out = [f"{name} 2 {head[2]} {N}"]
    for k, s in enumerate((s0, s1)):
        t = lines[1 + k].split()
        t[0] = name + ".dat"
        t[5] = str(s[0])
        t[6] = str(checksum(s))
        out.append(" ".join(t))
    out.append(f"# excerpt of MIT-BIH Arrhythmia Database record {rec}, samples {start}..{start + N - 1}")
    with open(os.path.join(OUT, name + ".hea"), "w") as f:
        f.write("\n".join(out) + "\n")
    with open(os.path.join(OUT, name + ".dat"), "wb") as f:
        f.write(data)
    with open(os.path.join(SRC, rec + ".atr"), "rb") as f:
        anns = parse_atr(f.read())
    inside = [x for x in anns if start <= x[0] < start + N]
    with open(os.path.join(OUT, name + ".atr"), "wb") as f:
        f.write(encode_atr(inside, start))
    print(name, "annotations:", len(inside))


if __name__ == "__main__":
    os.makedirs(OUT, exist_ok=True)
    for rec, start in CUTS:
        cut(rec, start)
