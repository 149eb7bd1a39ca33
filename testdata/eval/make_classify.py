#!/usr/bin/python3
"""Make the reference values that eval's classification tests check against.

Run with Debian's Python, which has numpy and scikit-learn:

    /usr/bin/python3 testdata/eval/make_classify.py

It writes classify.json beside itself. Every number in it comes from
scikit-learn 1.2 (sklearn.metrics and sklearn.calibration) or numpy 1.24,
as each key below says. The class probabilities are invented (a fictional
cohort, no real participant's data), drawn from numpy's generator with a
fixed seed.

Where skein has a convention of its own, the script applies it and says so:
  - A metric that is undefined (AUC with a class absent; sensitivity with no
    participant in class 1; specificity with none in class 0) is null
    (NaN in Go). scikit-learn raises for the AUC and returns 0 with a warning
    for the recall; the script catches the first and overrides the second.
  - Rows with a missing label (-1) are left out before calling scikit-learn.
  - The multi-class Brier score (Brier 1950) is not in Debian's
    scikit-learn 1.2: it is computed here in numpy from its formula,
    mean over rows of sum over classes (p_k - [y = k])^2.
  - roc_curve's first threshold is max(score) + 1 in scikit-learn 1.2;
    skein puts +Inf there. The test compares the thresholds after the first.
  - log_loss is called with eps=1e-15 (skein's clipping bound); scikit-learn
    1.2 also renormalises the clipped rows, a change of order 1e-15.
"""

import json
import os
import warnings

import numpy as np
import sklearn
from sklearn.calibration import calibration_curve
from sklearn.metrics import (
    accuracy_score,
    balanced_accuracy_score,
    brier_score_loss,
    confusion_matrix,
    log_loss,
    recall_score,
    roc_auc_score,
    roc_curve,
)

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(21)


def num(x):
    """A float for JSON; NaN and None become null."""
    if x is None:
        return None
    x = float(x)
    return None if np.isnan(x) else x


def nums(xs):
    return [num(x) for x in xs]


def binary_rows(p1):
    p1 = np.asarray(p1, dtype=float)
    return np.c_[1 - p1, p1]


def predicted(proba, threshold):
    """skein's predicted class: class 1 when p1 >= threshold for two
    classes; np.argmax (lowest index on ties) for more."""
    if proba.shape[1] == 2:
        return (proba[:, 1] >= threshold).astype(int)
    return np.argmax(proba, axis=1)


def case(name, labels, proba, threshold=0.5, bins=(5, 10)):
    labels = np.asarray(labels, dtype=int)
    proba = np.asarray(proba, dtype=float)
    k = proba.shape[1]
    keep = labels >= 0
    y, p = labels[keep], proba[keep]
    pred = predicted(p, threshold)
    classes = list(range(k))
    want = {}

    # roc_auc_score: binary on the probability of class 1; one-vs-rest
    # macro for more classes. Undefined (a class absent) raises: null.
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            if k == 2:
                want["auc"] = roc_auc_score(y, p[:, 1])
            else:
                want["auc"] = roc_auc_score(
                    y, p, multi_class="ovr", average="macro", labels=classes
                )
    except ValueError:
        want["auc"] = None
    # roc_auc_score with multi_class="ovr", average="macro" on both columns
    # of a binary case: what OneVsRestAUC gives for K = 2.
    try:
        if k == 2 and len(np.unique(y)) == 2:
            want["ovr_auc"] = np.mean(
                [roc_auc_score(y == c, p[:, c]) for c in classes]
            )
        elif k == 2:
            want["ovr_auc"] = None
        else:
            want["ovr_auc"] = want["auc"]
    except ValueError:
        want["ovr_auc"] = None

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        want["balanced_accuracy"] = balanced_accuracy_score(y, pred)
    want["accuracy"] = accuracy_score(y, pred)
    want["log_loss"] = log_loss(y, p, eps=1e-15, labels=classes)
    if k == 2:
        want["brier"] = brier_score_loss(y, p[:, 1], pos_label=1)
    else:
        # Multi-class Brier score, numpy, from its formula (Brier 1950).
        onehot = np.eye(k)[y]
        want["brier"] = np.mean(np.sum((p - onehot) ** 2, axis=1))
    if k == 2:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            sens = recall_score(y, pred, pos_label=1, labels=classes, zero_division=0)
            spec = recall_score(y, pred, pos_label=0, labels=classes, zero_division=0)
        # skein: NaN when the class is absent (scikit-learn gives 0).
        want["sensitivity"] = sens if np.any(y == 1) else None
        want["specificity"] = spec if np.any(y == 0) else None
    else:
        want["sensitivity"] = None
        want["specificity"] = None
    want["predicted"] = [int(c) for c in predicted(proba, threshold)]
    want["confusion"] = confusion_matrix(y, pred, labels=classes).tolist()

    out = {
        "name": name,
        "labels": labels.tolist(),
        "proba": proba.tolist(),
        "threshold": threshold,
        "want": {key: num(v) if isinstance(v, (float, np.floating)) or v is None else v
                 for key, v in want.items()},
    }

    if k == 2:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            fpr, tpr, thr = roc_curve(y, p[:, 1], pos_label=1, drop_intermediate=False)
        out["roc"] = {"fpr": nums(fpr), "tpr": nums(tpr), "thresholds": nums(thr)}
        out["calibration"] = []
        for b in bins:
            prob_true, prob_pred = calibration_curve(
                y == 1, p[:, 1], n_bins=b, strategy="uniform"
            )
            out["calibration"].append(
                {"bins": b, "observed_rate": nums(prob_true), "mean_predicted": nums(prob_pred)}
            )
    return out


cases = []

# Binary, balanced: 24 participants, probabilities loosely tracking the class.
y = np.array([0, 1] * 12)
rng.shuffle(y)
p1 = np.clip(0.5 + 0.25 * (y - 0.5) + rng.normal(0, 0.2, y.size), 0.01, 0.99)
cases.append(case("binary", y, binary_rows(p1)))
cases.append(case("binary threshold 0.3", y, binary_rows(p1), threshold=0.3))

# Imbalanced: 5 patients among 40.
y = np.zeros(40, dtype=int)
y[rng.choice(40, 5, replace=False)] = 1
p1 = np.clip(0.2 + 0.25 * y + rng.normal(0, 0.2, y.size), 0.001, 0.999)
cases.append(case("imbalanced", y, binary_rows(p1), threshold=0.25))

# Tied scores: probabilities from five values, many ties across classes,
# including values on the calibration bins' inner edges (0.2, 0.6, 0.8).
y = rng.integers(0, 2, 30)
levels = np.array([0.2, 0.35, 0.6, 0.8, 0.95])
p1 = levels[np.clip(y * 2 + rng.integers(0, 3, y.size), 0, 4)]
cases.append(case("tied scores", y, binary_rows(p1), bins=(5, 10, 3)))

# Probabilities of exactly 0 and 1, right and wrong: log loss clipping.
y = np.array([0, 0, 1, 1, 1, 0, 1, 0])
p1 = np.array([0.0, 1.0, 1.0, 0.0, 0.5, 0.25, 0.75, 0.0])
cases.append(case("probabilities 0 and 1", y, binary_rows(p1)))

# Missing labels (-1) are left out.
y = np.array([0, 1, -1, 1, 0, -1, 1, 0, 0, 1])
p1 = np.array([0.3, 0.7, 0.9, 0.4, 0.45, 0.1, 0.8, 0.2, 0.65, 0.55])
cases.append(case("missing labels", y, binary_rows(p1)))

# One class absent from a fold: AUC, sensitivity and ROC tpr undefined.
y = np.zeros(6, dtype=int)
p1 = np.array([0.1, 0.6, 0.3, 0.2, 0.7, 0.4])
cases.append(case("one class absent", y, binary_rows(p1)))

# Three classes, probabilities from a Dirichlet tilted toward the class.
y = np.repeat([0, 1, 2], 9)
rng.shuffle(y)
alpha = np.ones((y.size, 3)) + 1.5 * np.eye(3)[y]
proba = np.array([rng.dirichlet(a) for a in alpha])
cases.append(case("three classes", y, proba))

# Three classes with tied rows and an argmax tie (lowest index wins).
rows = np.array([[0.2, 0.3, 0.5], [0.5, 0.3, 0.2], [0.25, 0.5, 0.25],
                 [0.4, 0.4, 0.2], [0.2, 0.3, 0.5]])
y = np.array([2, 0, 1, 1, 2, 0, 0, 1, 2, 1, 0, 2])
proba = rows[np.array([0, 1, 2, 3, 4, 3, 1, 2, 0, 0, 3, 4])]
cases.append(case("three classes tied", y, proba))

# Three classes, class 2 absent from the fold: one-vs-rest AUC undefined.
y = np.array([0, 1, 0, 1, 1, 0, 1, 0])
proba = np.array([[0.6, 0.3, 0.1], [0.2, 0.5, 0.3], [0.5, 0.1, 0.4], [0.3, 0.3, 0.4],
                  [0.1, 0.8, 0.1], [0.7, 0.2, 0.1], [0.4, 0.35, 0.25], [0.2, 0.2, 0.6]])
cases.append(case("three classes one absent", y, proba))

with open(os.path.join(HERE, "classify.json"), "w") as f:
    json.dump(
        {
            "generator": "testdata/eval/make_classify.py",
            "versions": {"numpy": np.__version__, "sklearn": sklearn.__version__},
            "cases": cases,
        },
        f,
        indent=1,
    )
    f.write("\n")
