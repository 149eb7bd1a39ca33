#!/usr/bin/env bash
# Epoch time of the reference network against the number of regions p (at
# N = 275) and against the number of participants N (at p = 116), with the
# arithmetic of an epoch and the rate achieved, as the Markdown table of
# README.md ("Speed"). FLOPs are counted as 2·m·n·k per matrix product,
# forward and backward (see bench/cmd/refnet).
#
# usage: bench/scaling.sh   (from the repository root)
# knobs: PS="68 116 268 400" NS="100 275 550" BUILDS="openblas gonum"
#        VECTOR=0 (the OpenBLAS build without the vector loops, see bench/build.sh)
#        EPOCHS=3 BATCH=16
# skein runs its products single-threaded inside OpenBLAS and spreads
# them, with its other loops, over GOMAXPROCS goroutines (all cores).
set -euo pipefail
cd "$(dirname "$0")/.."
PS=${PS:-"68 116 268 400"}
NS=${NS:-"100 275 550"}
BUILDS=${BUILDS:-"openblas gonum"}
EPOCHS=${EPOCHS:-3}
BATCH=${BATCH:-16}

bin=$(mktemp -d)
trap 'rm -rf "$bin"' EXIT
# shellcheck source=bench/build.sh
source bench/build.sh
build_refnet "$bin"

row() { # build p n
  "$bin/refnet-$1" -p "$2" -n "$3" -batch "$BATCH" -epochs "$EPOCHS" -threads 1 |
    sed -n 's/.*epoch median \([0-9.]*\) s.*; \([0-9.]*\) GFLOP an epoch, \([0-9.]*\) GFLOP\/s; \([0-9.]*\) allocations a step; max RSS \([0-9]*\) MiB.*/\1 \2 \3 \4 \5/p' |
    { read -r s g r a m; printf '| %s | %s | %s | %s | %s | %s | %s | %s |\n' "$1" "$2" "$3" "$g" "$s" "$r" "$a" "$m"; }
}
echo "load before: $(uptime)"
echo "| build | p | N | GFLOP an epoch | s an epoch | GFLOP/s | allocations a step | max RSS MiB |"
echo "|---|---|---|---|---|---|---|---|"
for build in $BUILDS; do
  for p in $PS; do row "$build" "$p" 275; done
  for n in $NS; do [[ $n == 275 ]] || row "$build" 116 "$n"; done
done
echo "load after: $(uptime)"
