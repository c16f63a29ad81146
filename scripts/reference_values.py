#!/usr/bin/env python3
"""Print the computed check values that beatfold's tests quote from docs/references.md ([C] tags).

Every value is computed here with numpy/scipy or by exact counting, so a reader can regenerate
and compare them. Pinned versions: see scripts/requirements-check.txt (numpy, scipy).

How to run (from the repository root):
    python3 -m venv target/py-ref
    target/py-ref/bin/pip install -r scripts/requirements-check.txt
    target/py-ref/bin/python scripts/reference_values.py
"""
import math

import numpy as np
from scipy import signal, special


def section(title):
    print()
    print("## " + title)


def filters():
    section("§9 Butterworth band-pass, order 4, 5-15 Hz at 250 Hz (scipy.signal.butter, sos)")
    sos = signal.butter(4, [5, 15], "band", fs=250, output="sos")
    freqs = [1, 3, 5, 10, 12, 15, 20, 50, 60]
    _, h = signal.sosfreqz(sos, worN=freqs, fs=250)
    for f, v in zip(freqs, np.abs(h)):
        print(f"|H({f} Hz)| = {v:.8g}")
    fc = 250 / math.pi * math.atan(math.sqrt(math.tan(math.pi * 5 / 250) * math.tan(math.pi * 15 / 250)))
    print(f"unity-gain frequency = {fc:.4f} Hz")


def circle():
    section("§5 Diffusion map of the uniform unit circle: lambda_k = I_k(2/eps) / I_0(2/eps)")
    for eps in (0.1, 1.0):
        vals = [special.ive(k, 2 / eps) / special.ive(0, 2 / eps) for k in range(1, 5)]
        print(f"eps = {eps}: " + ", ".join(f"{v:.8f}" for v in vals))
    eps = 4e-4
    print(f"eps = {eps}: 1 - lambda_1 = {1 - special.ive(1, 2 / eps) / special.ive(0, 2 / eps):.6e}")


def sample_entropy():
    section("§3 Sample entropy (Richman & Moorman 2000), counted exactly")

    def sampen(x, m, r):
        x = np.asarray(x, float)
        n = len(x)

        def count(mm):
            t = np.array([x[i : i + mm] for i in range(n - m)])
            c = 0
            for i in range(len(t)):
                for j in range(i + 1, len(t)):
                    if np.max(np.abs(t[i] - t[j])) <= r:
                        c += 1
            return c

        b, a = count(m), count(m + 1)
        return b, a, -math.log(a / b)

    b, a, s = sampen([1, 2, 3, 4, 5, 1, 2, 3, 4, 6, 1, 2, 3, 4, 5], 2, 0.5)
    print(f"x = 1..5,1..4,6,1..5, m = 2, r = 0.5: B = {b}, A = {a}, SampEn = {s:.6f}")
    print(f"i.i.d. Gaussian limit, m = 2, r = 0.2 SD: -ln erf(0.1) = {-math.log(special.erf(0.1)):.5f}")


def turning_points():
    section("§4 Turning points of i.i.d. data (Kendall): mean (2N-4)/3, variance (16N-29)/90")
    n = 5000
    print(f"N = {n}: mean {(2 * n - 4) / 3:.3f}, SD {math.sqrt((16 * n - 29) / 90):.4f}")


def rqa():
    section("§7 Recurrence quantification of a 5 x 5 tridiagonal plot (identity line kept)")
    r = np.zeros((5, 5), int)
    for i in range(5):
        for j in range(5):
            if abs(i - j) <= 1:
                r[i, j] = 1
    print(f"RR = {r.sum() / 25:.2f}")
    # Diagonal lines: lengths of runs of ones along each diagonal.
    lengths = []
    for k in range(-4, 5):
        d = np.diagonal(r, k)
        run = 0
        for v in list(d) + [0]:
            if v:
                run += 1
            elif run:
                lengths.append(run)
                run = 0
    lengths = np.array(lengths)
    det = lengths[lengths >= 2].sum() / lengths.sum()
    mean_l = lengths[lengths >= 2].mean()
    _, counts = np.unique(lengths[lengths >= 2], return_counts=True)
    p = counts / counts.sum()
    print(f"DET = {det:.3f}, L = {mean_l:.4f}, Lmax = {lengths.max()}, ENTR = {-(p * np.log(p)).sum():.4f}")
    eps = 0.05
    pr = 2 * eps - eps * eps
    print(f"i.i.d. uniform, m = 1, eps = {eps}: DET = LAM = 1 - (1 - p)^2 = {1 - (1 - pr) ** 2:.4f}")


def format212():
    section("§10 PhysioNet format 212 packing of two 12-bit samples")
    for a, b in [(995, 1011), (-1, 1000)]:
        ua, ub = a & 0xFFF, b & 0xFFF
        bytes_ = [ua & 0xFF, ((ub >> 8) << 4) | (ua >> 8), ub & 0xFF]
        print(f"({a}, {b}) -> " + " ".join(f"{x:02x}" for x in bytes_))


def cubes():
    section("§6 TwoNN (Facco et al. 2017) and MLE (Levina & Bickel 2004, k 10-20) on uniform cubes, N = 4000")
    from scipy.spatial import cKDTree

    rng = np.random.default_rng(2026)
    for d in (1, 2, 3, 5, 10):
        x = rng.random((4000, d))
        dist, _ = cKDTree(x).query(x, k=21)
        dist = dist[:, 1:]
        mu = np.sort(dist[:, 1] / dist[:, 0])
        keep = int(len(mu) * 0.9)
        f = np.arange(1, len(mu) + 1) / len(mu)
        xs, ys = np.log(mu[:keep]), -np.log(1 - f[:keep])
        twonn = (xs * ys).sum() / (xs * xs).sum()
        inv = []
        for k in range(10, 21):
            t = dist[:, :k]
            m = (k - 1) / np.log(t[:, k - 1 : k] / t[:, : k - 1]).sum(axis=1)
            inv.append(np.mean(1 / m))
        mle = 1 / np.mean(inv)
        print(f"d = {d}: TwoNN {twonn:.2f}, MLE {mle:.2f}")


if __name__ == "__main__":
    print("# beatfold reference values (numpy " + np.__version__ + ")")
    filters()
    circle()
    sample_entropy()
    turning_points()
    rqa()
    format212()
    cubes()
