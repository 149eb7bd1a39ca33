#!/usr/bin/python3
"""Writes crossentropy.json, the fixture of the classifier tests of package
graphnet, from Debian's python3-torch, python3-sklearn and python3-numpy:

- cases: the weighted mean cross-entropy of torch.nn.functional.cross_entropy
  (reduction "mean", with and without weight) of fixed logits and labels, and
  its gradient with respect to the logits by torch.autograd, in float64;
- class_weight: sklearn.utils.class_weight.compute_class_weight("balanced");
- anova: the one-way ANOVA F of sklearn.feature_selection.f_classif, per
  column of a small matrix, against which the correlation ratio of the
  screens is checked.

Run from this folder: /usr/bin/python3 make_crossentropy.py
"""
import json

import numpy as np
import sklearn
import torch
import torch.nn.functional as F
from sklearn.feature_selection import f_classif
from sklearn.utils.class_weight import compute_class_weight

rng = np.random.default_rng(20261202)


def balanced(labels, k):
    return compute_class_weight("balanced", classes=np.arange(k), y=np.array(labels)).tolist()


def case(name, logits, labels, weight):
    z = torch.tensor(logits, dtype=torch.float64, requires_grad=True)
    y = torch.tensor(labels, dtype=torch.long)
    w = None if weight is None else torch.tensor(weight, dtype=torch.float64)
    loss = F.cross_entropy(z, y, weight=w, reduction="mean")
    loss.backward()
    return {
        "name": name,
        "logits": np.asarray(logits).tolist(),
        "labels": list(labels),
        "weight": weight,
        "loss": loss.item(),
        "grad": z.grad.numpy().tolist(),
    }


cases = []
# Three classes, imbalanced (3, 2, 1 participants).
z3 = rng.normal(0, 1.5, size=(6, 3))
y3 = [0, 2, 1, 0, 1, 0]
cases.append(case("3 classes, none", z3, y3, None))
cases.append(case("3 classes, balanced", z3, y3, balanced(y3, 3)))
# Two classes, imbalanced (4, 1).
z2 = rng.normal(0, 1, size=(5, 2))
y2 = [0, 0, 1, 0, 0]
cases.append(case("2 classes, none", z2, y2, None))
cases.append(case("2 classes, balanced", z2, y2, balanced(y2, 2)))
# Large logits, where a naive softmax overflows.
zl = np.array([[800.0, 790.0, -5.0], [-1000.0, 0.0, 3.0], [50.0, 50.0, 50.0]])
yl = [1, 0, 2]
cases.append(case("large logits, arbitrary weights", zl, yl, [0.5, 2.0, 1.25]))

class_weight = [
    {"labels": y3, "classes": 3, "balanced": balanced(y3, 3)},
    {"labels": y2, "classes": 2, "balanced": balanced(y2, 2)},
    {"labels": [1, 1, 1, 0, 2, 2, 1], "classes": 3, "balanced": balanced([1, 1, 1, 0, 2, 2, 1], 3)},
]

anova = []
for k, labels in [(3, [0, 1, 2, 0, 1, 2, 0, 1, 2, 2]), (2, [0, 1, 1, 0, 1, 0, 0, 1, 1, 0])]:
    x = rng.normal(0, 1, size=(len(labels), 4))
    x[:, 0] += np.array(labels, dtype=float)  # one column with a class effect
    f, _ = f_classif(x, np.array(labels))
    anova.append({"x": x.tolist(), "labels": labels, "classes": k, "f": f.tolist()})

out = {
    "source": "torch %s, scikit-learn %s, numpy %s" % (torch.__version__, sklearn.__version__, np.__version__),
    "cases": cases,
    "class_weight": class_weight,
    "anova": anova,
}
with open("crossentropy.json", "w") as fh:
    json.dump(out, fh, indent=1)
    fh.write("\n")
