#!/usr/bin/python3
"""Reference values for the per-edge dense op of model/graphnet/internal/ops
(EdgeDense), from PyTorch, in the file format of make_fixtures.py.

Run with Debian's python3 (python3-torch, python3-numpy):
    /usr/bin/python3 testdata/ops/make_edge_fixtures.py
It rewrites testdata/ops/edge_c*.*.npy. The op is PyTorch's general
torch.nn.Conv2d with a 1 x 1 kernel (weight (O, C, 1, 1), bias (O)), run
with w and b by torch.nn.utils.stateless.functional_call, not skein's
code: Y[n,o,i,j] = sum_c W[o,c] X[n,c,i,j] + b[o].
"""
import os
import sys

import torch
from torch.nn.utils import stateless

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import make_fixtures as base  # noqa: E402  (case, randn and the float64 default)


def edge(x, w, b):
    O, C = w.shape
    conv = torch.nn.Conv2d(C, O, kernel_size=1, dtype=torch.float64)
    # The module runs with w and b in place of its own parameters, so that
    # autograd gives the gradients with respect to them.
    return stateless.functional_call(conv, {"weight": w.reshape(O, C, 1, 1), "bias": b}, (x,))


def main():
    base.gen.manual_seed(20261203)
    randn = base.randn
    for name, (B, C, O, p) in {"edge_c2": (3, 2, 4, 5), "edge_c1": (2, 1, 3, 4)}.items():
        base.case(name, edge, {"x": randn(B, C, p, p), "w": randn(O, C), "b": randn(O)}, ["x", "w", "b"])


if __name__ == "__main__":
    main()
