#!/usr/bin/env bash
# Class-label benchmark: invents a cohort of 300 participants (150 families
# of two siblings) on 50 regions with three class labels, two with a planted
# group difference on functional edges (oracle ROC AUC 0.80; patient shares
# 0.3 and 0.5) and one independent of the connectomes, then runs
# bench/labels.toml on it: the classifying baselines (majority, logistic on
# functional edges and on both matrices, kernel logistic) and the
# recommended networks, on the same 5 folds × 2 repeats.
#
# skein synth writes one label a cohort. Its label is drawn last, from a
# random stream of its own (named after the label), so three runs with the
# same seed and different labels write the same participants, connectomes
# and scores; the script checks that, then joins the three label columns
# and the three labels' rows of planted.tsv. With Debian's python3-numpy and
# python3-sklearn it prints each planted label's AUC on the cohort as
# generated (bench/labels_oracle.py) beside the population oracle.
#
# usage: bench/labels.sh            (from anywhere)
# knobs: OUT=runs/labels (the cohort goes to OUT/cohort, the run to OUT/run)
#        N=300 P=50 SEED=21 AUC=0.8 JOBS=2
# Every participant, connectome and label is invented; skein is research
# software, not a diagnostic device.
set -euo pipefail
cd "$(dirname "$0")/.."
OUT=${OUT:-runs/labels}
N=${N:-300}
P=${P:-50}
SEED=${SEED:-21}
AUC=${AUC:-0.8}
JOBS=${JOBS:-2}
if [ -e "$OUT" ]; then
	echo "labels.sh: $OUT exists; remove it or set OUT" >&2
	exit 2
fi
mkdir -p "$OUT"
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
go build -o "$tmp/skein" ./cmd/skein
synth() { "$tmp/skein" synth --n "$N" --p "$P" --seed "$SEED" --siblings "$@" >/dev/null; }
synth --out "$tmp/a" --label diagnosis --prevalence 0.3 --label-auc "$AUC"
synth --out "$tmp/b" --label diagnosis_half --prevalence 0.5 --label-auc "$AUC"
synth --out "$tmp/c" --label null_label --prevalence 0.3 --null-label
# Everything but the label must be the same in the three cohorts.
for d in b c; do
	cmp <(cut -f1-7 "$tmp/a/participants.tsv") <(cut -f1-7 "$tmp/$d/participants.tsv")
	diff -r -q -x participants.tsv -x planted.tsv -x experiment.toml "$tmp/a" "$tmp/$d"
done
cp -r "$tmp/a" "$OUT/cohort"
paste "$tmp/a/participants.tsv" <(cut -f8 "$tmp/b/participants.tsv") \
	<(cut -f8 "$tmp/c/participants.tsv") >"$OUT/cohort/participants.tsv"
grep '^diagnosis_half' "$tmp/b/planted.tsv" >>"$OUT/cohort/planted.tsv" || true
grep '^null_label' "$tmp/c/planted.tsv" >>"$OUT/cohort/planted.tsv" || true
# The generator's statement of each label's oracle, for the record.
grep -h -A1 '^# Planted class label' "$tmp/a/experiment.toml" >"$OUT/cohort/oracle.txt"
grep -h '^#   diagnosis_half\|^#   null_label' "$tmp/b/experiment.toml" "$tmp/c/experiment.toml" >>"$OUT/cohort/oracle.txt"
cat "$OUT/cohort/oracle.txt"
if /usr/bin/python3 -c 'import numpy, sklearn' 2>/dev/null; then
	/usr/bin/python3 bench/labels_oracle.py "$OUT/cohort" | tee -a "$OUT/cohort/oracle.txt"
fi
cp bench/labels.toml "$OUT/cohort/experiment.toml"
"$tmp/skein" check "$OUT/cohort/experiment.toml" >/dev/null
echo "load before: $(uptime)"
start=$(date +%s)
/usr/bin/time -f 'CPU: %U s user, %S s system; wall %e s' \
	"$tmp/skein" run "$OUT/cohort/experiment.toml" --out "$OUT/run" --jobs "$JOBS" --no-history
echo "wall time: $(($(date +%s) - start)) s"
echo "load after: $(uptime)"
