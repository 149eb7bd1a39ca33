"""Writes numpy_products.json, the fixture of TestNumpyProducts: a few
products C = alpha * op(A) @ op(B) + beta * C0 computed by numpy (Debian's
python3-numpy, float64), with their inputs.

usage: /usr/bin/python3 numpy_products.py > numpy_products.json
"""
import json
import numpy as np

rng = np.random.default_rng(19)
cases = []
for name, m, n, k, ta, tb, alpha, beta in [
    ("NN 7x5x9", 7, 5, 9, False, False, 1.0, 0.0),
    ("TN 13x17x19", 13, 17, 19, True, False, -0.75, 0.5),
    ("NT 20x9x33", 20, 9, 33, False, True, 2.0, 1.0),
    ("TT 6x16x67", 6, 16, 67, True, True, 0.5, -1.25),
]:
    a = rng.standard_normal((k, m) if ta else (m, k))
    b = rng.standard_normal((n, k) if tb else (k, n))
    c0 = rng.standard_normal((m, n))
    opa = a.T if ta else a
    opb = b.T if tb else b
    c = alpha * (opa @ opb) + beta * c0
    cases.append(dict(name=name, m=m, n=n, k=k, transA=ta, transB=tb, alpha=alpha, beta=beta,
                      a=a.ravel().tolist(), b=b.ravel().tolist(), c0=c0.ravel().tolist(), c=c.ravel().tolist()))
json.dump(dict(numpy=np.__version__, cases=cases), __import__("sys").stdout, indent=None)
print()
