#!/usr/bin/python3
"""Make the reference values of eval's tests of the class-label summaries.

Run with Debian's Python, which has numpy, scipy and scikit-learn:

    /usr/bin/python3 testdata/eval/make_labels.py

It writes labels.json beside itself. The cohort is invented (a fictional
cohort of 12 participants, no real data): a binary label, 2 repeats of
2-fold cross-validation, and two models, "net" (probabilities drawn from
numpy's generator with a fixed seed, shifted towards the true class) and
"constant" (0.3 for class 1 for everyone, a majority-class predictor).

Every number comes from scikit-learn 1.2 (sklearn.metrics), numpy 1.24 or
scipy 1.10, as each key says:
  - pooled: each metric over all rows of a model (all repeats together);
    auc_within, the AUC within folds, is formed from roc_auc_score of each
    repeat x fold and its pairs, sum_f AUC_f n_pos_f n_neg_f / sum_f
    n_pos_f n_neg_f (eval.AUCWithinFolds);
  - folds: AUC of each repeat x fold; fold_mean and fold_sd (ddof = 1);
  - ttest: the corrected resampled t-test (Nadeau & Bengio 2003) of the
    fold AUC of net minus constant, t = mean / sqrt((1/J + n_test/n_train)
    * var), p = 2 * scipy.stats.t.sf(|t|, J - 1).
The predicted class is 1 when p1 >= 0.5 (skein's threshold rule).
"""

import json
import os

import numpy as np
import scipy.stats
from sklearn.metrics import (accuracy_score, balanced_accuracy_score, brier_score_loss, log_loss,
                             recall_score, roc_auc_score)

rng = np.random.default_rng(21)
n = 12
y = np.array([0, 1, 0, 1, 0, 0, 1, 1, 0, 1, 0, 1])
# folds[r] maps participant -> fold in repeat r; both classes in every fold.
folds = [np.array([0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 1, 1]),
         np.array([0, 1, 1, 0, 0, 1, 1, 0, 1, 0, 0, 1])]
rows = []
for r in range(2):
    for f in range(2):
        for i in range(n):
            if folds[r][i] != f:
                continue
            p1 = float(np.clip(0.5 + 0.25 * (2 * y[i] - 1) + 0.3 * rng.standard_normal(), 0.02, 0.98))
            rows.append({"id": "sub-%02d" % (i + 1), "model": "net", "repeat": r, "fold": f,
                         "observed": int(y[i]), "p1": p1})
            rows.append({"id": "sub-%02d" % (i + 1), "model": "constant", "repeat": r, "fold": f,
                         "observed": int(y[i]), "p1": 0.3})


def metrics(obs, p1):
    obs, p1 = np.array(obs), np.array(p1)
    pred = (p1 >= 0.5).astype(int)
    proba = np.column_stack([1 - p1, p1])
    return {
        "auc": roc_auc_score(obs, p1),
        "balanced_accuracy": balanced_accuracy_score(obs, pred),
        "accuracy": accuracy_score(obs, pred),
        "log_loss": log_loss(obs, proba, eps=1e-15, labels=[0, 1]),
        "brier": brier_score_loss(obs, p1),
        "sensitivity": recall_score(obs, pred, pos_label=1),
        "specificity": recall_score(obs, pred, pos_label=0),
    }


out = {"rows": rows, "pooled": {}, "fold_auc": {}, "fold_mean_auc": {}, "fold_sd_auc": {}}
for m in ["net", "constant"]:
    mr = [r for r in rows if r["model"] == m]
    out["pooled"][m] = metrics([r["observed"] for r in mr], [r["p1"] for r in mr])
    aucs, pairs = [], []
    for r in range(2):
        for f in range(2):
            fr = [x for x in mr if x["repeat"] == r and x["fold"] == f]
            aucs.append(roc_auc_score([x["observed"] for x in fr], [x["p1"] for x in fr]))
            n_pos = sum(x["observed"] for x in fr)
            pairs.append(n_pos * (len(fr) - n_pos))
    out["pooled"][m]["auc_within"] = float(np.dot(aucs, pairs) / np.sum(pairs))
    out["fold_auc"][m] = aucs
    out["fold_mean_auc"][m] = float(np.mean(aucs))
    out["fold_sd_auc"][m] = float(np.std(aucs, ddof=1))
d = np.array(out["fold_auc"]["net"]) - np.array(out["fold_auc"]["constant"])
J, n_train, n_test = len(d), 6.0, 6.0
t = d.mean() / np.sqrt((1 / J + n_test / n_train) * d.var(ddof=1))
out["ttest"] = {"mean_diff": float(d.mean()), "t": float(t), "p": float(2 * scipy.stats.t.sf(abs(t), J - 1)),
                "n_train": n_train, "n_test": n_test}
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "labels.json"), "w") as fh:
    json.dump(out, fh, indent=1)
