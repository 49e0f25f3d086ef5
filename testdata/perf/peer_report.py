#!/usr/bin/env python3
"""The peer parch's report speed is measured against (issue 12): what a
technologist's own script does with a long run, in numpy and scipy. It loads
the CSV (numpy.loadtxt), turns the mass into moisture ratio with the dry
mass, and fits the six thin-layer models with scipy.optimize.curve_fit on
every point. It prints its wall time and peak memory as JSON.

Run with Debian's python3-scipy on a run written by `parch simulate`:

    parch simulate --hours 28 --interval 0.1 --out /tmp/run1m.csv   # about 1,000,000 rows
    /usr/bin/python3 testdata/perf/peer_report.py /tmp/run1m.csv 27 0.05 > testdata/perf/peer_report.out.json
    /usr/bin/time -v parch report --format json --dry-mass 27 --equilibrium 0.05 /tmp/run1m.csv > /dev/null

The invented run's dry mass is 27 g and its equilibrium moisture 0.05.
"""
import json, resource, sys, time

t_start = time.perf_counter()
import numpy as np
from scipy.optimize import curve_fit

path, dry, xe = sys.argv[1], float(sys.argv[2]), float(sys.argv[3])
data = np.loadtxt(path, delimiter=",", skiprows=1, usecols=(0, 1))
t = data[:, 0] / 3600.0
x = data[:, 1] / dry - 1
mr = (x - xe) / (x[0] - xe)
t_loaded = time.perf_counter()

models = {
    "lewis": (lambda t, k: np.exp(-k * t), [0.5]),
    "page": (lambda t, k, n: np.exp(-k * np.power(t, n)), [0.5, 1.0]),
    "henderson_pabis": (lambda t, a, k: a * np.exp(-k * t), [1.0, 0.5]),
    "logarithmic": (lambda t, a, k, c: a * np.exp(-k * t) + c, [1.0, 0.5, 0.0]),
    "two_term": (lambda t, a, k0, b, k1: a * np.exp(-k0 * t) + b * np.exp(-k1 * t), [0.5, 1.0, 0.5, 0.2]),
    "midilli": (lambda t, a, k, n, b: a * np.exp(-k * np.power(t, n)) + b * t, [1.0, 0.5, 1.0, 0.0]),
}
fits = {}
for name, (f, p0) in models.items():
    try:
        p, _ = curve_fit(f, t, mr, p0=p0, maxfev=20000)
        fits[name] = [float(v) for v in p]
    except Exception as e:  # a fit that fails is reported, as parch does
        fits[name] = str(e)
t_end = time.perf_counter()
peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
json.dump({"rows": int(len(t)), "load_s": round(t_loaded - t_start, 3), "fit_s": round(t_end - t_loaded, 3),
           "total_s": round(t_end - t_start, 3), "peak_rss_mb": round(peak_mb, 1), "fits": fits}, sys.stdout, indent=1)
print()
