#!/usr/bin/python3
"""Make the reference values of eval's tests of AUCWithinFolds.

Run with Debian's Python, which has numpy and scikit-learn:

    /usr/bin/python3 testdata/eval/make_auc_within.py

It writes auc_within.json beside itself. The rows are invented (no real
data): participants with a class and class probabilities drawn from numpy's
generator with a fixed seed, rounded to one decimal so that ties occur, in
folds that are not stratified on the class (one fold holds a single class).

Every AUC comes from scikit-learn's roc_auc_score (1.2). The AUC within
folds is formed from it by the formula of AUCWithinFolds:

    AUC_within = sum_f AUC_f * n_pos_f * n_neg_f / sum_f n_pos_f * n_neg_f,

the sums over the folds f (repeat x fold) that hold both classes, AUC_f =
roc_auc_score of fold f alone and n_pos_f, n_neg_f its positives and
negatives; for K > 2 classes the mean over the classes k of the same
formula for class k against the rest, scored by the probability of k.
"pooled" is roc_auc_score of all rows at once (multi_class="ovr",
average="macro" for K > 2), for contrast.
"""

import json
import os

import numpy as np
from sklearn.metrics import roc_auc_score

rng = np.random.default_rng(7)


def within(rows, k):
    """AUC within folds of rows, each {repeat, fold, observed, p}."""
    classes = [1] if k == 2 else list(range(k))
    per_class = []
    for c in classes:
        num, den = 0.0, 0.0
        for key in sorted({(r["repeat"], r["fold"]) for r in rows}):
            fr = [r for r in rows if (r["repeat"], r["fold"]) == key]
            pos = np.array([r["observed"] == c for r in fr])
            score = np.array([r["p"][c] for r in fr])
            n_pos, n_neg = int(pos.sum()), int((~pos).sum())
            if n_pos == 0 or n_neg == 0:
                continue
            num += roc_auc_score(pos, score) * n_pos * n_neg
            den += n_pos * n_neg
        per_class.append(num / den)
    return float(np.mean(per_class))


def pooled(rows, k):
    y = [r["observed"] for r in rows]
    p = np.array([r["p"] for r in rows])
    if k == 2:
        return float(roc_auc_score(y, p[:, 1]))
    return float(roc_auc_score(y, p, multi_class="ovr", average="macro"))


def make(k, n, folds, repeats, shift):
    rows = []
    for r in range(repeats):
        y = rng.integers(0, k, n)
        order = rng.permutation(n)
        for f in range(folds):
            for i in order[f::folds]:
                logits = rng.standard_normal(k)
                logits[y[i]] += shift
                p = np.exp(logits) / np.exp(logits).sum()
                p = np.round(p, 1)
                p[-1] = round(1 - p[:-1].sum(), 10)
                rows.append({"id": "sub-%02d" % (i + 1), "repeat": r, "fold": f,
                             "observed": int(y[i]), "p": [float(v) for v in p]})
    return rows


binary = make(2, 30, 3, 2, 1.0)
# One fold of a single class: its pairs are none, so it adds nothing.
binary += [{"id": "sub-%02d" % (31 + j), "repeat": 2, "fold": 0, "observed": 1, "p": [0.3, 0.7]} for j in range(3)]
three = make(3, 36, 3, 2, 1.0)
single = make(2, 25, 1, 1, 0.6)
out = {}
for name, rows, k in [("binary", binary, 2), ("three_classes", three, 3), ("single_fold", single, 2)]:
    out[name] = {"classes": k, "rows": rows, "auc_within": within(rows, k), "pooled_auc": pooled(rows, k)}
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "auc_within.json"), "w") as f:
    json.dump(out, f, indent=1)
    f.write("\n")
for name, v in out.items():
    print(name, len(v["rows"]), "rows: auc within folds", v["auc_within"], "pooled", v["pooled_auc"])
