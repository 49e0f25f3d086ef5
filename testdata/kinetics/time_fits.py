#!/usr/bin/env python3
"""Time scipy.optimize.curve_fit on the six thin-layer models, 10^5 points.

The points are those of BenchmarkFitAll1e5 (internal/kinetics/models_test.go):
an invented two-term curve with a +-0.003 sine ripple, t from 0 to 16 h.
Run: /usr/bin/python3 testdata/kinetics/time_fits.py
Compare with: go test ./internal/kinetics -run XXX -bench FitAll1e5 -benchtime 3x
"""
import time
import numpy as np
from scipy.optimize import curve_fit
import scipy

n = 100000
i = np.arange(n)
t = i * 16.0 / n
mr = 0.6 * np.exp(-1.2 * t) + 0.4 * np.exp(-0.15 * t) + 0.003 * np.sin(1.7 * i)
models = [
    (lambda t, k: np.exp(-k * t), [0.3]),
    (lambda t, k, n: np.exp(-k * np.power(t, n)), [0.3, 1.0]),
    (lambda t, a, k: a * np.exp(-k * t), [1.0, 0.3]),
    (lambda t, a, k, c: a * np.exp(-k * t) + c, [1.0, 0.3, 0.0]),
    (lambda t, a, k0, b, k1: a * np.exp(-k0 * t) + b * np.exp(-k1 * t), [0.5, 0.9, 0.5, 0.1]),
    (lambda t, a, k, n, b: a * np.exp(-k * np.power(t, n)) + b * t, [1.0, 0.3, 1.0, 0.0]),
]
best = None
for rep in range(3):
    t0 = time.perf_counter()
    for f, p0 in models:
        curve_fit(f, t, mr, p0=p0, maxfev=20000)
    el = time.perf_counter() - t0
    best = el if best is None else min(best, el)
print(f"scipy {scipy.__version__}: six fits on {n} points: {best:.3f} s (best of 3, one start each)")
