#!/usr/bin/env bash
# Which parallelism suits a cross-validated run of the reference network:
# a K-fold run (K networks, each trained on K−1 folds) timed on one core,
# then on two cores with (a) folds in parallel (each network's pool
# helpers take the cores the other leaves idle), (b) sequential folds,
# each network spread over both cores by its pool, and, OpenBLAS only,
# (c) sequential folds with two-thread OpenBLAS as well (oversubscribed:
# its threads spin-wait). Products inside OpenBLAS are single-threaded
# in (a) and (b). For the pure-Go and the OpenBLAS builds; prints wall
# seconds and the speed-up of each over one core. The rule in
# train/parallel.go is read off these numbers.
#
# usage: bench/parallel.sh   (from the repository root)
# knobs: SIZES="68 116 268" BUILDS="gonum openblas" N=275 BATCH=16 EPOCHS=2 FOLDS=5
#        VECTOR=0 (the OpenBLAS build without the vector loops, see bench/build.sh)
set -euo pipefail
cd "$(dirname "$0")/.."
SIZES=${SIZES:-"68 116 268"}
BUILDS=${BUILDS:-"gonum openblas"}
N=${N:-275}
BATCH=${BATCH:-16}
EPOCHS=${EPOCHS:-2}
FOLDS=${FOLDS:-5}

bin=$(mktemp -d)
trap 'rm -rf "$bin"' EXIT
# shellcheck source=bench/build.sh
source bench/build.sh
build_refnet "$bin"
wall() { sed -n 's/.*wall \([0-9.]*\) s.*/\1/p'; }

echo "load before: $(uptime)"
printf '%-9s %-5s %-28s %10s %9s\n' build p layout "wall s" speed-up
for p in $SIZES; do
  for build in $BUILDS; do
    one=$(taskset -c 0 "$bin/refnet-$build" -p "$p" -n "$N" -batch "$BATCH" -epochs "$EPOCHS" -folds "$FOLDS" -procs 1 -threads 1 -jobs 1 | wall)
    printf '%-9s %-5s %-28s %10.2f %9s\n' "$build" "$p" "1 core" "$one" 1.00
    layouts=("2 jobs:-jobs 2 -threads 1" "1 job:-jobs 1 -threads 1")
    [[ $build == openblas ]] && layouts+=("1 job, 2 BLAS threads:-jobs 1 -threads 2")
    for l in "${layouts[@]}"; do
      name=${l%%:*}
      # shellcheck disable=SC2086
      t=$("$bin/refnet-$build" -p "$p" -n "$N" -batch "$BATCH" -epochs "$EPOCHS" -folds "$FOLDS" -procs 2 ${l#*:} | wall)
      awk -v b="$build" -v p="$p" -v n="$name" -v t="$t" -v o="$one" 'BEGIN {printf "%-9s %-5s %-28s %10.2f %9.2f\n", b, p, n, t, o/t}'
    done
  done
done
echo "load after: $(uptime)"
