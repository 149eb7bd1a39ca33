#!/usr/bin/python3
"""Reference graph operators for data/operator_test.go.

Run with Debian's Python (numpy 1.24, scipy 1.10):
    /usr/bin/python3 make.py
It writes, for one weighted undirected graph on 6 nodes (fixed below,
no isolated node) and one with an isolated node (node 4):
    adjacency*.tsv        the adjacency A
    laplacian*.tsv        scipy.sparse.csgraph.laplacian(A)          (D - A)
    normalized*.tsv       scipy.sparse.csgraph.laplacian(A, normed=True)
                          for the connected graph; for the graph with an
                          isolated node, I - D^-1/2 A D^-1/2 with D^-1/2 = 0
                          at the isolated node, built with numpy
    renormalized*.tsv     D~^-1/2 (A + I) D~^-1/2, D~ the degrees of A + I
    scaled*.tsv           2 Ln / numpy.linalg.eigvalsh(Ln).max() - I
Values are printed with 17 significant digits.
"""
import numpy as np
from scipy.sparse import csgraph

def write(name, m):
    with open(name, "w") as f:
        for row in m:
            f.write("\t".join(f"{v:.17g}" for v in row) + "\n")

def make(a, suffix, use_scipy_normed):
    p = a.shape[0]
    write(f"adjacency{suffix}.tsv", a)
    write(f"laplacian{suffix}.tsv", csgraph.laplacian(a))
    d = a.sum(axis=1)
    inv = np.zeros(p)
    inv[d > 0] = 1 / np.sqrt(d[d > 0])
    ln = np.eye(p) - inv[:, None] * a * inv[None, :]
    if use_scipy_normed:
        ref = csgraph.laplacian(a, normed=True)
        assert np.allclose(ref, ln)
        ln = ref
    write(f"normalized{suffix}.tsv", ln)
    at = a + np.eye(p)
    dt = at.sum(axis=1)
    write(f"renormalized{suffix}.tsv", at / np.sqrt(dt)[:, None] / np.sqrt(dt)[None, :])
    lmax = np.linalg.eigvalsh(ln).max()
    write(f"scaled{suffix}.tsv", 2 * ln / lmax - np.eye(p))

a = np.array([
    [0.0, 2.0, 0.5, 0.0, 0.0, 1.0],
    [2.0, 0.0, 3.0, 0.0, 0.0, 0.0],
    [0.5, 3.0, 0.0, 1.5, 0.0, 0.0],
    [0.0, 0.0, 1.5, 0.0, 4.0, 0.25],
    [0.0, 0.0, 0.0, 4.0, 0.0, 0.75],
    [1.0, 0.0, 0.0, 0.25, 0.75, 0.0],
])
make(a, "", True)

b = a.copy()
b[4, :] = 0
b[:, 4] = 0
make(b, "_isolated", False)
