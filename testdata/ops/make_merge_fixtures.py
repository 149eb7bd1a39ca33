#!/usr/bin/python3
"""Reference values for the merge ops of model/graphnet/internal/ops (Reshape,
Concat, Product), from PyTorch, in the file format of make_fixtures.py.

Run with Debian's python3 (python3-torch, python3-numpy):
    /usr/bin/python3 testdata/ops/make_merge_fixtures.py
It rewrites testdata/ops/{reshape,concat,product}.*.npy. Every case is one of
PyTorch's general operators, not skein's code:
  reshape: X.reshape(B, -1) of a (B, C, p) tensor
  concat:  torch.cat([A, B, C], dim=1) of three matrices with B rows
  product: A * B (element-wise, same shapes)
"""
import os
import sys

import torch

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import make_fixtures as base  # noqa: E402  (case, randn and the float64 default)


def main():
    base.gen.manual_seed(20261202)
    randn = base.randn
    base.case("reshape", lambda x: x.reshape(x.shape[0], -1), {"x": randn(3, 2, 4)}, ["x"])
    base.case("concat", lambda a, b, c: torch.cat([a, b, c], dim=1),
              {"a": randn(3, 2), "b": randn(3, 4), "c": randn(3, 1)}, ["a", "b", "c"])
    base.case("product", lambda a, b: a * b, {"a": randn(3, 5), "b": randn(3, 5)}, ["a", "b"])


if __name__ == "__main__":
    main()
