#!/usr/bin/python3
"""Writes the CIFTI-2 fixtures of data/cifti_test.go with Debian's
python3-nibabel, and beside each the array as nibabel reads it back
(<name>.json: shape, C-order data, parcel names).

    cd data/testdata/formats && /usr/bin/python3 gen_cifti.py
"""
import json

import nibabel as nib
import numpy as np
from nibabel import cifti2

rng = np.random.default_rng(17)
names = ["L_visual", "L_motor", "R_visual", "R_motor"]
p = len(names)

# A parcels axis: each parcel one surface vertex of a tiny made-up surface.
parcels = cifti2.ParcelsAxis(
    name=names,
    voxels=[np.zeros((0, 3), dtype=int)] * p,
    vertices=[{"CIFTI_STRUCTURE_CORTEX_LEFT": np.array([k])} for k in range(p)],
    nvertices={"CIFTI_STRUCTURE_CORTEX_LEFT": 10},
)


def save(img, stem):
    img.to_filename(stem)
    back = nib.load(stem)
    data = np.asanyarray(back.dataobj, dtype=float)
    with open(stem.split(".")[0] + ".json", "w") as f:
        json.dump({"shape": list(data.shape), "data": data.ravel(order="C").tolist(), "names": names}, f)


# p × p connectivity, asymmetric on purpose so that the test sees the order.
conn = rng.standard_normal((p, p)).astype(np.float32)
save(cifti2.Cifti2Image(conn, header=(parcels, parcels)), "conn.pconn.nii")

# A symmetric matrix with a unit diagonal, for a cohort of .pconn.nii files.
b = rng.standard_normal((p, 2 * p))
c = np.corrcoef(b)
save(cifti2.Cifti2Image(c, header=(parcels, parcels)), "sym.pconn.nii")

# T × p series, T = 7, float64.
T = 7
series = cifti2.SeriesAxis(start=0.0, step=0.8, size=T)
ts = rng.standard_normal((T, p))
save(cifti2.Cifti2Image(ts, header=(series, parcels)), "series.ptseries.nii")

# A dense series (brain models, no parcels map) under a .ptseries.nii name:
# a bad input, the loader must say it has no parcels map.
models = cifti2.BrainModelAxis.from_mask(np.ones(3, dtype=bool), name="CIFTI_STRUCTURE_CORTEX_LEFT")
cifti2.Cifti2Image(rng.standard_normal((T, 3)), header=(series, models)).to_filename("dense.ptseries.nii")
