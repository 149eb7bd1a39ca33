#!/usr/bin/python3
"""The scikit-learn side of bench/scale.sh: the ridge run of skein's scale
benchmark on the same invented cohort, with the same protocol.

usage: scale_sklearn.py COHORT_DIR [--folds 5] [--inner-folds 5] [--seed 1]

Reads COHORT_DIR/participants.tsv (columns participant_id, then the scores
named in --targets) and COHORT_DIR/fc/{participant_id}_fc.npy, preprocesses
each matrix as skein's experiment does (Fisher z, arctanh of the correlation
clipped to 1 - 1e-7, diagonal zero), takes the upper triangle (i < j), and
runs 5 outer folds (KFold, shuffled) of

  1. GridSearchCV(Pipeline(StandardScaler, Ridge), inner 5-fold, 13 alphas)
     fitted on both scores at once (one alpha for both: the cheaper way for
     scikit-learn; skein chooses a penalty per score);
  2. Pipeline(StandardScaler, RidgeCV(alpha_per_target=True)), efficient
     leave-one-out, a penalty per score.

The alphas are skein's relative grid (10^-3 ... 10^3, half a decade apart)
times the number of edges, which is what skein's alpha_scale = "relative"
makes of them for z-scored edges. Prints one line per method:
"METHOD SECONDS cpu=CPU-SECONDS r=..." (fitting and predicting, loading not
counted; CPU seconds of all threads), the load time, and the pooled Pearson
r of each score as a sanity check.
"""

import argparse
import csv
import os
import time

import numpy as np
from sklearn.linear_model import Ridge, RidgeCV
from sklearn.model_selection import GridSearchCV, KFold
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import StandardScaler


def load(cohort, targets):
    with open(os.path.join(cohort, "participants.tsv"), newline="") as f:
        rows = list(csv.DictReader(f, delimiter="\t"))
    ids = [r["participant_id"] for r in rows]
    y = np.array([[float(r[t]) for t in targets] for r in rows])
    x = None
    for i, pid in enumerate(ids):
        m = np.load(os.path.join(cohort, "fc", pid + "_fc.npy"))
        p = m.shape[0]
        if x is None:
            iu = np.triu_indices(p, 1)
            x = np.empty((len(ids), len(iu[0])))
        x[i] = np.arctanh(np.clip(m[iu], -(1 - 1e-7), 1 - 1e-7))
    return x, y


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("cohort")
    ap.add_argument("--targets", default="recall,fluency")
    ap.add_argument("--folds", type=int, default=5)
    ap.add_argument("--inner-folds", type=int, default=5)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--methods", default="gridsearch,ridgecv")
    args = ap.parse_args()
    start = time.perf_counter()
    x, y = load(args.cohort, args.targets.split(","))
    print(f"load {time.perf_counter() - start:.2f}")
    alphas = 10.0 ** (-3 + 0.5 * np.arange(13)) * x.shape[1]
    outer = KFold(args.folds, shuffle=True, random_state=args.seed)
    for method in args.methods.split(","):
        pred = np.empty_like(y)
        start, cpu = time.perf_counter(), time.process_time()
        for train, test in outer.split(x):
            if method == "gridsearch":
                inner = KFold(args.inner_folds, shuffle=True, random_state=args.seed)
                pipe = Pipeline([("scale", StandardScaler()), ("ridge", Ridge())])
                model = GridSearchCV(pipe, {"ridge__alpha": alphas}, cv=inner,
                                     scoring="neg_mean_squared_error")
            else:
                model = Pipeline([("scale", StandardScaler()),
                                  ("ridge", RidgeCV(alphas=alphas, alpha_per_target=True))])
            model.fit(x[train], y[train])
            pred[test] = model.predict(x[test])
        secs, cpu = time.perf_counter() - start, time.process_time() - cpu
        r = [np.corrcoef(pred[:, j], y[:, j])[0, 1] for j in range(y.shape[1])]
        print(f"{method} {secs:.2f} cpu={cpu:.1f} r={','.join(f'{v:.3f}' for v in r)}")


if __name__ == "__main__":
    main()
