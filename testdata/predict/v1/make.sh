#!/bin/sh
# Fixture for cmd/skein TestPredictReadsVersion1: a fold model saved by skein
# before fitted.json version 2 (commit c1dccbd, whose fitted.json holds the
# target preparation as confounds, confound_coef and target_scaling), and
# what that skein's "skein predict" wrote for it. The cohort is invented
# (skein synth); two covariates were blanked (n/a) so that the training
# means fill them. Run from this folder with SKEIN set to a skein built at
# commit c1dccbd.
set -e
SKEIN=${SKEIN:-skein}
tmp=$(mktemp -d)
"$SKEIN" synth --out "$tmp/cohort" --n 24 --p 8 --seed 11 --motion 0.3 --missing 0.05
# Functional matrices only; age of sub-003 and motion of sub-008 missing.
rm -r "$tmp/cohort/sc"
sed -i '/^\[cohort.structural\]/,/^$/d; /^\[preprocess.structural\]/,$d' "$tmp/cohort/experiment.toml"
sed -i '0,/^\[cohort\]/s//seed = 7\n\n[cohort]/' "$tmp/cohort/experiment.toml"
cat >>"$tmp/cohort/experiment.toml" <<'TOML'

[cv]
folds = 3
repeats = 1
confounds = ["age", "sex", "motion"]

[[model]]
name = "ridge"
[model.ridge]
input = "functional"
TOML
awk -F'\t' 'BEGIN{OFS="\t"} NR==4{$4="n/a"} NR==9{$6="n/a"} {print}' "$tmp/cohort/participants.tsv" >"$tmp/p"
mv "$tmp/p" "$tmp/cohort/participants.tsv"
"$SKEIN" run "$tmp/cohort/experiment.toml" --out "$tmp/run" --no-history
"$SKEIN" predict "$tmp/run/models/ridge/r1-f1" "$tmp/cohort/experiment.toml" --out "$tmp/predict.csv"
rm -rf cohort model
cp -r "$tmp/cohort" cohort
cp -r "$tmp/run/models/ridge/r1-f1" model
chmod 644 model/*
cp "$tmp/predict.csv" predict.csv
rm -rf "$tmp"
