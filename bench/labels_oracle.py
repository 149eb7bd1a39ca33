"""In-sample ROC AUC of each planted label's signal on a cohort of bench/labels.sh.

The signal of a label is d = sum over its planted functional edges (planted.tsv)
of sign * atanh(r), as package data/synth draws the label from it (standardizing
d, which leaves its AUC unchanged). Its population AUC is the oracle the
generator was asked for; this prints the AUC of d on the cohort as generated,
the best a classifier could reach on these participants.

usage: /usr/bin/python3 bench/labels_oracle.py COHORT_DIR   (numpy, scikit-learn)
"""
import csv
import sys

import numpy as np
from sklearn.metrics import roc_auc_score

cohort = sys.argv[1]
regions = [l.strip() for l in open(f"{cohort}/regions.txt") if l.strip()]
index = {r: i for i, r in enumerate(regions)}
rows = list(csv.DictReader(open(f"{cohort}/participants.tsv"), delimiter="\t"))
planted = list(csv.DictReader(open(f"{cohort}/planted.tsv"), delimiter="\t"))
z = np.stack([
    np.arctanh(np.clip(np.loadtxt(f"{cohort}/fc/{r['participant_id']}_fc.tsv"), -1 + 1e-7, 1 - 1e-7))
    for r in rows
])
labels = [c for c in rows[0] if c in {e["target"] for e in planted} and rows[0][c] in ("control", "patient")]
for label in labels:
    d = np.zeros(len(rows))
    for e in planted:
        if e["target"] == label:
            sign = 1 if e["sign"] == "+" else -1
            d += sign * z[:, index[e["region_1"]], index[e["region_2"]]]
    y = np.array([r[label] == "patient" for r in rows])
    print(f"{label}: AUC of the planted signal on this cohort {roc_auc_score(y, d):.3f}")
