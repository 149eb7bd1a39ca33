#!/usr/bin/env bash
# The memory benchmark of the ridge baseline: peak RSS of a whole skein run
# (loading, the folds, writing the run folder) against the size of the
# cohort's matrices, for each cohort.storage.
#
# It invents a cohort of N participants with one p × p functional matrix
# each: with GEN=synth (default) by "skein synth" (float64 .npy files, as
# bench/scale.sh), with GEN=py by bench/memory_cohort.py (float32 .npy
# files, written one at a time: the generator for N in the thousands and p
# in the hundreds, where skein synth would hold the cohort in memory). It
# then runs, for each storage in STORAGE, a 5-fold run (one repeat) of
# ridge on the functional edges, its penalty per score chosen by INNER
# ("kfold": inner 5-fold CV over the 13 default alphas; "loo": efficient
# leave-one-out), and prints wall and CPU seconds and the peak RSS from
# /usr/bin/time -v, beside two sizes of the data:
#   float64 matrices  N · p² · 8 bytes, the cohort as float64 p × p matrices
#                     (what storage = "float64" holds);
#   float32 store     N · p(p+1)/2 · 4 bytes, what storage = "float32" holds.
# and the ratio of the peak to each. Each line also gives the load average
# when the run ended: on a shared machine seconds vary with it, peak RSS
# hardly.
#
# usage: bench/memory.sh   (from the repository root)
# knobs: N=2000 P=100 STORAGE="float64 float32" INNER=kfold GEN=synth
#        BUILD=gonum (or openblas: the fast build, CGO_LDFLAGS=-lopenblas)
#        JOBS= (skein run --jobs; default: skein's choice)
#        KEEP=DIR (keep the cohort and runs in DIR; reused when it holds one)
set -euo pipefail
cd "$(dirname "$0")/.."
N=${N:-2000}
P=${P:-100}
STORAGE=${STORAGE:-"float64 float32"}
INNER=${INNER:-kfold}
GEN=${GEN:-synth}
BUILD=${BUILD:-gonum}
JOBS=${JOBS:-}

work=${KEEP:-$(mktemp -d)}
mkdir -p "$work"
[[ -z ${KEEP:-} ]] && trap 'rm -rf "$work"' EXIT
if [[ $BUILD == openblas ]]; then
  CGO_LDFLAGS=-lopenblas go build -tags openblas -o "$work/skein" ./cmd/skein
else
  go build -o "$work/skein" ./cmd/skein
fi

cohort=$work/cohort
if [[ ! -f $cohort/participants.tsv ]]; then
  case $GEN in
  synth) "$work/skein" synth -n "$N" -p "$P" -targets 2 -format npy -seed 1 -out "$cohort" -force >/dev/null ;;
  py) /usr/bin/python3 bench/memory_cohort.py "$cohort" "$N" "$P" ;;
  *) echo "GEN=$GEN: want synth or py" >&2; exit 2 ;;
  esac
fi

echo "load before: $(uptime)"
awk -v n="$N" -v p="$P" 'BEGIN {
  printf "cohort: N = %d, p = %d (%d edges); float64 matrices %.1f MiB, float32 store %.1f MiB\n",
    n, p, p*(p-1)/2, n*p*p*8/2^20, n*p*(p+1)/2*4/2^20 }'
for storage in $STORAGE; do
  cat >"$work/$storage.toml" <<TOML
seed = 1
[cohort]
participants = "$cohort/participants.tsv"
targets = ["recall", "fluency"]
storage = "$storage"
[cohort.functional]
files = "$cohort/fc/{participant_id}_fc.npy"
[preprocess.functional]
transform = "fisher-z"
clip = 1e-07
diagonal = "zero"
[cv]
folds = 5
repeats = 1
[[model]]
name = "ridge"
[model.ridge]
input = "functional"
inner = "$INNER"
TOML
  out=$work/run-$storage
  rm -rf "$out"
  /usr/bin/time -v -o "$work/time-$storage" "$work/skein" run "$work/$storage.toml" --out "$out" --force --no-history \
    ${JOBS:+--jobs "$JOBS"} >/dev/null 2>"$work/stderr-$storage" || { cat "$work/stderr-$storage" >&2; exit 1; }
  load=$(cut -d' ' -f1 /proc/loadavg)
  awk -v n="$N" -v p="$P" -v storage="$storage" -v load="$load" -F': ' '
    /Elapsed \(wall clock\)/ { k = split($2, t, ":"); wall = (k == 3 ? t[1]*3600 + t[2]*60 + t[3] : t[1]*60 + t[2]) }
    /User time/ { cpu += $2 } /System time/ { cpu += $2 }
    /Maximum resident set size/ { rss = $2 / 1024 }
    END { printf "storage %-8s %8.1f s  cpu %8.1f s  peak %7.0f MiB  %.2f× the float64 matrices  %.2f× the float32 store  (load %s)\n",
      storage, wall, cpu, rss, rss / (n*p*p*8/2^20), rss / (n*p*(p+1)/2*4/2^20), load }' "$work/time-$storage"
done
echo "load after: $(uptime)"
