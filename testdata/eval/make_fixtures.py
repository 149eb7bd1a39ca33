#!/usr/bin/python3
"""Make the reference values that eval's tests check against.

Run with Debian's Python, which has numpy, scipy and scikit-learn:

    /usr/bin/python3 testdata/eval/make_fixtures.py

It writes fixtures.json and predictions.csv beside itself. Every number in
them comes from numpy 1.24, scipy 1.10 or scikit-learn 1.2 (or, for the
published data sets, from the publication as noted). The scores are invented:
a fictional cohort, no real participant's data.
"""

import json
import math
import os

import numpy as np
import scipy
import scipy.special
import scipy.stats
import sklearn
from sklearn.metrics import (
    mean_absolute_error,
    mean_squared_error,
    median_absolute_error,
    normalized_mutual_info_score,
    r2_score,
)

HERE = os.path.dirname(os.path.abspath(__file__))


def nan_to_none(x):
    """JSON has no NaN: write null for it."""
    if isinstance(x, float) and math.isnan(x):
        return None
    if isinstance(x, list):
        return [nan_to_none(v) for v in x]
    if isinstance(x, dict):
        return {k: nan_to_none(v) for k, v in x.items()}
    return x


def equal_frequency_bins(x, bins):
    """skein's rule: rank 1..n ascending, ties in order of appearance
    (a stable sort), bin = floor(bins*(rank-1)/n)."""
    n = len(x)
    order = np.argsort(np.asarray(x), kind="stable")
    labels = np.empty(n, dtype=int)
    for k, i in enumerate(order):
        labels[i] = (bins * k) // n
    return labels


def reference_metrics(obs, pred, bins=10):
    obs = np.asarray(obs, dtype=float)
    pred = np.asarray(pred, dtype=float)
    keep = ~(np.isnan(obs) | np.isnan(pred))
    o, p = obs[keep], pred[keep]
    return {
        "n": int(keep.sum()),
        "missing": int((~keep).sum()),
        "pearson_r": float(scipy.stats.pearsonr(o, p)[0]),
        "spearman_rho": float(scipy.stats.spearmanr(o, p)[0]),
        "mae": float(mean_absolute_error(o, p)),
        "median_ae": float(median_absolute_error(o, p)),
        "rmse": float(math.sqrt(mean_squared_error(o, p))),
        "r2": float(r2_score(o, p)),
        "nmi": float(
            normalized_mutual_info_score(
                equal_frequency_bins(o, bins),
                equal_frequency_bins(p, bins),
                average_method="arithmetic",
            )
        ),
    }


def metric_cases(rng):
    cases = []

    # A fictional memory score (mean 100, SD 15) and a prediction that
    # follows it loosely.
    obs = rng.normal(100, 15, 60)
    pred = 0.5 * obs + 50 + rng.normal(0, 10, 60)
    cases.append({"name": "memory_n60", "bins": 10, "observed": obs.tolist(), "predicted": pred.tolist()})

    # Integer scores with many ties (a 0-30 questionnaire), 5 bins.
    obs = rng.integers(0, 31, 45).astype(float)
    pred = np.round(obs * 0.3 + rng.normal(10, 4, 45))
    cases.append({"name": "ties_n45", "bins": 5, "observed": obs.tolist(), "predicted": pred.tolist()})

    # Missing values on either side are skipped and counted.
    obs = rng.normal(20, 5, 30)
    pred = obs + rng.normal(0, 6, 30)
    obs[[3, 17]] = np.nan
    pred[[8, 17, 25]] = np.nan
    cases.append({"name": "missing_n30", "bins": 4, "observed": obs.tolist(), "predicted": pred.tolist()})

    # A large common offset: a one-pass sum of squares would lose precision.
    base = rng.normal(0, 1, 25)
    obs = 1e8 + base
    pred = 1e8 + base + rng.normal(0, 0.7, 25)
    cases.append({"name": "offset_1e8", "bins": 10, "observed": obs.tolist(), "predicted": pred.tolist()})

    # Predictions worse than the mean: R^2 below zero.
    obs = rng.normal(50, 10, 20)
    pred = rng.normal(80, 20, 20)
    cases.append({"name": "negative_r2", "bins": 10, "observed": obs.tolist(), "predicted": pred.tolist()})

    # More bins than pairs.
    obs = [3.0, 1.0, 4.0, 1.0, 5.0, 9.0, 2.0]
    pred = [2.5, 1.5, 3.0, 2.0, 6.0, 7.5, 2.0]
    cases.append({"name": "bins_exceed_n", "bins": 10, "observed": obs, "predicted": pred})

    for c in cases:
        c["want"] = reference_metrics(c["observed"], c["predicted"], c["bins"])
    return cases


def binning_cases():
    # Ties are binned in order of appearance.
    x = [5.0, 1.0, 5.0, 5.0, 2.0, 5.0, 0.0, 3.0, 5.0, 4.0]
    return [
        {"x": x, "bins": 3, "want": equal_frequency_bins(x, 3).tolist()},
        {"x": x, "bins": 4, "want": equal_frequency_bins(x, 4).tolist()},
        {"x": x, "bins": 10, "want": equal_frequency_bins(x, 10).tolist()},
    ]


def anscombe():
    # Anscombe (1973), "Graphs in statistical analysis", The American
    # Statistician 27(1):17-21, Table 1. Written here from memory and
    # cross-checked value by value against the copy in the public
    # seaborn-data repository (anscombe.csv); no Debian package installed
    # here ships the data set. The paper gives r = 0.816 for each set.
    x123 = [10, 8, 13, 9, 11, 14, 6, 4, 12, 7, 5]
    sets = {
        "I": (x123, [8.04, 6.95, 7.58, 8.81, 8.33, 9.96, 7.24, 4.26, 10.84, 4.82, 5.68]),
        "II": (x123, [9.14, 8.14, 8.74, 8.77, 9.26, 8.10, 6.13, 3.10, 9.13, 7.26, 4.74]),
        "III": (x123, [7.46, 6.77, 12.74, 7.11, 7.81, 8.84, 6.08, 5.39, 8.15, 6.42, 5.73]),
        "IV": ([8, 8, 8, 8, 8, 8, 8, 19, 8, 8, 8], [6.58, 5.76, 7.71, 8.84, 8.47, 7.04, 5.25, 12.50, 5.56, 7.91, 6.89]),
    }
    out = []
    for name, (x, y) in sets.items():
        out.append({
            "set": name,
            "x": [float(v) for v in x],
            "y": y,
            "pearson_r": float(scipy.stats.pearsonr(x, y)[0]),
        })
    return out


def iir_nmi():
    # Manning, Raghavan & Schuetze (2008), Introduction to Information
    # Retrieval, section 16.3, Figure 16.4: 17 points in three clusters
    # (cluster 1: 5 x, 1 o; cluster 2: 1 x, 4 o, 1 diamond; cluster 3: 2 x,
    # 3 diamonds). Counts written from memory of the figure; the book gives
    # purity 0.71 and NMI 0.36 for it.
    clusters, classes = [], []
    for cluster, counts in enumerate([{"x": 5, "o": 1}, {"x": 1, "o": 4, "d": 1}, {"x": 2, "d": 3}]):
        for cls, n in counts.items():
            clusters += [cluster] * n
            classes += [{"x": 0, "o": 1, "d": 2}[cls]] * n
    return {
        "clusters": clusters,
        "classes": classes,
        "nmi_sklearn": float(normalized_mutual_info_score(classes, clusters, average_method="arithmetic")),
    }


def ttest_cases(rng):
    out = []
    for name, j, n_train, n_test, shift in [
        ("10x10_small_gain", 100, 180.0, 20.0, 0.01),
        ("5x2", 10, 150.0, 150.0, 0.03),
        ("5fold_no_gain", 5, 80.0, 20.0, 0.0),
    ]:
        d = rng.normal(shift, 0.04, j)
        mean = float(np.mean(d))
        var = float(np.var(d, ddof=1))
        # Nadeau & Bengio (2003), corrected resampled t, by hand.
        t = mean / math.sqrt((1.0 / j + n_test / n_train) * var)
        df = j - 1
        p = float(2 * scipy.stats.t.sf(abs(t), df))
        out.append({"name": name, "diff": d.tolist(), "n_train": n_train, "n_test": n_test,
                    "mean": mean, "t": t, "df": df, "p": p})
    return out


def ks_cases(rng):
    out = []
    for name, x in [
        ("uniform_n200", rng.uniform(0, 1, 200)),
        ("skewed_n150", rng.beta(1.0, 1.6, 150)),
        ("uniform_n40", rng.uniform(0, 1, 40)),
        ("permutation_pvalues_n100", (1 + rng.integers(0, 200, 100)) / 200.0),
    ]:
        asymp = scipy.stats.kstest(x, "uniform", method="asymp")
        out.append({"name": name, "x": x.tolist(), "d": float(asymp.statistic), "p_asymptotic": float(asymp.pvalue)})
    return out


def kolmogorov_values():
    lambdas = [0.2, 0.5, 0.8, 0.99, 1.0, 1.01, 1.2, 1.36, 1.63, 2.0, 3.0]
    return [{"lambda": l, "survival": float(scipy.special.kolmogorov(l))} for l in lambdas]


def predictions(rng):
    """An invented run: 24 fictional participants, 2 repeats of 3-fold CV,
    two models, two targets. Returns the rows and the reference summary."""
    ids = [f"sub-{i:02d}" for i in range(1, 25)]
    truth = {
        "memory": rng.normal(100, 15, 24),
        "anxiety": np.round(rng.uniform(0, 21, 24)),
    }
    rows = []
    for repeat in range(2):
        perm = rng.permutation(24)
        fold_of = {int(i): k % 3 for k, i in enumerate(perm)}
        for model, noise in [("ridge", 1.0), ("graphnet", 0.6)]:
            for target in ["memory", "anxiety"]:
                y = truth[target]
                sd = float(np.std(y))
                for i in range(24):
                    pred = float(np.mean(y) + 0.5 * (y[i] - np.mean(y)) + rng.normal(0, noise * sd))
                    obs = float(y[i])
                    # Files number repeats and folds from 1.
                    rows.append([ids[i], model, target, repeat + 1, fold_of[i] + 1, obs, pred])
    # One missing prediction and one missing observation.
    rows[5][6] = float("nan")
    rows[30][5] = float("nan")

    summary = []
    for model in ["graphnet", "ridge"]:
        for target in ["anxiety", "memory"]:
            g = [r for r in rows if r[1] == model and r[2] == target]
            pooled = reference_metrics([r[5] for r in g], [r[6] for r in g])
            folds = []
            for repeat in (1, 2):
                for fold in (1, 2, 3):
                    f = [r for r in g if r[3] == repeat and r[4] == fold]
                    m = reference_metrics([r[5] for r in f], [r[6] for r in f])
                    m.update({"repeat": repeat, "fold": fold})
                    folds.append(m)
            names = ["pearson_r", "spearman_rho", "mae", "median_ae", "rmse", "r2", "nmi"]
            mean = {k: float(np.mean([f[k] for f in folds])) for k in names}
            sd = {k: float(np.std([f[k] for f in folds], ddof=1)) for k in names}
            summary.append({"model": model, "target": target, "pooled": pooled,
                            "folds": folds, "fold_mean": mean, "fold_sd": sd})
    return rows, summary


def fmt(v):
    # The same text as Go's strconv.FormatFloat(v, 'g', -1, 64) for these
    # values: repr gives the shortest round-tripping decimal, and Go writes
    # whole numbers without ".0".
    if isinstance(v, float):
        if math.isnan(v):
            return "NaN"
        if v.is_integer() and abs(v) < 1e15:
            return str(int(v))
        return repr(v)
    return str(v)


def main():
    rng = np.random.default_rng(20260301)
    rows, summary = predictions(rng)
    fixtures = {
        "generator": "testdata/eval/make_fixtures.py",
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__, "sklearn": sklearn.__version__},
        "metrics": metric_cases(rng),
        "binning": binning_cases(),
        "anscombe": anscombe(),
        "iir_nmi": iir_nmi(),
        "ttest": ttest_cases(rng),
        "ks": ks_cases(rng),
        "kolmogorov": kolmogorov_values(),
        "predictions_summary": summary,
    }
    with open(os.path.join(HERE, "fixtures.json"), "w") as f:
        json.dump(nan_to_none(fixtures), f, indent=1, allow_nan=False)
        f.write("\n")
    with open(os.path.join(HERE, "predictions.csv"), "w") as f:
        f.write("participant_id,model,target,repeat,fold,observed,predicted\n")
        for r in rows:
            f.write(",".join(fmt(v) for v in r) + "\n")


if __name__ == "__main__":
    main()
