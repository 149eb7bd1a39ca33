#!/usr/bin/python3
"""Writes the .npy fixtures of testdata/npy with NumPy (Debian's
python3-numpy), for data/npy_test.go.

Run: /usr/bin/python3 testdata/npy/make_npy.py

m2_{f4,f8}_{C,F}_{le,be}.npy  the 3 × 4 array np.arange(12).reshape(3, 4) * 0.25 - 1
m3_{f4,f8}_{C,F}_{le,be}.npy  the 2 × 3 × 4 array np.arange(24).reshape(2, 3, 4) * 0.5 - 3
m2_f8_C_le_v2.npy             the 2-D array in format version 2.0
bad_*.npy                     dtypes and shapes skein refuses
expected_2d.txt, expected_3d.txt  the shape, then the values in C order, as text
(All values are exact in float32.)
"""
import os

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))


def main():
    m2 = np.arange(12).reshape(3, 4) * 0.25 - 1
    m3 = np.arange(24).reshape(2, 3, 4) * 0.5 - 3
    for name, a in (("m2", m2), ("m3", m3)):
        for dt in ("f4", "f8"):
            for order in ("C", "F"):
                for end, bo in (("le", "<"), ("be", ">")):
                    arr = np.array(a, dtype=bo + dt, order=order)
                    assert arr.flags.f_contiguous == (order == "F")
                    np.save(os.path.join(HERE, "%s_%s_%s_%s.npy" % (name, dt, order, end)), arr)
    with open(os.path.join(HERE, "m2_f8_C_le_v2.npy"), "wb") as f:
        np.lib.format.write_array(f, np.asarray(m2, dtype="<f8"), version=(2, 0))
    np.save(os.path.join(HERE, "bad_int32.npy"), np.arange(12, dtype="<i4").reshape(3, 4))
    np.save(os.path.join(HERE, "bad_float16.npy"), m2.astype("<f2"))
    np.save(os.path.join(HERE, "bad_complex.npy"), m2.astype("<c16"))
    np.save(os.path.join(HERE, "bad_1d.npy"), np.arange(4, dtype="<f8"))
    np.save(os.path.join(HERE, "bad_4d.npy"), np.zeros((1, 2, 2, 2)))
    for name, a in (("expected_2d.txt", m2), ("expected_3d.txt", m3)):
        with open(os.path.join(HERE, name), "w") as f:
            f.write(" ".join(str(d) for d in a.shape) + "\n")
            f.write("\n".join(repr(float(v)) for v in a.ravel(order="C")) + "\n")


if __name__ == "__main__":
    main()
