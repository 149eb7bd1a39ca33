"""Fixture for train.FitTargetPrepBlocks: B = 3 blocks of T = 2 scores and
C = 2 confounds side by side, as a permutation test fits a chunk of
permutations (each block's scores and confounds are the rows of block 0
under its own permutation). Each score column is regressed with
numpy.linalg.lstsq on the confounds of its own block, over the training rows
where the score is present; the residuals are standardized with their
training mean and SD (ddof=1).

Run with Debian's numpy: /usr/bin/python3 make_targetprep_blocks.py > targetprep_blocks.json
"""
import json
import numpy as np

rng = np.random.default_rng(20261202)
n, T, C, B = 24, 2, 2, 3
cov0 = np.column_stack([rng.uniform(20, 60, n), rng.integers(0, 2, n).astype(float)])
y0 = np.column_stack([
    0.3 * cov0[:, 0] - 2.0 * cov0[:, 1] + rng.normal(0, 1, n) + 5,
    -0.1 * cov0[:, 0] + rng.normal(10, 3, n),
])
y0[[3, 10], 0] = np.nan
y0[[6], 1] = np.nan
perms = [np.arange(n)] + [rng.permutation(n) for _ in range(B - 1)]
y = np.column_stack([y0[p] for p in perms])
cov = np.column_stack([cov0[p] for p in perms])
train = sorted(rng.choice(n, 16, replace=False).tolist())
test = [i for i in range(n) if i not in train]

expect = {"beta": [], "mean": [], "sd": [], "standardized_test": []}
for t in range(T * B):
    b = t // T
    c = cov[:, b * C:(b + 1) * C]
    rows = [i for i in train if not np.isnan(y[i, t])]
    X = np.column_stack([np.ones(len(rows)), c[rows]])
    beta, *_ = np.linalg.lstsq(X, y[rows, t], rcond=None)
    resid = y[rows, t] - X @ beta
    mean, sd = resid.mean(), resid.std(ddof=1)
    Xt = np.column_stack([np.ones(len(test)), c[test]])
    z = (y[test, t] - Xt @ beta - mean) / sd
    expect["beta"].append(beta.tolist())
    expect["mean"].append(mean)
    expect["sd"].append(sd)
    expect["standardized_test"].append([None if np.isnan(v) else v for v in z])

print(json.dumps({
    "blocks": B,
    "y": [[None if np.isnan(v) else v for v in row] for row in y],
    "cov": cov.tolist(), "train": train, "test": test, "expect": expect,
}, indent=1))
