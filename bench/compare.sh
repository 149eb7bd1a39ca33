#!/usr/bin/env bash
# Side-by-side benchmark: the reference network trained through skein
# (float32; the pure-Go build and the fast build, OpenBLAS with the vector
# loops of GOEXPERIMENT=simd: see bench/build.sh) and through PyTorch,
# in alternating runs, at each size in SIZES. PyTorch runs in two settings
# of its BLAS threads, OPENBLAS_NUM_THREADS=1 and =THREADS (its own threads
# THREADS in both); the faster median of the two is PyTorch's time. Prints
# the median seconds per epoch of each and the ratios skein / PyTorch, and
# the arithmetic floor of an epoch: its GFLOP over the rate of one large
# OpenBLAS sgemm on THREADS threads (refnet -sgemm), measured in the same
# alternation.
#
# PROCS=1 THREADS=1 compares one core each (skein's GOMAXPROCS, PyTorch's
# threads): under heavy load from other work, threads that wait for each
# other suffer most, and this comparison is the fairer one.
#
# BEFORE=REV adds, to every round, the pure-Go build of git revision REV
# (for example a commit before a change), so that before and after are
# measured side by side.
#
# The PyTorch side is the shared script torch_reference.py, used as it is
# from ${SHARED:-../shared}/bench/ (relative to the repository root), run
# with Debian's python3-torch (/usr/bin/python3).
#
# FLOOR_CORETYPE=NAME adds, to every round, the large sgemm with
# OPENBLAS_CORETYPE=NAME, and prints the floor at its rate too: on a
# processor with AVX-512 whose environment names the AVX2 kernels
# (OPENBLAS_CORETYPE=Haswell), FLOOR_CORETYPE=SkylakeX gives the rate of
# OpenBLAS's AVX-512 kernels, about twice as high, which skein's own
# products use (internal/gemm picks its AVX-512 kernel at run time).
#
# usage: bench/compare.sh            (from the repository root)
# knobs: SIZES="116 268" N=275 BATCH=16 EPOCHS=4 REPS=3 THREADS=2 SHARED=../shared
#        VECTOR=0 (the OpenBLAS build without the vector loops) BEFORE=REV
#        PROCS=C (skein's GOMAXPROCS; default all cores) FLOOR_CORETYPE=NAME
#
# THREADS is PyTorch's thread count. skein uses every core (GOMAXPROCS)
# through its own goroutines, with single-threaded OpenBLAS products:
# OpenBLAS threads spin-wait between calls and would compete with them.
#
# Other work on the machine slows every side: run it on a quiet machine
# (see uptime, printed before and after) and compare medians.
set -euo pipefail
cd "$(dirname "$0")/.."
SIZES=${SIZES:-"116 268"}
N=${N:-275}
BATCH=${BATCH:-16}
EPOCHS=${EPOCHS:-4}
REPS=${REPS:-3}
THREADS=${THREADS:-2}
SHARED=${SHARED:-../shared}
TORCH_SCRIPT="$SHARED/bench/torch_reference.py"
PYTHON=${PYTHON:-/usr/bin/python3}
[[ -f $TORCH_SCRIPT ]] || { echo "compare.sh: $TORCH_SCRIPT not found (set SHARED)" >&2; exit 2; }

bin=$(mktemp -d)
trap 'rm -rf "$bin"' EXIT
# shellcheck source=bench/build.sh
source bench/build.sh
build_refnet "$bin"
sides="gonum openblas torch1 torchT sgemm"
[[ -n ${FLOOR_CORETYPE:-} ]] && sides="$sides sgemmF"
if [[ -n ${BEFORE:-} ]]; then
  git archive "$BEFORE" | tar -x -C "$bin" --one-top-level=before
  (cd "$bin/before" && go build -o "$bin/refnet-before" ./bench/cmd/refnet)
  sides="before $sides"
fi

# epoch prints the median seconds per epoch from a result line of refnet or
# of torch_reference.py ("... epoch median 1.234 s ...").
epoch() { sed -n 's/.*epoch median \([0-9.]*\) s.*/\1/p'; }
median() { sort -g | awk '{v[NR]=$1} END {print (NR%2 ? v[(NR+1)/2] : (v[NR/2]+v[NR/2+1])/2)}'; }

# OpenBLAS picks its kernels from the processor's identity, which some
# virtual machines hide (it then takes its generic SSE3 kernels, several
# times slower): OPENBLAS_CORETYPE names them instead, for skein's fast
# build and for PyTorch alike.
echo "OPENBLAS_CORETYPE=${OPENBLAS_CORETYPE:-(unset)}"
echo "load before: $(uptime)"
declare -A times gflop
rates=""
ratesF=""
for p in $SIZES; do
  for ((r = 1; r <= REPS; r++)); do
    for side in $sides; do
      if [[ $side == torch1 ]]; then
        line=$(OPENBLAS_NUM_THREADS=1 "$PYTHON" "$TORCH_SCRIPT" "$p" "$N" "$BATCH" "$EPOCHS" "$THREADS" float32)
        line="torch OPENBLAS_NUM_THREADS=1: $line"
      elif [[ $side == torchT ]]; then
        line=$(OPENBLAS_NUM_THREADS=$THREADS "$PYTHON" "$TORCH_SCRIPT" "$p" "$N" "$BATCH" "$EPOCHS" "$THREADS" float32)
        line="torch OPENBLAS_NUM_THREADS=$THREADS: $line"
      elif [[ $side == sgemmF ]]; then
        line=$(OPENBLAS_CORETYPE=$FLOOR_CORETYPE "$bin/refnet-openblas" -sgemm -threads "$THREADS")
        echo "  run $r: OPENBLAS_CORETYPE=$FLOOR_CORETYPE: $line"
        ratesF+="$(echo "$line" | sed -n 's/.*: \([0-9.]*\) GFLOP\/s.*/\1/p') "
        continue
      elif [[ $side == sgemm ]]; then
        line=$("$bin/refnet-openblas" -sgemm -threads "$THREADS")
        echo "  run $r: $line"
        rates+="$(echo "$line" | sed -n 's/.*: \([0-9.]*\) GFLOP\/s.*/\1/p') "
        continue
      else
        line=$("$bin/refnet-$side" -p "$p" -n "$N" -batch "$BATCH" -epochs "$EPOCHS" -threads 1 -procs "${PROCS:-0}" -dtype float32)
      fi
      echo "  run $r: $line"
      times[$p,$side]+="$(echo "$line" | epoch) "
      [[ $side == openblas ]] && gflop[$p]=$(echo "$line" | sed -n 's/.*; \([0-9.]*\) GFLOP an epoch.*/\1/p')
    done
  done
done
echo "load after: $(uptime)"
echo
rate=$(echo "$rates" | tr ' ' '\n' | grep . | median)
echo "OpenBLAS sgemm on $THREADS threads: median $rate GFLOP/s"
printf '%-6s %9s %9s %9s %10s %10s %14s %14s %10s %14s\n' p "torch1 s" "torchT s" "torch s" "openblas s" "pure-Go s" "openblas/torch" "pure-Go/torch" "floor s" "openblas/floor"
for p in $SIZES; do
  med() { echo "${times[$p,$1]}" | tr ' ' '\n' | grep . | median; }
  t1=$(med torch1)
  tT=$(med torchT)
  o=$(med openblas)
  g=$(med gonum)
  awk -v p="$p" -v t1="$t1" -v tT="$tT" -v o="$o" -v g="$g" -v f="${gflop[$p]}" -v r="$rate" \
    'BEGIN {t = (t1 < tT ? t1 : tT); printf "%-6s %9.3f %9.3f %9.3f %10.3f %10.3f %14.2f %14.2f %10.3f %14.2f\n", p, t1, tT, t, o, g, o/t, g/t, f/r, o/(f/r)}'
  if [[ -n ${FLOOR_CORETYPE:-} ]]; then
    rateF=$(echo "$ratesF" | tr ' ' '\n' | grep . | median)
    awk -v p="$p" -v o="$o" -v f="${gflop[$p]}" -v r="$rateF" -v ct="$FLOOR_CORETYPE" \
      'BEGIN {printf "%-6s sgemm with OPENBLAS_CORETYPE=%s: median %.1f GFLOP/s, floor %.3f s, openblas/floor %.2f\n", p, ct, r, f/r, o/(f/r)}'
  fi
  if [[ -n ${BEFORE:-} ]]; then
    b=$(med before)
    awk -v p="$p" -v b="$b" -v g="$g" -v t1="$t1" -v tT="$tT" -v rev="$BEFORE" \
      'BEGIN {t = (t1 < tT ? t1 : tT); printf "%-6s pure-Go at %s: %.3f s, %.2f x PyTorch; now / then %.2f\n", p, rev, b, b/t, g/b}'
  fi
done
