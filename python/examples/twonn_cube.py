"""TwoNN and MLE on a uniform 5-cube rotated into 10-D, for several sample sizes and seeds: the
boundary bias behind the sample size of the package test. Usage:
python python/examples/twonn_cube.py   (research use only)
"""
import numpy as np, beatfold
for n in (1000, 2000, 4000, 8000):
    for seed in (1, 2, 3):
        rng = np.random.default_rng(seed)
        Q, _ = np.linalg.qr(rng.normal(size=(10, 10)))
        X = rng.uniform(size=(n, 5)) @ Q[:5]
        d = beatfold.intrinsic_dimension(X, methods=["twonn","mle"], bootstrap=0, max_points=10000)
        print(n, seed, round(d["estimates"]["twonn"]["d"],3), round(d["estimates"]["mle"]["d"],3))
