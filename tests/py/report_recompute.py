"""Recomputes a Nudgebar model report's figures from its own raw sweeps.

Usage: report_recompute.py REPORT.json
Prints {"rho": [[per prompt]], "hole_rate": [[per slider]], "slope": [[axis][attribute]]}.

Spearman's rho: scipy.stats.spearmanr (PyPI: scipy), NaN (constant input)
printed as null. Slopes: numpy.polyfit degree 1 (PyPI: numpy), averaged over
the prompts that define the attribute at two or more slider values.
"""
import json
import math
import sys
import warnings

import numpy as np
from scipy import stats

ATTRIBUTES = ["note_density", "pitch_range", "rhythmic_complexity", "contour", "mean_pitch"]

report = json.load(open(sys.argv[1]))
out = {"rho": [], "hole_rate": [], "slope": []}
for axis in report["axes"]:
    own = axis["attribute"]
    rhos = []
    for sweep in axis["sweeps"]:
        pts = [(p["slider"], p["attributes"][own]) for p in sweep if p["attributes"].get(own) is not None]
        if len(pts) < 2:
            rhos.append(None)
            continue
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            r = stats.spearmanr([p[0] for p in pts], [p[1] for p in pts]).statistic
        rhos.append(None if r is None or math.isnan(r) else float(r))
    out["rho"].append(rhos)
    n = len(axis["sweeps"])
    k = len(axis["sweeps"][0])
    out["hole_rate"].append([sum(1 for s in axis["sweeps"] if s[i]["hole"]) / n for i in range(k)])
    row = []
    for attr in ATTRIBUTES:
        slopes = []
        for sweep in axis["sweeps"]:
            pts = [(p["slider"], p["attributes"][attr]) for p in sweep if p["attributes"].get(attr) is not None]
            xs = [p[0] for p in pts]
            if len(pts) >= 2 and max(xs) > min(xs):
                slopes.append(float(np.polyfit(xs, [p[1] for p in pts], 1)[0]))
        row.append(sum(slopes) / len(slopes) if slopes else None)
    out["slope"].append(row)
print(json.dumps(out))
