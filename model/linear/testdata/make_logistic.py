#!/usr/bin/python3
"""Writes logistic.json, the scikit-learn reference values that
logistic_test.go checks the classification baselines of package linear
against. Run from this folder with Debian's packages:

    /usr/bin/python3 make_logistic.py

Every cohort is invented here: each participant's edges (the upper triangle
of a symmetric p x p matrix, row by row) are Gaussian noise plus a shift
that depends on the participant's class on a few edges, so the classes are
learnable but not separable. Nothing comes from real participants.

References (scikit-learn 1.2, numpy):
  - "fits": StandardScaler (or StandardScaler(with_std=False) for
    standardize = "center") then LogisticRegression(penalty="l2", C=C,
    solver="lbfgs", class_weight=..., tol=1e-12, max_iter=100000); binary
    problems get sklearn's binary (sigmoid) model, three classes its
    multinomial (softmax) model. Coefficients are those on the standardized
    edges (coef_, one row for binary, K rows otherwise) and intercept_; the
    probabilities are predict_proba of the held-out participants.
    scikit-learn's lbfgs also stops on a relative change of the objective
    below scipy's default ftol (about 2e-9), which stops it short of 1e-6
    in the coefficients (up to 1e-4 away on these cohorts); the script
    therefore runs scikit-learn's lbfgs fit with that stop set to 0
    (tight_lbfgs below), so that it stops on gtol = tol only, as the Go
    fit does. It also solves each problem with solver="newton-cg"
    (tol=1e-10) and records the larger difference between the two solvers
    ("solver_gap"), so a test knows how exact the reference is.
  - "cv": GridSearchCV(Pipeline([StandardScaler, LogisticRegression]),
    {"C": grid}, scoring="neg_log_loss", cv=PredefinedSplit(folds)) on the
    inner folds exported here ("folds": the inner fold of each training
    participant, from StratifiedKFold(shuffle=True, random_state=0)):
    mean_test_score (negated: the mean over folds of each fold's log loss)
    and best_params_["C"].
  - "kernel": LogisticRegression on the raw (unstandardized) edges with
    C = 1/lambda, the reference of kernel logistic regression with the linear
    kernel and penalty lambda (the two problems have the same solution; see
    kernel_logistic.go).
  - "majority": DummyClassifier(strategy="prior").predict_proba.
"""
import json
import warnings

import numpy as np
import scipy.optimize
import sklearn.linear_model._logistic as sklearn_logistic
from sklearn.dummy import DummyClassifier
from sklearn.exceptions import ConvergenceWarning
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import GridSearchCV, PredefinedSplit, StratifiedKFold
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import StandardScaler


class tight_lbfgs:
    """Stands for scipy.optimize inside scikit-learn's logistic module:
    minimize as scipy's, with ftol = 0 added to L-BFGS-B's options."""

    @staticmethod
    def minimize(*args, **kwargs):
        if kwargs.get("method") == "L-BFGS-B":
            kwargs["options"] = dict(kwargs.get("options") or {}, ftol=0.0)
        return scipy.optimize.minimize(*args, **kwargs)


sklearn_logistic.optimize = tight_lbfgs
# At these tolerances both solvers end at the limit of floating-point
# precision and warn that they did not converge; solver_gap says how far
# apart they end.
warnings.simplefilter("ignore", ConvergenceWarning)


def cohort(rng, n, p, counts, shift):
    """Invented edges and labels: counts[k] participants in class k, each
    edge N(0, 1) plus shift * (k - mean class) on the first three edges and
    an edge-specific offset and scale (so standardizing matters)."""
    d = p * (p - 1) // 2
    labels = np.concatenate([np.full(c, k) for k, c in enumerate(counts)])
    rng.shuffle(labels)
    assert len(labels) == n
    offset = rng.normal(0, 2, d)
    scale = rng.uniform(0.5, 3, d)
    x = rng.normal(0, 1, (n, d))
    centre = (len(counts) - 1) / 2
    for j in range(3):
        x[:, j] += shift * (labels - centre) * (1 if j != 1 else -1)
    if len(counts) > 2:
        x[:, 3] += shift * (labels == 0)
    return offset + scale * x, labels


def fit_sklearn(x, y, c, class_weight, standardize, solver, tol):
    scaler = StandardScaler(with_std=(standardize == "zscore")).fit(x)
    lr = LogisticRegression(penalty="l2", C=c, solver=solver, tol=tol, max_iter=100000,
                            class_weight=None if class_weight == "none" else class_weight)
    lr.fit(scaler.transform(x), y)
    return scaler, lr


def fit_case(rng, name, n_train, n_test, p, counts, shift, c, class_weight, standardize):
    x, y = cohort(rng, n_train + n_test, p, counts, shift)
    train, test = np.arange(n_train), np.arange(n_train, n_train + n_test)
    scaler, lr = fit_sklearn(x[train], y[train], c, class_weight, standardize, "lbfgs", 1e-12)
    _, ncg = fit_sklearn(x[train], y[train], c, class_weight, standardize, "newton-cg", 1e-10)
    proba = lr.predict_proba(scaler.transform(x[test]))
    proba_ncg = ncg.predict_proba(scaler.transform(x[test]))
    gap = max(np.abs(lr.coef_ - ncg.coef_).max(), np.abs(proba - proba_ncg).max())
    return {
        "name": name, "classes": len(counts), "edges": x.tolist(), "labels": y.tolist(),
        "train": train.tolist(), "test": test.tolist(),
        "c": c, "class_weight": class_weight, "standardize": standardize,
        "coef": lr.coef_.tolist(), "intercept": lr.intercept_.tolist(),
        "proba": proba.tolist(), "solver_gap": gap,
    }


def cv_case(rng, name, n, p, counts, shift, grid, folds, class_weight):
    x, y = cohort(rng, n, p, counts, shift)
    fold_of = np.zeros(n, dtype=int)
    for f, (_, held) in enumerate(StratifiedKFold(folds, shuffle=True, random_state=0).split(x, y)):
        fold_of[held] = f
    pipe = Pipeline([("scale", StandardScaler()),
                     ("lr", LogisticRegression(penalty="l2", solver="lbfgs", tol=1e-12, max_iter=100000,
                                               class_weight=None if class_weight == "none" else class_weight))])
    search = GridSearchCV(pipe, {"lr__C": grid}, scoring="neg_log_loss", cv=PredefinedSplit(fold_of))
    search.fit(x, y)
    return {
        "name": name, "classes": len(counts), "edges": x.tolist(), "labels": y.tolist(),
        "folds": fold_of.tolist(), "cs": grid, "class_weight": class_weight,
        "mean_log_loss": (-search.cv_results_["mean_test_score"]).tolist(),
        "best_c": search.best_params_["lr__C"],
    }


def kernel_case(rng, name, n_train, n_test, p, counts, shift, lam):
    x, y = cohort(rng, n_train + n_test, p, counts, shift)
    x = x / np.sqrt(x.shape[1])  # keep the linear kernel's scale moderate
    train, test = np.arange(n_train), np.arange(n_train, n_train + n_test)
    lr = LogisticRegression(penalty="l2", C=1 / lam, solver="lbfgs", tol=1e-12, max_iter=100000)
    lr.fit(x[train], y[train])
    ncg = LogisticRegression(penalty="l2", C=1 / lam, solver="newton-cg", tol=1e-10, max_iter=100000)
    ncg.fit(x[train], y[train])
    proba, proba_ncg = lr.predict_proba(x[test]), ncg.predict_proba(x[test])
    return {
        "name": name, "classes": len(counts), "edges": x.tolist(), "labels": y.tolist(),
        "train": train.tolist(), "test": test.tolist(), "lambda": lam,
        "coef": lr.coef_.tolist(), "intercept": lr.intercept_.tolist(), "proba": proba.tolist(),
        "solver_gap": float(np.abs(proba - proba_ncg).max()),
    }


def main():
    rng = np.random.default_rng(20261202)
    fits = [
        fit_case(rng, "binary", 40, 10, 6, [22, 28], 1.0, 0.5, "none", "zscore"),
        fit_case(rng, "binary balanced, more edges than participants", 36, 10, 10, [34, 12], 1.2, 0.1, "balanced", "zscore"),
        fit_case(rng, "binary centred", 40, 10, 6, [20, 30], 1.0, 0.05, "none", "center"),
        fit_case(rng, "three classes", 45, 12, 6, [18, 15, 24], 1.0, 1.0, "none", "zscore"),
        fit_case(rng, "three classes balanced, more edges than participants", 30, 12, 10, [16, 10, 16], 1.5, 0.3, "balanced", "zscore"),
    ]
    cv = [
        cv_case(rng, "binary", 40, 6, [18, 22], 0.8, [0.001, 0.01, 0.1, 1.0, 10.0], 5, "none"),
        cv_case(rng, "three classes balanced", 45, 6, [20, 10, 15], 0.8, [0.003, 0.03, 0.3, 3.0], 3, "balanced"),
    ]
    kernel = [
        kernel_case(rng, "binary", 30, 10, 8, [15, 25], 1.0, 0.7),
        kernel_case(rng, "three classes", 36, 10, 8, [12, 12, 22], 1.0, 0.4),
    ]
    labels = [0, 2, 1, 1, 2, 2, 0, 2]
    majority = {"labels": labels, "classes": 3,
                "proba": DummyClassifier(strategy="prior").fit(np.zeros((len(labels), 1)), labels)
                .predict_proba(np.zeros((1, 1)))[0].tolist()}
    for f in fits + kernel:
        print(f["name"], "solver gap", f["solver_gap"])
    for f in cv:
        print(f["name"], "best C", f["best_c"], f["mean_log_loss"])
    with open("logistic.json", "w") as out:
        json.dump({"fits": fits, "cv": cv, "kernel": kernel, "majority": majority}, out)
        out.write("\n")


if __name__ == "__main__":
    main()
