#!/usr/bin/python3
"""Writes assign.json: square cost matrices and their optimal assignments
from scipy.optimize.linear_sum_assignment (SciPy 1.10, Debian's
python3-scipy), the reference for report.Assign. Run from this folder:
/usr/bin/python3 assign.py"""
import json

import numpy as np
from scipy.optimize import linear_sum_assignment

rng = np.random.default_rng(20261201)
cases = []
for n in [1, 2, 3, 4, 5, 6, 8, 12, 16]:
    for kind in ["uniform", "integer", "negative-correlation"]:
        if kind == "uniform":
            cost = rng.uniform(0, 1, (n, n))
        elif kind == "integer":  # many ties
            cost = rng.integers(0, 4, (n, n)).astype(float)
        else:  # minus correlations between random filters, as MatchFilters builds them
            a = rng.normal(size=(n, 20))
            b = a[rng.permutation(n)] + 0.8 * rng.normal(size=(n, 20))
            cost = -np.corrcoef(a, b)[:n, n:]
        rows, cols = linear_sum_assignment(cost)
        cases.append({
            "name": f"{kind} {n}x{n}",
            "cost": cost.tolist(),
            "assignment": cols.tolist(),
            "total": float(cost[rows, cols].sum()),
        })
with open("assign.json", "w") as f:
    json.dump({"source": "scipy.optimize.linear_sum_assignment, SciPy " + __import__("scipy").__version__,
               "cases": cases}, f, indent=1)
