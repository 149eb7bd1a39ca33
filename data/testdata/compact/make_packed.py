#!/usr/bin/python3
"""Write packed.json, the fixture of data.Pack and data.Unpack (compact_test.go).

A 5 x 5 symmetric matrix of values not representable in float32, and its packed
form made by NumPy: the upper triangle in numpy.triu_indices(5, 1) order (row
by row) then the diagonal, each cast to float32 (round to nearest even), and
written as the float64 of that float32 so the Go test can compare exactly.
"""
import json

import numpy as np

rng = np.random.default_rng(19)
a = rng.standard_normal((5, 5)) / 3
m = (a + a.T) / 2
np.fill_diagonal(m, [1 / 3, 0.1, -2 / 7, 1e-9, 12345.678901])
packed = np.concatenate([m[np.triu_indices(5, 1)], np.diag(m)]).astype(np.float32)
with open("packed.json", "w") as f:
    json.dump({"matrix": m.tolist(), "packed": [float(v) for v in packed]}, f, indent=1)
