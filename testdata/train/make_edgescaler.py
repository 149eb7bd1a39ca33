"""Fixture for train.EdgeScaler: per-edge standardization of symmetric
matrices with scikit-learn's StandardScaler (population SD, ddof=0; a
constant feature gets scale 1), fitted on the upper-triangle edge vectors
(i < j, row-major) of the training matrices and applied to the test ones.
Edge (0, 3) of the functional matrices is constant over the training
participants. The reference is the transform of an all-zero matrix.

Run with Debian's scikit-learn: /usr/bin/python3 make_edgescaler.py > edgescaler.json
"""
import json
import numpy as np
from sklearn.preprocessing import StandardScaler

rng = np.random.default_rng(20261202)
p, n_train, n_test = 4, 7, 3
iu = np.triu_indices(p, 1)


def matrices(n, scale, shift):
    out = []
    for _ in range(n):
        m = np.zeros((p, p))
        m[iu] = rng.normal(shift, scale, len(iu[0]))
        m = m + m.T
        np.fill_diagonal(m, rng.uniform(0, 1, p))  # a diagonal the step sets to 0
        out.append(m)
    return out


fc_train, fc_test = matrices(n_train, 0.3, 0.1), matrices(n_test, 0.3, 0.1)
for m in fc_train:
    m[0, 3] = m[3, 0] = 0.25
sc_train, sc_test = matrices(n_train, 2.0, 5.0), matrices(n_test, 2.0, 5.0)

out = {"p": p}
for name, train, test in [("functional", fc_train, fc_test), ("structural", sc_train, sc_test)]:
    s = StandardScaler().fit(np.array([m[iu] for m in train]))
    z = s.transform(np.array([m[iu] for m in test]))
    ref = s.transform(np.zeros((1, len(iu[0]))))[0]
    out[name] = {
        "train": [m.tolist() for m in train],
        "test": [m.tolist() for m in test],
        "mean": s.mean_.tolist(),
        "sd": s.scale_.tolist(),
        "test_edges": z.tolist(),
        "reference_edges": ref.tolist(),
    }
print(json.dumps(out, indent=1))
