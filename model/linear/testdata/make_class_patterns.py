#!/usr/bin/python3
"""Writes class_patterns.json, the numpy reference values that
classpattern_test.go checks the activation patterns of the classification
baselines (Logistic.EdgeImportance, KernelLogistic.EdgeImportance) against.
Run from this folder with Debian's packages:

    /usr/bin/python3 make_class_patterns.py

Every value is invented here from numpy's seeded generator: the edges of
the test participants (the upper triangle of symmetric p x p matrices, row
by row; functional edges, then structural ones for input "both") and the
fitted parameters of each model (weights and intercepts of a logistic
model on the raw edges; training edge vectors and dual coefficients of a
kernel logistic model). Nothing comes from real participants.

For each case the decision values s are computed as the Go code documents
them (Haufe et al. 2014 take the pattern of a linear model as cov(x, s)):
  - the linear functions f = b + x W (logistic), or f = b + k(x, X) alpha
    (kernel logistic: the linear kernel x . x_i, or the correlation kernel,
    the dot product of edge vectors centred and scaled to unit length per
    participant);
  - two classes: s = f, the log-odds of class 1; K > 2 classes:
    s_c = f_c - mean_j f_j;
and the pattern of edge e and decision value c is np.cov(x_e, s_c)[0, 1]
(sample covariance, n - 1), with x_e the raw edge.
"""
import json

import numpy as np

rng = np.random.default_rng(20261202)
p = 5
d = p * (p - 1) // 2
n = 9


def corr_rows(x):
    x = x - x.mean(axis=1, keepdims=True)
    return x / np.linalg.norm(x, axis=1, keepdims=True)


def patterns(x, s):
    out = np.empty((x.shape[1], s.shape[1]))
    for e in range(x.shape[1]):
        for c in range(s.shape[1]):
            out[e, c] = np.cov(x[:, e], s[:, c])[0, 1]
    return out


def decision(f):
    if f.shape[1] == 1:
        return f
    return f - f.mean(axis=1, keepdims=True)


cases = []
for name, kind, classes, inp, kernel in [
    ("logistic, two classes, functional", "logistic", 2, "functional", ""),
    ("logistic, three classes, both", "logistic", 3, "both", ""),
    ("kernel_logistic, two classes, linear kernel", "kernel_logistic", 2, "functional", "linear"),
    ("kernel_logistic, three classes, correlation kernel", "kernel_logistic", 3, "structural", "correlation"),
]:
    width = 2 * d if inp == "both" else d
    m = 1 if classes == 2 else classes
    x = rng.normal(0.2, 0.4, size=(n, width))
    b = rng.normal(size=m)
    case = {"name": name, "kind": kind, "classes": classes, "input": inp, "kernel": kernel,
            "p": p, "edges": x.tolist(), "intercept": b.tolist()}
    if kind == "logistic":
        w = rng.normal(size=(width, m))
        f = x @ w + b
        case["weights"] = w.tolist()
    else:
        ntrain = 6
        xt = rng.normal(0.2, 0.4, size=(ntrain, width))
        alpha = rng.normal(size=(ntrain, m))
        if kernel == "correlation":
            f = corr_rows(x) @ corr_rows(xt).T @ alpha + b
        else:
            f = x @ xt.T @ alpha + b
        case["train_edges"] = xt.tolist()
        case["dual_coef"] = alpha.tolist()
    case["pattern"] = patterns(x, decision(f)).tolist()
    cases.append(case)

with open("class_patterns.json", "w") as fh:
    json.dump({"source": "numpy " + np.__version__ + " np.cov, make_class_patterns.py", "cases": cases}, fh, indent=1)
