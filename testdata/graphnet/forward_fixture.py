#!/usr/bin/python3
"""Writes forward.json: the predictions of a two-branch graph-filter network
computed from the published layer formulas with NumPy, for random weights.

Run with Debian's python3-numpy: /usr/bin/python3 forward_fixture.py

The network (p = 5 regions, T = 2 targets, leaky ReLU slope 0.2 after every
layer but the output):
  branch 0, input F:             e2e 2 -> e2n 3 -> n2g 4
  branch 1, input S F S^T:       e2n 2 -> graph_conv 3 -> n2g 4
            S = renormalized adjacency D~^-1/2 (A + I) D~^-1/2 of the
            structural matrix A (Kipf & Welling 2017), D~ the degrees of A + I
  concat -> dense 5 -> output 2
e2e and e2n follow Kawahara et al. (2017):
  e2e: H[o,i,j] = sum_c sum_k (Wr[o,c,k] X[c,i,k] + Wc[o,c,k] X[c,k,j]) + b[o]
  e2n: N[o,i]   = sum_c sum_k W[o,c,k] X[c,i,k] + b[o]
graph_conv: S H W with H the p x F node features (after e2n: N transposed).
Dense layers: y = x W + b with x flattened in C order.
Weights use the array names and shapes of the saved-model format.
"""
import json

import numpy as np

rng = np.random.default_rng(20261201)
P, T, N = 5, 2, 3


def leaky(x):
    return np.where(x > 0, x, 0.2 * x)


def sym(a):
    return np.triu(a, 1) + np.triu(a, 1).T


weights = {
    "branch0.layer0.row": rng.normal(size=(2, 1, P)) * 0.5,
    "branch0.layer0.col": rng.normal(size=(2, 1, P)) * 0.5,
    "branch0.layer0.bias": rng.normal(size=(2,)) * 0.1,
    "branch0.layer1.weight": rng.normal(size=(3, 2, P)) * 0.5,
    "branch0.layer1.bias": rng.normal(size=(3,)) * 0.1,
    "branch0.layer2.weight": rng.normal(size=(3 * P, 4)) * 0.5,
    "branch0.layer2.bias": rng.normal(size=(4,)) * 0.1,
    "branch1.layer0.weight": rng.normal(size=(2, 1, P)) * 0.5,
    "branch1.layer0.bias": rng.normal(size=(2,)) * 0.1,
    "branch1.layer1.weight": rng.normal(size=(2, 3)) * 0.5,
    "branch1.layer2.weight": rng.normal(size=(P * 3, 4)) * 0.5,
    "branch1.layer2.bias": rng.normal(size=(4,)) * 0.1,
    "head0.weight": rng.normal(size=(8, 5)) * 0.5,
    "head0.bias": rng.normal(size=(5,)) * 0.1,
    "output.weight": rng.normal(size=(5, T)) * 0.5,
    "output.bias": rng.normal(size=(T,)) * 0.1,
}
w = weights


def e2e(x, wr, wc, b):
    rows = np.einsum("ock,cik->oi", wr, x)
    cols = np.einsum("ock,ckj->oj", wc, x)
    return rows[:, :, None] + cols[:, None, :] + b[:, None, None]


def e2n(x, wt, b):
    return np.einsum("ock,cik->oi", wt, x) + b[:, None]


participants = []
for _ in range(N):
    f = sym(rng.normal(size=(P, P)))
    a = sym(rng.uniform(size=(P, P)))
    at = a + np.eye(P)
    dinv = 1 / np.sqrt(at.sum(axis=1))
    s = dinv[:, None] * at * dinv[None, :]

    x0 = f[None]
    h = leaky(e2e(x0, w["branch0.layer0.row"], w["branch0.layer0.col"], w["branch0.layer0.bias"]))
    h = leaky(e2n(h, w["branch0.layer1.weight"], w["branch0.layer1.bias"]))
    out0 = leaky(h.reshape(-1) @ w["branch0.layer2.weight"] + w["branch0.layer2.bias"])

    x1 = (s @ f @ s.T)[None]
    h = leaky(e2n(x1, w["branch1.layer0.weight"], w["branch1.layer0.bias"]))
    h = leaky(s @ h.T @ w["branch1.layer1.weight"])
    out1 = leaky(h.reshape(-1) @ w["branch1.layer2.weight"] + w["branch1.layer2.bias"])

    z = np.concatenate([out0, out1])
    z = leaky(z @ w["head0.weight"] + w["head0.bias"])
    y = z @ w["output.weight"] + w["output.bias"]
    participants.append(dict(functional=f.tolist(), structural=a.tolist(), prediction=y.tolist()))

with open("forward.json", "w") as fh:
    json.dump(dict(numpy=np.__version__, p=P, targets=T,
                   weights={k: v.reshape(-1).tolist() for k, v in weights.items()},
                   shapes={k: list(v.shape) for k, v in weights.items()},
                   participants=participants), fh, indent=1)
