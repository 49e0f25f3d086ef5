#!/usr/bin/env python3
"""Reference fits for parch's thin-layer models, by scipy.optimize.curve_fit.

Run with Debian's python3-scipy:  /usr/bin/python3 scipy_fits.py > scipy_fits.json
The Go test (internal/kinetics/models_test.go) fits the same points and compares.

Data sets:
  salehi2023: experimental moisture ratios of guar-coated sour cherry, t in min,
      Salehi and Inanloodoghouz (2023), Ultrasonics Sonochemistry 100:106633, Table 1.
  invented_page: an invented curve of our own (Page k=0.35 1/h^n, n=1.15, t in h,
      0..12 h every 0.25 h) with a fixed deterministic ripple of +-0.004 standing in
      for noise. Not measured data.
  invented_two_term: an invented curve of our own (0.6 exp(-1.2 t) + 0.4 exp(-0.15 t),
      t in h, 0..20 h every 0.5 h) with a +-0.003 ripple.
"""
import json, math, sys
import numpy as np
import scipy
from scipy.optimize import curve_fit

models = {
    "lewis": (lambda t, k: np.exp(-k * t), ["k"]),
    "page": (lambda t, k, n: np.exp(-k * np.power(t, n)), ["k", "n"]),
    "henderson_pabis": (lambda t, a, k: a * np.exp(-k * t), ["a", "k"]),
    "logarithmic": (lambda t, a, k, c: a * np.exp(-k * t) + c, ["a", "k", "c"]),
    "two_term": (lambda t, a, k0, b, k1: a * np.exp(-k0 * t) + b * np.exp(-k1 * t), ["a", "k0", "b", "k1"]),
    "midilli": (lambda t, a, k, n, b: a * np.exp(-k * np.power(t, n)) + b * t, ["a", "k", "n", "b"]),
}

def starts(name, t, mr):
    k = 1.0 / max(t[-1] / 3, 1e-9)
    return {
        "lewis": [k], "page": [k, 1.0], "henderson_pabis": [1.0, k],
        "logarithmic": [1.0, k, 0.0], "two_term": [0.5, 3 * k, 0.5, k / 3],
        "midilli": [1.0, k, 1.0, 0.0],
    }[name]

def fit_all(t, mr):
    t = np.asarray(t, float); mr = np.asarray(mr, float)
    out = {}
    for name, (f, names) in models.items():
        best = None
        for scale in (1.0, 0.3, 3.0):
            p0 = [v * (scale if pn.startswith("k") else 1.0) for v, pn in zip(starts(name, t, mr), names)]
            try:
                p, cov = curve_fit(f, t, mr, p0=p0, maxfev=200000, ftol=1e-15, xtol=1e-15, gtol=1e-15)
            except Exception as e:  # noqa
                continue
            sse = float(np.sum((mr - f(t, *p)) ** 2))
            if best is None or sse < best[1]:
                best = (p, sse)
        if best is None:
            continue
        p, sse = best
        out[name] = {"params": dict(zip(names, map(float, p))), "sse": sse}
    return out

def ripple(n, amp, w):
    return [amp * math.sin(w * i + 0.3) for i in range(n)]

sets = {}
t = [0, 15, 30, 45, 60, 75, 90]
mr = [1.000, 0.646, 0.525, 0.408, 0.329, 0.258, 0.192]
sets["salehi2023"] = {"t": t, "mr": mr}

t = [0.25 * i for i in range(49)]
r = ripple(len(t), 0.004, 2.1)
sets["invented_page"] = {"t": t, "mr": [math.exp(-0.35 * ti ** 1.15) + ri for ti, ri in zip(t, r)]}

t = [0.5 * i for i in range(41)]
r = ripple(len(t), 0.003, 1.7)
sets["invented_two_term"] = {"t": t, "mr": [0.6 * math.exp(-1.2 * ti) + 0.4 * math.exp(-0.15 * ti) + ri for ti, ri in zip(t, r)]}

result = {"scipy_version": scipy.__version__, "numpy_version": np.__version__, "sets": {}}
for name, d in sets.items():
    result["sets"][name] = {"t": d["t"], "mr": d["mr"], "fits": fit_all(d["t"], d["mr"])}
json.dump(result, sys.stdout, indent=1)
print()
