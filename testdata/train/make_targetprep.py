"""Fixture for train.TargetPrep: confound regression fitted on training rows
with numpy.linalg.lstsq, then standardization of the residuals (ddof=1).

Run with Debian's numpy: /usr/bin/python3 make_targetprep.py > targetprep.json
"""
import json
import numpy as np

rng = np.random.default_rng(20261201)
n = 30
cov = np.column_stack([rng.uniform(20, 60, n), rng.integers(0, 2, n).astype(float)])
y = np.column_stack([
    0.3 * cov[:, 0] - 2.0 * cov[:, 1] + rng.normal(0, 1, n) + 5,
    rng.normal(10, 3, n),
])
y[[4, 11], 0] = np.nan
y[[7], 1] = np.nan
train = sorted(rng.choice(n, 20, replace=False).tolist())
test = [i for i in range(n) if i not in train]

expect = {"beta": [], "mean": [], "sd": [], "standardized_test": []}
for t in range(2):
    rows = [i for i in train if not np.isnan(y[i, t])]
    X = np.column_stack([np.ones(len(rows)), cov[rows]])
    beta, *_ = np.linalg.lstsq(X, y[rows, t], rcond=None)
    resid = y[rows, t] - X @ beta
    mean, sd = resid.mean(), resid.std(ddof=1)
    Xt = np.column_stack([np.ones(len(test)), cov[test]])
    z = (y[test, t] - Xt @ beta - mean) / sd
    expect["beta"].append(beta.tolist())
    expect["mean"].append(mean)
    expect["sd"].append(sd)
    expect["standardized_test"].append([None if np.isnan(v) else v for v in z])

print(json.dumps({
    "y": [[None if np.isnan(v) else v for v in row] for row in y],
    "cov": cov.tolist(), "train": train, "test": test, "expect": expect,
}, indent=1))
