#!/usr/bin/python3
"""Writes the fixtures of package model/linear's tests.

Run with Debian's Python, which has numpy, scipy, scikit-learn and
statsmodels:

    /usr/bin/python3 testdata/linear/make_fixtures.py

longley.json
    The NIST StRD linear regression dataset "Longley" (higher difficulty):
    16 observations of employment and six predictors, with NIST's certified
    least-squares coefficients. The data and the certified values below are
    written from memory; the data are checked here against the copy that
    Debian's python3-statsmodels ships (statsmodels.datasets.longley) and
    the coefficients against statsmodels' OLS to 1e-7 relative.

sklearn.json
    Two small invented cohorts of random symmetric "connectomes" (no real
    data) with scores, and the predictions scikit-learn makes for held-out
    participants: Ridge after StandardScaler, Ridge on centred edges,
    KernelRidge with a linear and a precomputed correlation kernel, all at a
    fixed alpha, and GridSearchCV's choice of alpha over explicit folds.

cpm.json
    An invented cohort with planted positive and negative networks, and
    connectome-based predictive modelling done with scipy: edges whose
    scipy.stats.pearsonr (or spearmanr) two-sided p-value is below 0.01,
    network strengths, and numpy's least-squares fit of the score on them.
"""
import json
import os

import numpy as np
import scipy.stats
import sklearn
import statsmodels.api as sm
from sklearn.compose import TransformedTargetRegressor
from sklearn.kernel_ridge import KernelRidge
from sklearn.linear_model import Ridge
from sklearn.model_selection import GridSearchCV, PredefinedSplit
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

HERE = os.path.dirname(os.path.abspath(__file__))

# --- Longley, from memory (NIST StRD, Longley.dat) --------------------------
LONGLEY = [  # y, x1 (GNP deflator), x2 (GNP), x3 (unemployed), x4 (armed forces), x5 (population), x6 (year)
    [60323, 83.0, 234289, 2356, 1590, 107608, 1947],
    [61122, 88.5, 259426, 2325, 1456, 108632, 1948],
    [60171, 88.2, 258054, 3682, 1616, 109773, 1949],
    [61187, 89.5, 284599, 3351, 1650, 110929, 1950],
    [63221, 96.2, 328975, 2099, 3099, 112075, 1951],
    [63639, 98.1, 346999, 1932, 3594, 113270, 1952],
    [64989, 99.0, 365385, 1870, 3547, 115094, 1953],
    [63761, 100.0, 363112, 3578, 3350, 116219, 1954],
    [66019, 101.2, 397469, 2904, 3048, 117388, 1955],
    [67857, 104.6, 419180, 2822, 2857, 118734, 1956],
    [68169, 108.4, 442769, 2936, 2798, 120445, 1957],
    [66513, 110.8, 444546, 4681, 2637, 121950, 1958],
    [68655, 112.6, 482704, 3813, 2552, 123366, 1959],
    [69564, 114.2, 502601, 3931, 2514, 125368, 1960],
    [69331, 115.7, 518173, 4806, 2572, 127852, 1961],
    [70551, 116.9, 554894, 4007, 2827, 130081, 1962],
]
# NIST certified B0 (intercept) .. B6, from memory.
LONGLEY_CERTIFIED = [
    -3482258.63459582, 15.0618722713733, -0.358191792925910e-01,
    -2.02022980381683, -1.03322686717359, -0.511041056535807e-01,
    1829.15146461355,
]


def longley():
    data = np.array(LONGLEY, dtype=float)
    shipped = sm.datasets.longley.load_pandas().data
    cols = ["TOTEMP", "GNPDEFL", "GNP", "UNEMP", "ARMED", "POP", "YEAR"]
    assert np.array_equal(shipped[cols].to_numpy(), data), "Longley data differ from statsmodels' copy"
    fit = sm.OLS(data[:, 0], sm.add_constant(data[:, 1:])).fit()
    assert np.allclose(fit.params, LONGLEY_CERTIFIED, rtol=1e-7, atol=0), fit.params
    return {
        "source": "NIST StRD Longley; data checked against statsmodels.datasets.longley",
        "x": data[:, 1:].tolist(),
        "y": data[:, 0].tolist(),
        "certified": LONGLEY_CERTIFIED,
    }


# --- invented cohorts -------------------------------------------------------
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


def corr_rows(a):
    z = a - a.mean(axis=1, keepdims=True)
    return z / np.linalg.norm(z, axis=1, keepdims=True)


def sklearn_cases(c, train, test):
    y = np.array(c["y"])
    ytr = y[train]
    cases = []

    def add(name, model, settings, pred, alphas=None):
        case = {"name": name, "model": model, "settings": settings, "predictions": pred.tolist()}
        if alphas is not None:
            case["chosen_alphas"] = alphas
        cases.append(case)

    for which, alpha in [("functional", 3.0), ("both", 40.0)]:
        xtr, xte = edges(c, train, which), edges(c, test, which)
        m = make_pipeline(StandardScaler(), Ridge(alpha=alpha, fit_intercept=True)).fit(xtr, ytr)
        add(f"ridge zscore {which}", "ridge",
            {"input": which, "standardize": "zscore", "alphas": [alpha], "alpha_scale": "absolute"}, m.predict(xte))
    xtr, xte = edges(c, train, "functional"), edges(c, test, "functional")
    m = make_pipeline(StandardScaler(with_std=False), Ridge(alpha=0.7)).fit(xtr, ytr)
    add("ridge center functional", "ridge",
        {"input": "functional", "standardize": "center", "alphas": [0.7], "alpha_scale": "absolute"}, m.predict(xte))

    # KernelRidge has no intercept: fit on y minus its training mean, add it back.
    mean = ytr.mean(axis=0)
    m = KernelRidge(alpha=5.0, kernel="linear").fit(xtr, ytr - mean)
    add("kernel linear", "kernel_ridge",
        {"input": "functional", "kernel": "linear", "alphas": [5.0], "alpha_scale": "absolute"}, m.predict(xte) + mean)
    ktr = np.corrcoef(np.vstack([xtr, xte]))[: len(train)]
    m = KernelRidge(alpha=0.2, kernel="precomputed").fit(ktr[:, : len(train)], ytr - mean)
    kte = np.corrcoef(np.vstack([xtr, xte]))[len(train):, : len(train)]
    add("kernel correlation", "kernel_ridge",
        {"input": "functional", "kernel": "correlation", "alphas": [0.2], "alpha_scale": "absolute"}, m.predict(kte) + mean)

    # Inner cross-validation over explicit folds: participant train[i] is in
    # fold i % 5 (the Go test gives it Group "i % 5" so its folds are these).
    folds = PredefinedSplit(np.arange(len(train)) % 5)
    grid = [0.01, 0.3, 10.0, 300.0, 10000.0]
    preds, chosen = [], []
    for j in range(ytr.shape[1]):
        gs = GridSearchCV(make_pipeline(StandardScaler(), Ridge()), {"ridge__alpha": grid},
                          cv=folds, scoring="neg_mean_squared_error").fit(xtr, ytr[:, j])
        preds.append(gs.predict(xte))
        chosen.append(gs.best_params_["ridge__alpha"])
    add("ridge cv", "ridge",
        {"input": "functional", "standardize": "zscore", "alphas": grid, "alpha_scale": "absolute", "inner_folds": 5},
        np.array(preds).T, chosen)
    kgrid = [0.001, 0.03, 1.0, 30.0]
    preds, chosen = [], []
    ztr, zte = corr_rows(xtr), corr_rows(xte)
    for j in range(ytr.shape[1]):
        est = TransformedTargetRegressor(regressor=KernelRidge(kernel="linear"), transformer=StandardScaler())
        gs = GridSearchCV(est, {"regressor__alpha": kgrid}, cv=folds,
                          scoring="neg_mean_squared_error").fit(ztr, ytr[:, j])
        preds.append(gs.predict(zte))
        chosen.append(gs.best_params_["regressor__alpha"])
    add("kernel correlation cv", "kernel_ridge",
        {"input": "functional", "kernel": "correlation", "alphas": kgrid, "alpha_scale": "absolute", "inner_folds": 5},
        np.array(preds).T, chosen)
    return cases


def cpm_fixture(rng):
    n_train, n_test, p = 80, 10, 8
    c = cohort(rng, n_train + n_test, p, targets=1)
    x = np.array([upper(np.array(m)) for m in c["functional"]])
    d = x.shape[1]
    planted_pos, planted_neg = [1, 7, 20], [4, 15, 26]
    y = x[:, planted_pos].sum(axis=1) - x[:, planted_neg].sum(axis=1) + rng.normal(scale=1.2, size=len(x))
    c["y"] = [[v] for v in y]
    train, test = list(range(n_train)), list(range(n_train, n_train + n_test))
    c["train"], c["test"] = train, test
    cases = []
    for corr, network in [("pearson", "both"), ("spearman", "both"), ("pearson", "positive"), ("pearson", "negative")]:
        f = scipy.stats.pearsonr if corr == "pearson" else scipy.stats.spearmanr
        r, pv = zip(*[f(x[train, k], y[train]) for k in range(d)])
        r, pv = np.array(r), np.array(pv)
        pos = [k for k in range(d) if pv[k] < 0.01 and r[k] > 0] if network != "negative" else []
        neg = [k for k in range(d) if pv[k] < 0.01 and r[k] < 0] if network != "positive" else []
        def design(rows):
            cols = [np.ones(len(rows))]
            if pos:
                cols.append(x[rows][:, pos].sum(axis=1))
            if neg:
                cols.append(x[rows][:, neg].sum(axis=1))
            return np.column_stack(cols)
        b = np.linalg.lstsq(design(train), y[train], rcond=None)[0]
        cases.append({
            "correlation": corr, "network": network, "p_threshold": 0.01,
            "positive": pos, "negative": neg,
            "predictions": (design(test) @ b).tolist(),
        })
    c["planted_positive"], c["planted_negative"] = planted_pos, planted_neg
    c["cases"] = cases
    # Critical |r| at p = 0.01 and 0.05 for a few sample sizes, from scipy's t quantile.
    c["critical_r"] = [
        {"n": n, "p": pth, "r": float(t / np.sqrt(n - 2 + t * t))}
        for n in [5, 12, 30, 80, 275] for pth in [0.01, 0.05]
        for t in [scipy.stats.t.ppf(1 - pth / 2, n - 2)]
    ]
    # Two-sided p-values of a few correlations, from scipy's t survival function.
    c["p_values"] = [
        {"n": n, "r": r, "p": float(2 * scipy.stats.t.sf(abs(r) * np.sqrt((n - 2) / (1 - r * r)), n - 2))}
        for n in [5, 30, 275] for r in [0.05, -0.3, 0.9]
    ]
    return c


def main():
    with open(os.path.join(HERE, "longley.json"), "w") as f:
        json.dump(longley(), f, indent=1)
        f.write("\n")
    rng = np.random.default_rng(20261201)
    out = {"sklearn_version": sklearn.__version__, "cohorts": []}
    # dual: 30 training participants, 45 edges; primal: 60 training participants, 10 edges.
    for n_train, n_test, p in [(30, 8, 10), (60, 8, 5)]:
        c = cohort(rng, n_train + n_test, p, targets=2)
        train, test = list(range(n_train)), list(range(n_train, n_train + n_test))
        c["train"], c["test"] = train, test
        c["cases"] = sklearn_cases(c, train, test)
        out["cohorts"].append(c)
    with open(os.path.join(HERE, "sklearn.json"), "w") as f:
        json.dump(out, f)
        f.write("\n")
    with open(os.path.join(HERE, "cpm.json"), "w") as f:
        json.dump(cpm_fixture(rng), f)
        f.write("\n")


if __name__ == "__main__":
    main()
