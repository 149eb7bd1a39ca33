#!/usr/bin/python3
"""Writes the fixture cohorts of testdata/cohort: an invented study (the
fictional "Harbourlight memory study": eight-to-ten made-up participants,
four made-up regions, invented recall and fluency scores). No real data.

Run with Debian's python3 and python3-numpy:
    /usr/bin/python3 testdata/cohort/make_cohorts.py

Every folder holds experiment.toml and the lab's files:
  good-tsv/   participants.tsv, text matrices with labels (fc), .npy files (sc),
              regions.txt; rows with a missing score, no scores, no fc file,
              no family; one participant with outlying functional connectivity.
  good-npy/   participants.csv and one stacked .npy per modality with its id list.
  bad-*/      good-tsv (or good-npy) with one problem each.
It also writes good-tsv/expected.json: statistics of the included
participants computed with numpy (mean, sample SD) and scipy
(median_abs_deviation with scale="normal") for the Go tests to compare.
"""
import json
import os
import shutil

import numpy as np
from scipy import stats

HERE = os.path.dirname(os.path.abspath(__file__))
P = 4
LABELS = ["cingulate_a", "cingulate_b", "temporal_a", "temporal_b"]
IDS = ["sub-%02d" % i for i in range(1, 11)]


def connectomes(seed):
    """Functional (correlations of random series) and structural (symmetric
    streamline counts) matrices for every id, seeded."""
    rng = np.random.default_rng(seed)
    fc, sc = {}, {}
    for k, pid in enumerate(IDS):
        ts = rng.standard_normal((40, P))
        ts[:, 1] += 0.5 * ts[:, 0]
        c = np.corrcoef(ts, rowvar=False)
        c = np.round((c + c.T) / 2, 6)
        np.fill_diagonal(c, 1.0)
        if pid == "sub-09":  # the outlier: strong connectivity everywhere
            c = np.full((P, P), 0.9)
            np.fill_diagonal(c, 1.0)
        fc[pid] = c
        s = rng.integers(0, 60, size=(P, P)).astype(np.float64)
        s = np.triu(s, 1)
        s = s + s.T
        if k % 3 == 0:
            s[0, 3] = s[3, 0] = 0.0
        sc[pid] = s
    return fc, sc


def write_text_matrix(path, m, labels=LABELS, delim="\t"):
    with open(path, "w") as f:
        if labels is not None:
            f.write(delim.join(["region"] + labels) + "\n")
        for i, row in enumerate(m):
            cells = ["%.6f" % v for v in row]
            if labels is not None:
                cells = [labels[i]] + cells
            f.write(delim.join(cells) + "\n")


PARTICIPANTS = [
    # id, recall, fluency, age, sex, motion, family
    ("sub-01", "14", "22", "34", "F", "0.11", "fam-a"),
    ("sub-02", "11", "19", "29", "M", "0.09", "fam-a"),
    ("sub-03", "16", "n/a", "41", "F", "0.14", "fam-b"),
    ("sub-04", "9", "17", "38", "M", "0.21", "fam-b"),
    ("sub-05", "13", "20", "", "F", "0.08", "fam-c"),
    ("sub-06", "", "n/a", "45", "M", "0.12", "fam-c"),
    ("sub-07", "12", "25", "31", "F", "0.10", "fam-d"),
    ("sub-08", "15", "23", "36", "M", "0.13", "fam-d"),
    ("sub-09", "10", "18", "52", "F", "0.30", "fam-e"),
    ("sub-10", "17", "24", "27", "M", "0.07", "n/a"),
]
HEADER = ["participant_id", "recall", "fluency", "age", "sex", "motion", "family"]
NO_FC = {"sub-08"}  # the lab lost this participant's functional file
INCLUDED = ["sub-01", "sub-02", "sub-03", "sub-04", "sub-05", "sub-07", "sub-09"]


def write_table(path, rows, delim):
    with open(path, "w") as f:
        for r in [HEADER] + rows:
            f.write(delim.join(r) + "\n")


COHORT_TSV = """\
[cohort]
participants = "participants.tsv"
targets = ["recall", "fluency"]
covariates = ["age", "sex", "motion"]
group = "family"
regions = "regions.txt"
min_participants = 5
{extra}
[cohort.functional]
files = "fc/{{participant_id}}_fc.tsv"
{fextra}
[cohort.structural]
files = "sc/{{participant_id}}_sc.npy"
"""

COHORT_NPY = """\
[cohort]
participants = "participants.csv"
targets = ["recall", "fluency"]
covariates = ["age", "sex"]
min_participants = 5
{extra}
[cohort.functional]
stack = "fc.npy"
stack_ids = "fc_ids.txt"

[cohort.structural]
stack = "sc.npy"
stack_ids = "sc_ids.txt"
"""


def experiment(text):
    return "# Fixture cohort of the invented Harbourlight memory study.\nseed = 1\n\n" + text


def good_tsv(d, fc, sc, extra="", fextra=""):
    os.makedirs(os.path.join(d, "fc"))
    os.makedirs(os.path.join(d, "sc"))
    write_table(os.path.join(d, "participants.tsv"), [list(r) for r in PARTICIPANTS], "\t")
    with open(os.path.join(d, "regions.txt"), "w") as f:
        f.write("\n".join(LABELS) + "\n")
    for pid in IDS:
        if pid not in NO_FC:
            write_text_matrix(os.path.join(d, "fc", pid + "_fc.tsv"), fc[pid])
        np.save(os.path.join(d, "sc", pid + "_sc.npy"), sc[pid])
    with open(os.path.join(d, "experiment.toml"), "w") as f:
        f.write(experiment(COHORT_TSV.format(extra=extra, fextra=fextra)))


def good_npy(d, fc, sc, ids=None, fc_stack=None, extra=""):
    os.makedirs(d)
    rows = [list(r[:5]) for r in PARTICIPANTS]
    with open(os.path.join(d, "participants.csv"), "w") as f:
        for r in [HEADER[:5]] + rows:
            f.write(",".join(r) + "\n")
    ids = IDS if ids is None else ids
    with open(os.path.join(d, "fc_ids.txt"), "w") as f:
        f.write("\n".join(ids) + "\n")
    with open(os.path.join(d, "sc_ids.txt"), "w") as f:
        f.write("\n".join(IDS) + "\n")
    if fc_stack is None:
        fc_stack = np.stack([fc[p] for p in ids]).astype("<f4")
    np.save(os.path.join(d, "fc.npy"), fc_stack)
    # structural: big-endian float64 in Fortran order
    np.save(os.path.join(d, "sc.npy"), np.asfortranarray(np.stack([sc[p] for p in IDS]).astype(">f8")))
    with open(os.path.join(d, "experiment.toml"), "w") as f:
        f.write(experiment(COHORT_NPY.format(extra=extra)))


def replace_line(path, old, new):
    with open(path) as f:
        text = f.read()
    assert old in text, (path, old)
    with open(path, "w") as f:
        f.write(text.replace(old, new, 1))


def main():
    for name in os.listdir(HERE):
        if name.startswith(("good-", "bad-")):
            shutil.rmtree(os.path.join(HERE, name))
    fc, sc = connectomes(20261201)

    good_tsv(os.path.join(HERE, "good-tsv"), fc, sc)
    good_npy(os.path.join(HERE, "good-npy"), fc, sc)

    inc_fc = [fc[p] for p in INCLUDED]
    inc_sc = [sc[p] for p in INCLUDED]
    iu = np.triu_indices(P, 1)
    fc_mean = np.array([m[iu].mean() for m in inc_fc])
    sc_mean = np.array([m[iu].mean() for m in inc_sc])
    sc_density = np.array([(m[iu] > 0).mean() for m in inc_sc])
    recall = np.array([float(r[1]) for r in PARTICIPANTS if r[0] in INCLUDED])
    expected = {
        "included": INCLUDED,
        "fc_mean_connectivity": {"mean": fc_mean.mean(), "sd": fc_mean.std(ddof=1)},
        "sc_mean_connectivity": {"mean": sc_mean.mean(), "sd": sc_mean.std(ddof=1)},
        "sc_density": {"mean": sc_density.mean(), "sd": sc_density.std(ddof=1)},
        "fc_median": float(np.median(fc_mean)),
        "fc_robust_sd": float(stats.median_abs_deviation(fc_mean, scale="normal")),
        "recall": {"mean": recall.mean(), "sd": recall.std(ddof=1)},
        "sub01_fc": fc["sub-01"].tolist(),
        "sub01_sc": sc["sub-01"].tolist(),
    }
    with open(os.path.join(HERE, "good-tsv", "expected.json"), "w") as f:
        json.dump(expected, f, indent=1)

    def bad(name, base="tsv", **kw):
        d = os.path.join(HERE, "bad-" + name)
        (good_tsv if base == "tsv" else good_npy)(d, fc, sc, **kw)
        return d

    # participants table
    d = bad("table-extension")
    os.rename(os.path.join(d, "participants.tsv"), os.path.join(d, "participants.xlsx"))
    replace_line(os.path.join(d, "experiment.toml"), '"participants.tsv"', '"participants.xlsx"')
    d = bad("score-not-number")
    replace_line(os.path.join(d, "participants.tsv"), "sub-04\t9\t", "sub-04\tnine\t")
    d = bad("duplicate-id")
    replace_line(os.path.join(d, "participants.tsv"), "sub-07\t", "sub-02\t")
    d = bad("missing-column")
    replace_line(os.path.join(d, "experiment.toml"), '["recall", "fluency"]', '["recall", "naming"]')
    d = bad("mixed-covariate")
    replace_line(os.path.join(d, "participants.tsv"), "\t38\t", "\tforty\t")
    d = bad("ragged-table")
    replace_line(os.path.join(d, "participants.tsv"), "\t0.21\tfam-b", "\t0.21")

    # matrices
    d = bad("not-square")
    write_text_matrix(os.path.join(d, "fc", "sub-05_fc.tsv"), fc["sub-05"][:, :3], labels=None)
    d = bad("p-mismatch")
    write_text_matrix(os.path.join(d, "fc", "sub-05_fc.tsv"), fc["sub-05"][:3, :3], labels=None)
    d = bad("p-mismatch-modalities")
    big = np.zeros((5, 5))
    big[:4, :4] = sc["sub-01"]
    np.save(os.path.join(d, "sc", "sub-01_sc.npy"), big)
    d = bad("labels-mismatch")
    with open(os.path.join(d, "regions.txt"), "w") as f:
        f.write("\n".join(LABELS[:3] + ["insula"]) + "\n")
    d = bad("asymmetric")
    m = fc["sub-04"].copy()
    m[0, 2] += 0.05
    m[1, 3] += 0.2
    write_text_matrix(os.path.join(d, "fc", "sub-04_fc.tsv"), m)
    d = bad("nonfinite")
    m = fc["sub-04"].copy()
    m[2, 1] = m[1, 2] = np.nan
    write_text_matrix(os.path.join(d, "fc", "sub-04_fc.tsv"), m)
    d = bad("fc-range")
    m = fc["sub-04"].copy()
    m[0, 3] = m[3, 0] = 1.5
    write_text_matrix(os.path.join(d, "fc", "sub-04_fc.tsv"), m)
    d = bad("sc-negative")
    m = sc["sub-02"].copy()
    m[1, 2] = m[2, 1] = -3
    np.save(os.path.join(d, "sc", "sub-02_sc.npy"), m)
    d = bad("matrix-not-number")
    replace_line(os.path.join(d, "fc", "sub-03_fc.tsv"), "\ntemporal_a\t", "\ntemporal_a\tabc\t")
    with open(os.path.join(d, "fc", "sub-03_fc.tsv")) as f:
        lines = f.read().split("\n")
    cells = lines[3].split("\t")
    del cells[2]  # keep the row's length: "abc" replaces the first value
    lines[3] = "\t".join(cells)
    with open(os.path.join(d, "fc", "sub-03_fc.tsv"), "w") as f:
        f.write("\n".join(lines))
    d = bad("npy-dtype")
    np.save(os.path.join(d, "sc", "sub-02_sc.npy"), sc["sub-02"].astype(np.int64))
    d = bad("npy-dims")
    np.save(os.path.join(d, "sc", "sub-02_sc.npy"), np.stack([sc["sub-02"]] * 2))

    # files and rows that do not match
    d = bad("unlisted-file")
    write_text_matrix(os.path.join(d, "fc", "sub-99_fc.tsv"), fc["sub-01"])
    d = bad("unlisted-stack", base="npy", ids=IDS + ["sub-42"],
            fc_stack=np.stack([fc[p] for p in IDS + ["sub-01"]]).astype("<f4"))
    d = bad("stack-count", base="npy", fc_stack=np.stack([fc[p] for p in IDS[:9]]).astype("<f4"))
    d = bad("too-few", extra="min_participants = 8\n")
    replace_line(os.path.join(d, "experiment.toml"), "min_participants = 5\n", "")
    d = bad("files-and-stack", fextra='stack = "fc.npy"\nstack_ids = "fc_ids.txt"\n')


if __name__ == "__main__":
    main()
