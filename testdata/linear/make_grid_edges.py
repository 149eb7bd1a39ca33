#!/usr/bin/python3
"""Writes testdata/linear/grid_edges.json, the fixture of package
model/linear's tests of penalties chosen at the edge of their grid.

Run with Debian's Python, which has numpy and scikit-learn:

    /usr/bin/python3 testdata/linear/make_grid_edges.py

Two invented cohorts of random symmetric "connectomes" (no real data), in
the layout of sklearn.json (see make_fixtures.py):

noise
    40 training participants, 36 functional edges, three scores of pure
    noise, independent of the edges. With no signal, the expected inner
    cross-validated error falls as the penalty grows (the best ridge is the
    mean); with 32 participants to fit against 36 edges the small
    penalties of the grids nearly interpolate the noise, and their error
    is far above the largest's, so scikit-learn's GridSearchCV chooses the
    largest value.

signal
    60 training participants, 10 functional edges, two scores that are an
    exact linear function of the (z-scored, or correlation-normalized)
    edges plus noise of SD 1e-3. Any shrinkage only adds bias, so
    GridSearchCV chooses the smallest value.

The script asserts both expectations, on the fixture's cohorts and on 40
more drawn with other seeds, so the fixture holds only cohorts where the
edge is certain in practice, and records scikit-learn's choice and
predictions for held-out participants.
"""
import json
import os

import numpy as np
import sklearn
from sklearn.compose import TransformedTargetRegressor
from sklearn.kernel_ridge import KernelRidge
from sklearn.linear_model import Ridge
from sklearn.model_selection import GridSearchCV, PredefinedSplit
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

HERE = os.path.dirname(os.path.abspath(__file__))

# n_train, n_test, p, targets of each cohort.
SIZES = {"largest": (40, 8, 9, 3), "smallest": (60, 8, 5, 2)}


def upper(m):
    i, j = np.triu_indices(m.shape[0], k=1)
    return m[i, j]


def corr_rows(a):
    z = a - a.mean(axis=1, keepdims=True)
    return z / np.linalg.norm(z, axis=1, keepdims=True)


def matrices(rng, n, p):
    def sym(scale):
        a = rng.normal(scale=scale, size=(p, p))
        a = (a + a.T) / 2
        np.fill_diagonal(a, 0)
        return a
    func = [sym(0.4) for _ in range(n)]
    struct = [np.abs(sym(1.0)) for _ in range(n)]
    return func, struct


def cases(x, y, train, test, ridge_grid, kernel_grid, edge):
    """GridSearchCV over explicit folds (participant train[i] in fold i % 5,
    which the Go test reproduces with Group "i % 5") for ridge after
    StandardScaler and for kernel ridge on the correlation kernel."""
    folds = PredefinedSplit(np.arange(len(train)) % 5)
    xtr, xte = x[train], x[test]
    ytr = y[train]
    want = max if edge == "largest" else min
    out = []
    preds, chosen = [], []
    for j in range(ytr.shape[1]):
        gs = GridSearchCV(make_pipeline(StandardScaler(), Ridge()), {"ridge__alpha": ridge_grid},
                          cv=folds, scoring="neg_mean_squared_error").fit(xtr, ytr[:, j])
        preds.append(gs.predict(xte))
        chosen.append(gs.best_params_["ridge__alpha"])
    assert all(a == want(ridge_grid) for a in chosen), (edge, "ridge", chosen)
    out.append({"name": f"ridge {edge}", "model": "ridge",
                "settings": {"input": "functional", "standardize": "zscore", "alphas": ridge_grid,
                             "alpha_scale": "absolute", "inner_folds": 5},
                "predictions": np.array(preds).T.tolist(), "chosen_alphas": chosen})
    preds, chosen = [], []
    ztr, zte = corr_rows(xtr), corr_rows(xte)
    for j in range(ytr.shape[1]):
        est = TransformedTargetRegressor(regressor=KernelRidge(kernel="linear"), transformer=StandardScaler())
        gs = GridSearchCV(est, {"regressor__alpha": kernel_grid}, cv=folds,
                          scoring="neg_mean_squared_error").fit(ztr, ytr[:, j])
        preds.append(gs.predict(zte))
        chosen.append(gs.best_params_["regressor__alpha"])
    assert all(a == want(kernel_grid) for a in chosen), (edge, "kernel_ridge", chosen)
    out.append({"name": f"kernel correlation {edge}", "model": "kernel_ridge",
                "settings": {"input": "functional", "kernel": "correlation", "alphas": kernel_grid,
                             "alpha_scale": "absolute", "inner_folds": 5},
                "predictions": np.array(preds).T.tolist(), "chosen_alphas": chosen})
    return out


def cohort(rng, n_train, n_test, p, targets, edge):
    n = n_train + n_test
    func, struct = matrices(rng, n, p)
    x = np.array([upper(m) for m in func])
    if edge == "largest":
        y = rng.normal(size=(n, targets)) + 3.0
        ridge_grid, kernel_grid = [0.1, 1.0, 10.0], [0.001, 0.01, 0.1]
    else:
        # Each participant's edges are centred and of length 0.4·sqrt(d),
        # so the correlation kernel's space (corr_rows) is x itself up to a
        # factor, and z-scored edges are an affine map of x: a score linear
        # in x is exact for both models.
        x = corr_rows(x) * 0.4 * np.sqrt(x.shape[1])
        i, j = np.triu_indices(p, k=1)
        for m, e in zip(func, x):
            m[i, j], m[j, i] = e, e
        y = x @ rng.normal(size=(x.shape[1], targets)) + rng.normal(scale=1e-3, size=(n, targets)) + 3.0
        ridge_grid, kernel_grid = [0.01, 1.0, 100.0], [0.01, 1.0, 100.0]
    train, test = list(range(n_train)), list(range(n_train, n))
    c = {"p": p, "functional": [m.tolist() for m in func], "structural": [m.tolist() for m in struct],
         "y": y.tolist(), "train": train, "test": test}
    c["cases"] = cases(x, y, train, test, ridge_grid, kernel_grid, edge)
    return c


def main():
    for seed in range(40):  # the choice does not hang on the draw
        for edge in ["largest", "smallest"]:
            cohort(np.random.default_rng(seed), *SIZES[edge], edge)
    rng = np.random.default_rng(20261207)
    out = {"sklearn_version": sklearn.__version__, "cohorts": [
        cohort(rng, *SIZES["largest"], "largest"),
        cohort(rng, *SIZES["smallest"], "smallest"),
    ]}
    with open(os.path.join(HERE, "grid_edges.json"), "w") as f:
        json.dump(out, f)
        f.write("\n")


if __name__ == "__main__":
    main()
