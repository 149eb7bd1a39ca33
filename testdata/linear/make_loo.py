#!/usr/bin/python3
"""Writes loo.json, the fixture of ridge's inner = "loo" (efficient
leave-one-out) in package model/linear's tests.

Run with Debian's Python (numpy and scikit-learn):

    /usr/bin/python3 testdata/linear/make_loo.py

Two invented cohorts of random symmetric "connectomes" (no real data): one
with fewer participants than edges (skein solves it in the dual, through
the kernel), one with more (the primal, through the SVD of the edges). For
each, scikit-learn's RidgeCV (alpha_per_target=True, its default efficient
leave-one-out: gcv_mode "eigen" in the first cohort and "svd" in the second)
after a StandardScaler fitted on the training participants chooses each
score's alpha from a grid and predicts the held-out participants; the
fixture keeps the chosen alphas and the predictions. Cases: z-scored edges
with an absolute grid, centred edges, and z-scored edges with skein's
relative grid (alpha times the number of edges, which is what
alpha_scale = "relative" makes of it for z-scored edges).
"""
import json
import os

import numpy as np
from sklearn.linear_model import RidgeCV
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

HERE = os.path.dirname(os.path.abspath(__file__))


# cohort, upper and edges are those of make_fixtures.py (which needs
# statsmodels for its Longley check, so they are not imported from it).
def upper(m):
    i, j = np.triu_indices(m.shape[0], k=1)
    return m[i, j]


def cohort(rng, n, p, targets):
    """n random symmetric p x p functional and structural matrices and scores
    that depend linearly on a few functional edges, plus noise."""
    def sym(scale):
        a = rng.normal(scale=scale, size=(p, p))
        a = (a + a.T) / 2
        np.fill_diagonal(a, 0)
        return a
    func = [sym(0.4) for _ in range(n)]
    struct = [np.abs(sym(1.0)) for _ in range(n)]
    xf = np.array([upper(m) for m in func])
    beta = rng.normal(size=(xf.shape[1], targets)) * (rng.random((xf.shape[1], 1)) < 0.3)
    y = xf @ beta + rng.normal(scale=0.5, size=(n, targets)) + 3.0
    return {
        "p": p,
        "functional": [m.tolist() for m in func],
        "structural": [m.tolist() for m in struct],
        "y": y.tolist(),
    }


def edges(c, rows, which):
    f = np.array([upper(np.array(c["functional"][i])) for i in rows])
    s = np.array([upper(np.array(c["structural"][i])) for i in rows])
    return {"functional": f, "structural": s, "both": np.hstack([f, s])}[which]


def loo_cases(c, train, test):
    y = np.array(c["y"])
    ytr = y[train]
    xtr, xte = edges(c, train, "functional"), edges(c, test, "functional")
    d = xtr.shape[1]
    cases = []
    grid = [0.03, 0.3, 3.0, 30.0, 300.0, 3000.0]
    relative = [0.001, 0.01, 0.1, 1.0, 10.0]
    for name, with_std, alphas, scale, sk_alphas in [
        ("ridge loo zscore", True, grid, "absolute", grid),
        ("ridge loo center", False, grid, "absolute", grid),
        ("ridge loo relative", True, relative, "relative", [a * d for a in relative]),
    ]:
        m = make_pipeline(StandardScaler(with_std=with_std),
                          RidgeCV(alphas=sk_alphas, alpha_per_target=True)).fit(xtr, ytr)
        chosen = m[-1].alpha_
        # Back to the grid's own values (the relative grid was scaled by d).
        chosen = [alphas[sk_alphas.index(a)] for a in chosen]
        print(f"{name}: n = {len(train)}, edges = {d}, chosen {chosen}")
        cases.append({
            "name": name, "model": "ridge",
            "settings": {"input": "functional", "standardize": "zscore" if with_std else "center",
                         "alphas": alphas, "alpha_scale": scale, "inner": "loo"},
            "predictions": m.predict(xte).tolist(),
            "chosen_alphas": chosen,
        })
    return cases


def main():
    rng = np.random.default_rng(20261202)
    cohorts = []
    for n_train, n_test, p in [(40, 8, 12), (70, 8, 6)]:
        c = cohort(rng, n_train + n_test, p, targets=2)
        train, test = list(range(n_train)), list(range(n_train, n_train + n_test))
        c["train"], c["test"] = train, test
        c["cases"] = loo_cases(c, train, test)
        cohorts.append(c)
    with open(os.path.join(HERE, "loo.json"), "w") as f:
        json.dump({"cohorts": cohorts}, f)


if __name__ == "__main__":
    main()
