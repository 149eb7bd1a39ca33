#!/usr/bin/python3
"""Writes the MATLAB fixtures of data/mat_test.go: level 5 MAT-files by
scipy.io.savemat (Debian's python3-scipy), uncompressed and compressed,
and a v7.3 file in MATLAB's layout by h5py (python3-h5py): an HDF5 file
with a 512-byte user block holding the MAT header text, each variable a
dataset with a MATLAB_class attribute, stored transposed (MATLAB is
column-major, HDF5 row-major). Beside them, <name>.json holds each
variable as numpy sees it (shape, C-order data).

    cd data/testdata/formats && /usr/bin/python3 gen_mat.py
"""
import json
import struct

import h5py
import numpy as np
import scipy.io

rng = np.random.default_rng(23)
p, T, n = 4, 6, 3
conn = rng.standard_normal((p, p))            # double, asymmetric: shows the order
series = rng.standard_normal((T, p)).astype(np.float32)  # single
stack = rng.standard_normal((n, p, p))        # n × p × p double
b = rng.standard_normal((n, p, 2 * p))
fcstack = np.stack([np.corrcoef(x) for x in b])  # symmetric, for a cohort's stack
counts = rng.integers(-300, 300, (p, p)).astype(np.int16)
variables = {"conn": conn, "series": series, "stack": stack, "counts": counts, "fcstack": fcstack}
# Chunked v7.3 variables (drawn after the others, which keep their values):
# a 5 × 7 × 7 double stack and a 9 × 5 single array, both with chunks
# that do not divide the dimensions, so the last chunk along each axis
# runs past the data.
bigstack = rng.standard_normal((5, 7, 7))
bigseries = rng.standard_normal((9, 5)).astype(np.float32)
chunked = {"bigstack": bigstack, "bigseries": bigseries}
other = {"label": "made-up cohort", "cells": np.array([[1.0], "x"], dtype=object)}

scipy.io.savemat("v5.mat", {**variables, **other}, do_compression=False)
scipy.io.savemat("v5z.mat", {**variables, **other}, do_compression=True)

with open("mat.json", "w") as f:
    json.dump({k: {"shape": list(v.shape), "data": v.astype(float).ravel(order="C").tolist()} for k, v in variables.items()}, f)

# v7.3: MATLAB writes a 512-byte user block starting with the 116-byte
# header text, then subsystem offset, version 0x0200 and "IM".
with h5py.File("v73.mat", "w", userblock_size=512) as h:
    for k, v in variables.items():
        d = h.create_dataset(k, data=v.T)  # transposed, as MATLAB stores it
        d.attrs["MATLAB_class"] = np.bytes_({"float64": "double", "float32": "single", "int16": "int16"}[str(v.dtype)])
    # Chunked variables with a version 1 B-tree chunk index (MATLAB's
    # choice for large or compressed ones): gzip after shuffle, chunks of
    # 2 × 3 × 4 over HDF5's 7 × 7 × 5; uncompressed, chunks of 2 × 4 over
    # 5 × 9; gzip with a Fletcher-32 checksum, chunks of 3 × 3 over 4 × 4.
    z = h.create_dataset("bigstack", data=bigstack.T, chunks=(2, 3, 4), compression="gzip", shuffle=True)
    z.attrs["MATLAB_class"] = np.bytes_("double")
    z = h.create_dataset("bigseries", data=bigseries.T, chunks=(2, 4))
    z.attrs["MATLAB_class"] = np.bytes_("single")
    z = h.create_dataset("checked", data=conn.T, chunks=(3, 3), compression="gzip", fletcher32=True)
    z.attrs["MATLAB_class"] = np.bytes_("double")
    # What skein refuses: a filter it does not know (LZF, which h5py
    # ships as filter 32000), a char array (uint16 with class "char") and
    # a struct (a group).
    z = h.create_dataset("lzf", data=conn.T, chunks=(2, 2), compression="lzf")
    z.attrs["MATLAB_class"] = np.bytes_("double")
    c = h.create_dataset("label", data=np.frombuffer("made up".encode("utf-16-le"), dtype=np.uint16).reshape(-1, 1))
    c.attrs["MATLAB_class"] = np.bytes_("char")
    g = h.create_group("info")
    g.attrs["MATLAB_class"] = np.bytes_("struct")
text = b"MATLAB 7.3 MAT-file, Platform: GLNXA64, Created on: Mon Jan  5 10:00:00 2026 HDF5 schema 1.00 ."
header = text.ljust(116, b" ") + b"\x00" * 8 + b"\x00\x02" + b"IM"
with open("v73.mat", "r+b") as f:
    f.write(header.ljust(512, b"\x00"))

# The chunked variables as h5py reads them back from v73.mat, transposed
# to MATLAB's order.
with h5py.File("v73.mat", "r") as h, open("mat73.json", "w") as f:
    back = {k: h[k][()].T for k in chunked}
    assert all(np.array_equal(back[k], v) for k, v in chunked.items())
    back["checked"] = h["checked"][()].T
    out = {k: {"shape": list(v.shape), "data": v.astype(float).ravel(order="C").tolist()} for k, v in back.items()}
    # Where the first chunk of bigstack is listed: the file byte of its
    # B-tree key (chunk size, filter mask, 4 zero offsets, then the chunk's
    # address), for the tests that damage it.
    info = h["bigstack"].id.get_chunk_info(0)
    key = struct.pack("<II", info.size, info.filter_mask) + bytes(32) + struct.pack("<Q", info.byte_offset)
    raw = open("v73.mat", "rb").read()
    assert raw.count(key) == 1
    out["bigstack_chunk0"] = {"key": raw.index(key), "size": info.size}
    json.dump(out, f)
