#!/usr/bin/python3
"""Reference values for the ops of model/graphnet/internal/ops, from PyTorch.

Run with Debian's python3 (python3-torch, python3-numpy):
    /usr/bin/python3 testdata/ops/make_fixtures.py
It rewrites testdata/ops/*.npy. Every case is built from PyTorch's general
operators, not from skein's code:
  e2e:   conv2d with a (1 x p) kernel (row term, with the bias) plus conv2d
         with a (p x 1) kernel (column term), summed with broadcasting
  e2e_leaky: leaky_relu (slope 0.2) of e2e
  e2n:   conv2d with a (1 x p) kernel
  leaky: torch.nn.functional.leaky_relu
  gconv: torch.bmm(S, H) @ W
  dense: X.reshape(B, -1) @ W + b
  swap:  X.transpose(1, 2)
For each case <name> the files are <name>.<input>.npy (inputs, float64),
<name>.out.npy (forward output), <name>.r.npy (fixed random weights r of the
scalar L = sum(out * r)) and <name>.d<input>.npy (dL/d<input> by autograd).
Inputs are not symmetric.
"""
import os

import numpy as np
import torch
import torch.nn.functional as F

HERE = os.path.dirname(os.path.abspath(__file__))
torch.set_default_dtype(torch.float64)
gen = torch.Generator().manual_seed(20261201)


def randn(*shape):
    return torch.randn(*shape, generator=gen, dtype=torch.float64)


def e2e(x, wr, wc, b):
    O, C, p = wr.shape
    rows = F.conv2d(x, wr.reshape(O, C, 1, p), b)  # (B, O, p, 1)
    cols = F.conv2d(x, wc.reshape(O, C, p, 1))  # (B, O, 1, p)
    return rows + cols


def e2n(x, w, b):
    O, C, p = w.shape
    return F.conv2d(x, w.reshape(O, C, 1, p), b).squeeze(3)


def gconv(s, h, w):
    return torch.bmm(s, h) @ w


def dense(x, w, b):
    return x.reshape(x.shape[0], -1) @ w + b


def case(name, fn, inputs, grad_of):
    ts = {k: v.clone().requires_grad_(k in grad_of) for k, v in inputs.items()}
    out = fn(*ts.values())
    r = randn(*out.shape)
    (out * r).sum().backward()
    save = {k: v.detach() for k, v in ts.items()}
    save["out"] = out.detach()
    save["r"] = r
    for k in grad_of:
        save["d" + k] = ts[k].grad
    for k, v in save.items():
        np.save(os.path.join(HERE, f"{name}.{k}.npy"), v.numpy().astype(np.float64))


def main():
    # B, C, O, p
    for name, (B, C, O, p) in {"e2e_c3": (2, 3, 4, 6), "e2e_c1": (3, 1, 2, 5)}.items():
        case(name, e2e, {"x": randn(B, C, p, p), "wr": randn(O, C, p), "wc": randn(O, C, p), "b": randn(O)},
             ["x", "wr", "wc", "b"])
    for name, (B, C, O, p) in {"e2n_c3": (2, 3, 4, 6), "e2n_c1": (3, 1, 2, 5)}.items():
        case(name, e2n, {"x": randn(B, C, p, p), "w": randn(O, C, p), "b": randn(O)}, ["x", "w", "b"])
    case("leaky", lambda x: F.leaky_relu(x, 0.2), {"x": randn(2, 3, 4, 5)}, ["x"])
    # B, p, F, G: G < F and G > F take the two orders of the products
    for name, (B, p, Fi, G) in {"gconv_narrow": (2, 5, 4, 2), "gconv_wide": (3, 4, 2, 5)}.items():
        case(name, gconv, {"s": randn(B, p, p), "h": randn(B, p, Fi), "w": randn(Fi, G)}, ["h", "w"])
    B, C, O, p = 2, 2, 3, 5
    case("e2e_leaky", lambda *a: F.leaky_relu(e2e(*a), 0.2),
         {"x": randn(B, C, p, p), "wr": randn(O, C, p), "wc": randn(O, C, p), "b": randn(O)}, ["x", "wr", "wc", "b"])
    case("swap", lambda x: x.transpose(1, 2), {"x": randn(2, 3, 5)}, ["x"])
    case("dense", dense, {"x": randn(3, 2, 5), "w": randn(10, 4), "b": randn(4)}, ["x", "w", "b"])


if __name__ == "__main__":
    main()
