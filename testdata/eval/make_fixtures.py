#!/usr/bin/python3
"""Make the reference values that eval's tests check against.

Run with Debian's Python, which has numpy, scipy and scikit-learn:

    /usr/bin/python3 testdata/eval/make_fixtures.py

It writes fixtures.json and predictions.csv beside itself. Every number in
them comes from numpy 1.24, scipy 1.10 or scikit-learn 1.2 (or, for the
published data sets, from the publication as noted); the exact expected
mutual information of a few labelings comes from mpmath 1.2 (Debian's
python3-mpmath). Where skein has a convention of its own (the binning of
ties, constant predictions, AMI and NMI of degenerate labelings), the
script applies it in numpy before calling scipy or scikit-learn, and says
so. The scores are invented: a fictional cohort, no real participant's data.
"""

import json
import math
import os
import warnings

import mpmath
import numpy as np
import scipy
import scipy.special
import scipy.stats
import sklearn
from sklearn.metrics import (
    adjusted_mutual_info_score,
    mean_absolute_error,
    mean_squared_error,
    median_absolute_error,
    normalized_mutual_info_score,
    r2_score,
)
from sklearn.metrics.cluster import contingency_matrix, expected_mutual_information

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
    """skein's rule (eval.EqualFrequencyBins): rank 1..n ascending, every
    member of a run of ties given the first rank of the run (scipy's
    rankdata method "min"), bin = floor(bins*(rank-1)/n)."""
    x = np.asarray(x, dtype=float)
    ranks = scipy.stats.rankdata(x, method="min").astype(int)
    return (bins * (ranks - 1)) // len(x)


# skein's eval.ConstantTolerance: predictions whose largest distance from
# their mean is at most this times the (population) SD of the observed
# values are constant.
CONSTANT_TOLERANCE = 1e-9


def constant_predictions(o, p):
    """skein's rule (eval.ConstantPredictions), in numpy."""
    if len(p) < 2 or np.all(p == p[0]):
        return True
    return float(np.max(np.abs(p - np.mean(p)))) <= CONSTANT_TOLERANCE * float(np.std(o))


def nmi_reference(a, b):
    """scikit-learn's NMI (arithmetic mean), except that two constant
    labelings score 0 by skein's definition (scikit-learn returns 1)."""
    if len(np.unique(a)) == 1 and len(np.unique(b)) == 1:
        return 0.0
    return float(normalized_mutual_info_score(a, b, average_method="arithmetic"))


def ami_reference(a, b):
    """scikit-learn's adjusted_mutual_info_score (arithmetic mean), except
    where every pairing of the labels gives the same mutual information
    (both labelings constant, or both with one item per label): skein
    returns 0 there, scikit-learn 1 for the first and rounding error over
    machine epsilon for the second."""
    n = len(a)
    ka, kb = len(np.unique(a)), len(np.unique(b))
    if (ka == 1 and kb == 1) or (ka == n and kb == n):
        return 0.0
    return float(adjusted_mutual_info_score(a, b, average_method="arithmetic"))


def expected_mi(a, b):
    """E[MI] under the permutation model, by scikit-learn."""
    return float(expected_mutual_information(contingency_matrix(a, b), len(a)))


def entropy_nat(labels):
    """Entropy of a labeling in nats, by scipy.stats.entropy of the label
    counts."""
    return float(scipy.stats.entropy(np.unique(labels, return_counts=True)[1]))


def nmi_chance_reference(a, b):
    """Expected NMI under random pairing: 2 E[MI] / (H(A) + H(B)), exact
    because pairing keeps both sets of label counts; 0 when both entropies
    are 0, as skein's NMI is."""
    h = entropy_nat(a) + entropy_nat(b)
    if h == 0:
        return 0.0
    return 2 * expected_mi(a, b) / h


def reference_metrics(obs, pred, bins=10):
    obs = np.asarray(obs, dtype=float)
    pred = np.asarray(pred, dtype=float)
    keep = ~(np.isnan(obs) | np.isnan(pred))
    o, p = obs[keep], pred[keep]
    constant = constant_predictions(o, p)
    a = equal_frequency_bins(o, bins)
    if constant:
        # skein treats the predictions as one value: scipy then gives NaN
        # (ConstantInputWarning) and the predictions are one bin.
        p_order = np.full(len(p), float(np.mean(p)))
        b = np.zeros(len(p), dtype=int)
    else:
        p_order = p
        b = equal_frequency_bins(p, bins)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r = float(scipy.stats.pearsonr(o, p_order)[0])
        rho = float(scipy.stats.spearmanr(o, p_order)[0])
    return {
        "n": int(keep.sum()),
        "missing": int((~keep).sum()),
        # One set of pairs is one fold: r within folds is Pearson's r.
        "pearson_r_within": r,
        "pearson_r": r,
        "spearman_rho": rho,
        "mae": float(mean_absolute_error(o, p)),
        "median_ae": float(median_absolute_error(o, p)),
        "rmse": float(math.sqrt(mean_squared_error(o, p))),
        "r2": float(r2_score(o, p)),
        "nmi": nmi_reference(a, b),
        "ami": ami_reference(a, b),
        "nmi_chance": nmi_chance_reference(a, b),
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


def constant_metric_cases(rng):
    """Cases added for constant and near-constant predictions, drawn from
    their own generator so that the cases above keep their numbers."""
    cases = []

    # The mean predictor after confound regression: rounding noise around 0
    # for scores of SD 10. skein calls it constant (no r, no rho, NMI 0).
    obs = rng.normal(30, 10, 40)
    pred = rng.uniform(-4e-14, 4e-15, 40)
    cases.append({"name": "near_constant_n40", "bins": 10, "observed": obs.tolist(), "predicted": pred.tolist()})

    # An exactly constant predictor on integer scores with ties, the pairs
    # sorted by score.
    obs = np.sort(rng.integers(0, 31, 36)).astype(float)
    pred = np.full(36, 14.5)
    cases.append({"name": "constant_sorted_n36", "bins": 6, "observed": obs.tolist(), "predicted": pred.tolist()})

    # Small but real spread (1e-6 of the SD): not constant.
    obs = rng.normal(0, 1, 30)
    pred = 5 + 1e-6 * (obs + rng.normal(0, 1, 30))
    cases.append({"name": "small_spread_n30", "bins": 5, "observed": obs.tolist(), "predicted": pred.tolist()})

    for c in cases:
        c["want"] = reference_metrics(c["observed"], c["predicted"], c["bins"])
    return cases


def exact_expected_mi(a, b, digits=40):
    """E[MI] of the permutation model by the formula of Vinh, Epps & Bailey
    (2010, JMLR 11:2837, eq. 24a) in mpmath with the given decimal digits:
    a reference independent of floating-point lgamma."""
    mpmath.mp.dps = digits
    n = len(a)
    ca = np.unique(a, return_counts=True)[1]
    cb = np.unique(b, return_counts=True)[1]
    lf = [mpmath.loggamma(k + 1) for k in range(n + 1)]
    emi = mpmath.mpf(0)
    for ai in ca:
        for bj in cb:
            ai, bj = int(ai), int(bj)
            fixed = lf[ai] + lf[bj] + lf[n - ai] + lf[n - bj] - lf[n]
            for k in range(max(1, ai + bj - n), min(ai, bj) + 1):
                logp = fixed - lf[k] - lf[ai - k] - lf[bj - k] - lf[n - ai - bj + k]
                emi += mpmath.mpf(k) / n * mpmath.log(mpmath.mpf(n) * k / (ai * bj)) * mpmath.exp(logp)
    return float(emi)


def ami_cases():
    """Labelings for AMILabels, ExpectedMILabels and ExpectedNMILabels."""
    rng = np.random.default_rng(20260415)
    out = []

    def add(name, a, b, exact=False, monte_carlo=0):
        a = np.asarray(a, dtype=int)
        b = np.asarray(b, dtype=int)
        c = {
            "name": name,
            "a": a.tolist(),
            "b": b.tolist(),
            "ami_sklearn": float(adjusted_mutual_info_score(a, b, average_method="arithmetic")),
            "ami": ami_reference(a, b),
            "nmi": nmi_reference(a, b),
            "emi_sklearn": expected_mi(a, b),
            "nmi_chance": nmi_chance_reference(a, b),
        }
        if exact:
            c["emi_mpmath"] = exact_expected_mi(a, b)
        if monte_carlo:
            # Mean NMI over random pairings (numpy permutations), with its
            # standard error: a sanity check of the chance level.
            vals = np.array([nmi_reference(a, rng.permutation(b)) for _ in range(monte_carlo)])
            c["nmi_chance_monte_carlo"] = float(vals.mean())
            c["nmi_chance_monte_carlo_se"] = float(vals.std(ddof=1) / math.sqrt(monte_carlo))
        out.append(c)

    add("random_n50", rng.integers(0, 4, 50), rng.integers(0, 5, 50), monte_carlo=20000)
    x = rng.normal(0, 1, 80)
    add("related_n80", equal_frequency_bins(x, 5), equal_frequency_bins(x + rng.normal(0, 1, 80), 6), monte_carlo=20000)
    # Binned integer scores with many ties, so bins are uneven.
    y = rng.integers(0, 12, 60)
    add("ties_n60", equal_frequency_bins(y, 10), equal_frequency_bins(np.round(y / 2 + rng.normal(0, 2, 60)), 10))
    add("one_constant", rng.integers(0, 3, 20), np.zeros(20))
    add("both_constant", np.full(12, 3), np.full(12, 7))
    add("both_singletons_same", np.arange(8), np.arange(8))
    add("both_singletons_reversed", np.arange(8), np.arange(8)[::-1])
    add("one_singletons", np.arange(10), rng.integers(0, 3, 10))
    add("identical_n30", np.repeat([0, 1, 2], 10), np.repeat([5, 6, 7], 10))
    add("tiny_n5", [0, 0, 1, 1, 2], [0, 1, 0, 1, 1], exact=True)
    # n = 2000, ten equal-frequency bins of related scores, and unequal
    # labels from scores with ties.
    x = rng.normal(0, 1, 2000)
    add("bins_n2000", equal_frequency_bins(x, 10), equal_frequency_bins(0.3 * x + rng.normal(0, 1, 2000), 10), exact=True)
    z = rng.integers(0, 40, 2000)
    add("ties_n2000", equal_frequency_bins(z, 10), rng.integers(0, 7, 2000), exact=True)
    return out


def binning_cases():
    # Ties share the bin of the first rank of their run.
    x = [5.0, 1.0, 5.0, 5.0, 2.0, 5.0, 0.0, 3.0, 5.0, 4.0]
    y = [2.0, 2.0, 1.0, 3.0, 1.0, 2.0, 2.0, 4.0, 1.0, 2.0, 3.0, 0.5]
    return [
        {"x": x, "bins": 3, "want": equal_frequency_bins(x, 3).tolist()},
        {"x": x, "bins": 4, "want": equal_frequency_bins(x, 4).tolist()},
        {"x": x, "bins": 10, "want": equal_frequency_bins(x, 10).tolist()},
        {"x": y, "bins": 4, "want": equal_frequency_bins(y, 4).tolist()},
        {"x": [7.0] * 6, "bins": 3, "want": equal_frequency_bins([7.0] * 6, 3).tolist()},
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
            pooled["pearson_r_within"] = pearson_within_folds(g)
            folds = []
            for repeat in (1, 2):
                for fold in (1, 2, 3):
                    f = [r for r in g if r[3] == repeat and r[4] == fold]
                    m = reference_metrics([r[5] for r in f], [r[6] for r in f])
                    m.update({"repeat": repeat, "fold": fold})
                    folds.append(m)
            names = ["pearson_r_within", "pearson_r", "spearman_rho", "mae", "median_ae", "rmse", "r2", "nmi", "ami"]
            mean = {k: float(np.mean([f[k] for f in folds])) for k in names}
            sd = {k: float(np.std([f[k] for f in folds], ddof=1)) for k in names}
            summary.append({"model": model, "target": target, "pooled": pooled,
                            "folds": folds, "fold_mean": mean, "fold_sd": sd})
    return rows, summary


def pearson_within_folds(rows):
    """Pearson r (scipy) of the complete pairs after subtracting each
    (repeat, fold)'s mean observed and predicted value (numpy)."""
    obs, pred = [], []
    for key in sorted({(r[3], r[4]) for r in rows}):
        f = np.array([[r[5], r[6]] for r in rows if (r[3], r[4]) == key], dtype=float)
        f = f[~np.isnan(f).any(axis=1)]
        f -= f.mean(axis=0)
        obs.extend(f[:, 0])
        pred.extend(f[:, 1])
    return float(scipy.stats.pearsonr(obs, pred)[0])


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
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__, "sklearn": sklearn.__version__,
                     "mpmath": mpmath.__version__},
        "metrics": metric_cases(rng) + constant_metric_cases(np.random.default_rng(20260414)),
        "binning": binning_cases(),
        "ami": ami_cases(),
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
