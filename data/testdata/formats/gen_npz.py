#!/usr/bin/python3
"""Writes the NumPy .npz fixtures of data/npz_test.go with Debian's
python3-numpy, and beside them npz.json, each array as numpy sees it
(shape, C-order data; ids as strings).

    cd data/testdata/formats && /usr/bin/python3 gen_npz.py
"""
import json

import numpy as np

rng = np.random.default_rng(29)
p, n = 4, 3
conn = rng.standard_normal((p, p))
a = rng.standard_normal((n, p, p))
stack = ((a + a.transpose(0, 2, 1)) / 2).astype(np.float32)
ids = np.array(["sub-01", "sub-02", "sub-03"])  # dtype '<U6'
fortran = np.asfortranarray(rng.standard_normal((p, p)))

np.savez("arrays.npz", conn=conn, fortran=fortran)
np.savez_compressed("stack.npz", fc=stack, ids=ids, numbers=np.array([101, 102, 103]))
# An object array (pickled): the reader must refuse it, never unpickle it.
np.savez("object.npz", conn=np.array([conn, "x"], dtype=object))

with open("npz.json", "w") as f:
    json.dump({
        "conn": {"shape": list(conn.shape), "data": conn.ravel().tolist()},
        "fortran": {"shape": list(fortran.shape), "data": np.ascontiguousarray(fortran).ravel().tolist()},
        "fc": {"shape": list(stack.shape), "data": stack.astype(float).ravel().tolist()},
        "ids": ids.tolist(),
    }, f)
