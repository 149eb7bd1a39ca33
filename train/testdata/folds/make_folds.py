#!/usr/bin/python3
"""Writes stratified.json: two invented cohorts of class labels (one with
families) and, as an outside check of train.Folds with Classes, the
per-fold class counts of scikit-learn's StratifiedKFold and
StratifiedGroupKFold on them. Run with /usr/bin/python3 (Debian's
python3-sklearn, 1.2.1 when written) from this folder.

Fold membership differs between skein and scikit-learn; the counts are
what is compared: StratifiedKFold gives each class c floor(n_c/K) or
ceil(n_c/K) participants per fold, and so must skein. A missing label
(-1) is a class of its own to both."""
import json

import numpy as np
from sklearn.model_selection import StratifiedGroupKFold, StratifiedKFold

K = 5
rng = np.random.default_rng(21)

# 53 participants: 30 of class 0, 15 of class 1, 5 of class 2, 3 missing.
plain = np.array([0] * 30 + [1] * 15 + [2] * 5 + [-1] * 3)
rng.shuffle(plain)

# 40 families of 1 to 3 participants; siblings share a class more often
# than not.
grouped, families = [], []
for f in range(40):
    size = int(rng.integers(1, 4))
    c = int(rng.choice([0, 1, 2], p=[0.6, 0.3, 0.1]))
    for _ in range(size):
        grouped.append(c if rng.random() < 0.8 else int(rng.choice([0, 1, 2])))
        families.append("fam%02d" % f)
grouped = np.array(grouped)
families = np.array(families)


def counts(y, splits):
    splits = list(splits)
    classes = sorted(set(y.tolist()))
    return {str(c): [int(np.sum(y[test] == c)) for _, test in splits] for c in classes}


skf = StratifiedKFold(n_splits=K, shuffle=True, random_state=0)
sgkf = StratifiedGroupKFold(n_splits=K, shuffle=True, random_state=0)
out = {
    "k": K,
    "plain": plain.tolist(),
    "plain_sklearn_counts": counts(plain, skf.split(np.zeros(len(plain)), plain)),
    "grouped": grouped.tolist(),
    "families": families.tolist(),
    "grouped_sklearn_counts": counts(grouped, sgkf.split(np.zeros(len(grouped)), grouped, families)),
}
with open("stratified.json", "w") as f:
    json.dump(out, f, indent=1)
    f.write("\n")
