"""Writes estimators.json, the fixture of connectivity's tests.

Run with Debian's python3 (python3-numpy, python3-scipy, python3-sklearn):

    /usr/bin/python3 make_estimators.py

Series are random (numpy seed 17), each participant's covariance mixed by
its own matrix so the covariances differ. References:
  - Ledoit-Wolf: sklearn.covariance.ledoit_wolf (assume_centered=False).
  - sample covariance: numpy.cov(bias=True).
  - correlation: numpy.corrcoef.
  - partial correlation: -P_ij / sqrt(P_ii P_jj) with P = numpy.linalg.inv(cov).
  - log-Euclidean mean: scipy.linalg.expm(mean of scipy.linalg.logm(C_i)).
  - geometric mean: the fixed-point iteration with unit step, from the
    arithmetic mean, G <- G^1/2 expm(mean_i logm(G^-1/2 C_i G^-1/2)) G^1/2
    with scipy.linalg.sqrtm / logm / expm, stopped when
    ||mean log||_F / p^2 < 1e-12.
  - tangent coordinates: scipy.linalg.logm(M^-1/2 C M^-1/2) with
    M^-1/2 = inv(scipy.linalg.sqrtm(M)); vectorised as the upper triangle,
    row-major, off-diagonals times sqrt(2).
"""
import json

import numpy as np
import scipy.linalg as sl
from sklearn.covariance import ledoit_wolf

rng = np.random.default_rng(17)
p, T, n = 5, 40, 6
series = []
for i in range(n):
    mix = np.eye(p) + 0.4 * rng.standard_normal((p, p))
    series.append(rng.standard_normal((T, p)) @ mix + 3.0)
short = rng.standard_normal((4, p))  # T < p: the sample covariance is singular

def real(m):
    m = np.real_if_close(m, tol=1e6)
    assert np.isrealobj(m)
    return (m + m.T) / 2

covs = [np.cov(x, rowvar=False, bias=True) for x in series]
lw = [ledoit_wolf(x) for x in series + [short]]

def partial(c):
    prec = np.linalg.inv(c)
    d = np.sqrt(np.diag(prec))
    r = -prec / np.outer(d, d)
    np.fill_diagonal(r, 1.0)
    return r

le_mean = real(sl.expm(np.mean([real(sl.logm(c)) for c in covs], axis=0)))

g = np.mean(covs, axis=0)
iterations = 0
for k in range(200):
    iterations = k + 1
    s = real(sl.sqrtm(g))
    w = np.linalg.inv(s)
    logs = np.mean([real(sl.logm(w @ c @ w)) for c in covs], axis=0)
    g = real(s @ sl.expm(logs) @ s)
    if np.linalg.norm(logs) / p**2 < 1e-12:
        break

def tangent(c, m):
    w = np.linalg.inv(real(sl.sqrtm(m)))
    return real(sl.logm(w @ c @ w))

def vec(t, diag):
    out = []
    for i in range(p):
        if diag:
            out.append(t[i, i])
        for j in range(i + 1, p):
            out.append(np.sqrt(2) * t[i, j])
    return out

out = {
    "series": [x.tolist() for x in series],
    "short": short.tolist(),
    "covariance": [c.tolist() for c in covs],
    "correlation": [np.corrcoef(x, rowvar=False).tolist() for x in series],
    "partial": [partial(c).tolist() for c in covs],
    "ledoit_wolf": [c.tolist() for c, _ in lw],
    "shrinkage": [s for _, s in lw],
    "log_euclidean_mean": le_mean.tolist(),
    "geometric_mean": g.tolist(),
    "geometric_iterations": iterations,
    "tangent_log_euclidean": [tangent(c, le_mean).tolist() for c in covs],
    "tangent_geometric": [tangent(c, g).tolist() for c in covs],
    "vector_keep": vec(tangent(covs[0], g), True),
    "vector_drop": vec(tangent(covs[0], g), False),
}
with open("estimators.json", "w") as f:
    json.dump(out, f)
