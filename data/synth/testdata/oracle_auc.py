#!/usr/bin/python3
"""Writes oracle_auc.json: the population ROC AUC of d for a label of the
liability-threshold model (synth.Label), by scipy's multivariate normal
CDF, as an outside check of synth.LabelOracleAUC. Run with /usr/bin/python3
(Debian's python3-scipy) from this folder.

With (d, L) standard bivariate normal of correlation rho and patients
those with L > t, t = Phi^-1(1 - prevalence), two independent people a and
b give AUC = P(d_a > d_b | L_a > t, L_b < t)
          = P(d_a - d_b > 0, L_a > t, L_b < t) / (prevalence (1 - prevalence)).
With X = d_b - d_a (variance 2), Y = -L_a, Z = L_b that is
P(X < 0, Y < -t, Z < t): cov(X, Y) = rho, cov(X, Z) = rho, cov(Y, Z) = 0."""
import json

import numpy as np
from scipy.stats import multivariate_normal, norm

rows = []
for rho in [0.0, 0.2, 0.5, 0.627, 0.8, 0.95]:
    for prevalence in [0.1, 0.3, 0.5]:
        t = norm.ppf(1 - prevalence)
        cov = np.array([[2.0, rho, rho], [rho, 1.0, 0.0], [rho, 0.0, 1.0]])
        p = multivariate_normal.cdf(np.array([0.0, -t, t]), mean=np.zeros(3), cov=cov,
                                    abseps=1e-9, releps=1e-9, maxpts=10_000_000)
        rows.append({"rho": rho, "prevalence": prevalence, "auc": float(p / (prevalence * (1 - prevalence)))})
with open("oracle_auc.json", "w") as f:
    json.dump(rows, f, indent=1)
    f.write("\n")
