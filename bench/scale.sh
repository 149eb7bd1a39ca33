#!/usr/bin/env bash
# The scale benchmark of the ridge baseline: skein's ridge run and
# scikit-learn's beside it on one invented cohort, in one invocation.
#
# It invents a cohort (skein synth, NumPy matrices), then times, for the
# pure-Go and the fast build (bench/build.sh's two builds of skein):
#   kfold  a 5-fold run (one repeat) of ridge on the functional edges, its
#          penalty per score chosen by inner 5-fold CV over the 13 default
#          alphas ([model.ridge] inner = "kfold", the default);
#   loo    the same with efficient leave-one-out (inner = "loo");
#   perm   the kfold run with a 1000-permutation test of ridge
#          ([permutation] count = 1000); its line gives the run and, as
#          "test", the run minus the kfold run;
# and bench/scale_sklearn.py on the same cohort: GridSearchCV(Pipeline(
# StandardScaler, Ridge)) with inner 5-fold over the same 13 alphas, and
# Pipeline(StandardScaler, RidgeCV) (efficient leave-one-out). skein's
# seconds are whole runs (loading and writing included; peak RSS from
# /usr/bin/time); scikit-learn's are fitting and predicting only. Each line
# gives wall seconds and CPU seconds (all threads): on a shared machine the
# CPU seconds are the steadier figure. Ratios are of wall seconds.
#
# usage: bench/scale.sh   (from the repository root)
# knobs: N=2000 P=100 TARGETS=2 BUILDS="gonum openblas" PERM="gonum openblas"
#        (the builds that run the permutation test; "" for none) SKLEARN=1
#        (0: skip scikit-learn) KEEP=DIR (keep the cohort and runs in DIR)
set -euo pipefail
cd "$(dirname "$0")/.."
N=${N:-2000}
P=${P:-100}
TARGETS=${TARGETS:-2}
BUILDS=${BUILDS:-"gonum openblas"}
PERM=${PERM-gonum openblas}
SKLEARN=${SKLEARN:-1}

work=${KEEP:-$(mktemp -d)}
mkdir -p "$work"
[[ -z ${KEEP:-} ]] && trap 'rm -rf "$work"' EXIT
go build -o "$work/skein-gonum" ./cmd/skein
CGO_LDFLAGS=-lopenblas go build -tags openblas -o "$work/skein-openblas" ./cmd/skein

cohort=$work/cohort
if [[ ! -f $cohort/participants.tsv ]]; then
  "$work/skein-gonum" synth -n "$N" -p "$P" -targets "$TARGETS" -format npy -seed 1 -out "$cohort" -force >/dev/null
fi
targets=$(sed -n 's/^targets = \[\(.*\)\]/\1/p' "$cohort/experiment.toml")

# experiment NAME INNER PERMUTATIONS writes an experiment file.
experiment() {
  cat >"$work/$1.toml" <<TOML
seed = 1
[cohort]
participants = "$cohort/participants.tsv"
targets = [$targets]
[cohort.functional]
files = "$cohort/fc/{participant_id}_fc.npy"
[preprocess.functional]
transform = "fisher-z"
clip = 1e-07
diagonal = "zero"
[cv]
folds = 5
repeats = 1
$([[ $3 -gt 0 ]] && printf '[permutation]\ncount = %d\nmodels = ["ridge"]\n' "$3")
[[model]]
name = "ridge"
[model.ridge]
input = "functional"
inner = "$2"
TOML
}
experiment kfold kfold 0
experiment loo loo 0
experiment perm kfold 1000

# run BUILD NAME prints "seconds peak-MiB cpu-seconds" of one skein run.
run() {
  local out=$work/run-$1-$2
  rm -rf "$out"
  /usr/bin/time -f '%e %M %U %S' -o "$work/time" "$work/skein-$1" run "$work/$2.toml" --out "$out" --force --no-history >/dev/null 2>"$work/stderr" ||
    { cat "$work/stderr" >&2; exit 1; }
  awk '{printf "%.1f %.0f %.1f\n", $1, $2/1024, $3+$4}' "$work/time"
}

echo "load before: $(uptime)"
echo "cohort: N = $N, p = $P ($((P * (P - 1) / 2)) edges), $TARGETS scores; 5 outer folds, 13 alphas"
declare -A secs
if [[ $SKLEARN == 1 ]]; then
  while read -r method s rest; do
    secs[$method]=$s
    printf '%-28s %8s s  %s\n' "scikit-learn $method" "$s" "$rest"
  done < <(bench/scale_sklearn.py "$cohort" --targets "$(tr -d '" ' <<<"$targets")")
fi
for build in $BUILDS; do
  for name in kfold loo $([[ " $PERM " == *" $build "* ]] && echo perm); do
    read -r s mib cpu < <(run "$build" "$name")
    ratio=""
    case $name in
    kfold) [[ -n ${secs[gridsearch]:-} ]] && ratio=$(awk -v a="$s" -v b="${secs[gridsearch]}" 'BEGIN {printf "%.2f× GridSearchCV", a/b}')
      secs[kfold-$build]=$s ;;
    loo) [[ -n ${secs[ridgecv]:-} ]] && ratio=$(awk -v a="$s" -v b="${secs[ridgecv]}" 'BEGIN {printf "%.2f× RidgeCV", a/b}') ;;
    perm) ratio=$(awk -v a="$s" -v b="${secs[kfold-$build]}" 'BEGIN {printf "test %.1f s", a-b}') ;;
    esac
    printf '%-28s %8s s  cpu %7s s  %6s MiB  %s\n' "skein $build $name" "$s" "$cpu" "$mib" "$ratio"
  done
done
echo "load after: $(uptime)"
