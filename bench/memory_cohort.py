#!/usr/bin/python3
"""Invent a large cohort for bench/memory.sh: one float32 NumPy matrix per
participant, written one at a time so that the cohort is never held in memory.

Each participant's p x p functional matrix is tanh of a symmetric matrix of
Gaussian noise (SD 0.3) plus a planted latent trait on 40 edges; its unit
diagonal is that of a correlation matrix. The two scores are the trait (and
its negation) plus noise, so a ridge model has something to find. The data are
invented; nothing comes from a real cohort.

usage: bench/memory_cohort.py OUT N P
"""
import os
import sys

import numpy as np


def main():
    out, n, p = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
    rng = np.random.default_rng(1)
    os.makedirs(os.path.join(out, "fc"), exist_ok=True)
    iu = np.triu_indices(p, 1)
    planted = rng.choice(len(iu[0]), 40, replace=False)
    signs = rng.choice([-1.0, 1.0], 40)
    with open(os.path.join(out, "participants.tsv"), "w") as tsv:
        tsv.write("participant_id\trecall\tfluency\n")
        for k in range(n):
            pid = "sub-%05d" % (k + 1)
            trait = rng.standard_normal()
            upper = 0.3 * rng.standard_normal(len(iu[0]))
            upper[planted] += 0.15 * signs * trait
            s = np.zeros((p, p))
            s[iu] = upper
            s = s + s.T
            m = np.tanh(s)
            np.fill_diagonal(m, 1.0)
            np.save(os.path.join(out, "fc", pid + "_fc.npy"), m.astype(np.float32))
            tsv.write("%s\t%.4f\t%.4f\n" % (pid, trait + 0.7 * rng.standard_normal(),
                                           -trait + 0.7 * rng.standard_normal()))


if __name__ == "__main__":
    main()
