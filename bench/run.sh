#!/bin/sh
# run.sh -- 'make bench': generate the data sets, run each measurement in its own process,
# print the table (see bench/README.md).  Usage: run.sh BUILDDIR.
#
# Environment: BENCH_OUT (data and results, default BUILDDIR/bench/out, gitignored),
# BENCH_ROWS / BENCH_LIN_ROWS / BENCH_P50_ROWS (row counts, default 2000000 / 200000 / 400000),
# BENCH_REGEN=1 (remake the data even when present), BENCH_IDLE_WAIT (seconds to wait for a
# quiet machine before each step, default 20), BENCH_TRIES (runs of a step disturbed by other
# work before its quietest run is kept, default 3).
#
# Exit 0 when every figure was measured, whether it passed or missed its target (this is a
# benchmark, not a test); 1 when a step failed and a figure is missing.
set -u
B=${1:?usage: run.sh BUILDDIR}
BENCH="$B/bench/bench_irls"
OUT=${BENCH_OUT:-"$B/bench/out"}
WAIT=${BENCH_IDLE_WAIT:-20}
TRIES=${BENCH_TRIES:-3}
RES="$OUT/results.txt"
start=$(date +%s)
failed=0

mkdir -p "$OUT" || exit 1
: > "$RES" || exit 1

# step TITLE OPENBLAS_THREADS PROGRAM ARGS...: one measurement in its own process; its KEY VALUE
# lines go to $RES, its account to stderr.  The BLAS thread count is fixed at process start.
# A step that other processes disturbed (bench_irls prints TAG.disturbed 1) is run again, up
# to $TRIES times in all; the first undisturbed try, or else the quietest, is kept.
step () {
  title=$1 blas=$2
  shift 2
  echo "== $title" >&2
  best="" best_load=""
  try=1
  while [ "$try" -le "$TRIES" ]; do
    "$BENCH" idle "$WAIT"
    if ! OPENBLAS_NUM_THREADS=$blas "$@" > "$OUT/step.$try"; then
      echo "bench: step '$title' failed" >&2
      failed=1
      return
    fi
    load=$(awk '$1 ~ /\.others_cpu$/ { print $2 }' "$OUT/step.$try")
    load=${load:-0}
    if [ -z "$best" ] || awk -v a="$load" -v b="$best_load" 'BEGIN { exit !(a < b) }'; then
      best=$try best_load=$load
    fi
    if ! grep -q '\.disturbed 1$' "$OUT/step.$try"; then
      best=$try
      break
    fi
    try=$((try + 1))
    [ "$try" -le "$TRIES" ] && echo "  (machine was busy: measuring again, try $try)" >&2
  done
  cat "$OUT/step.$best" >> "$RES"
  rm -f "$OUT"/step.*
}

echo "ballast benchmark: $(uname -m), $(nproc 2>/dev/null || echo '?') cores," \
  "data in $OUT" >&2
# The reader and the IRLS kernel beside the machine.  BENCH_IRLS=0 skips this part.
if [ "${BENCH_IRLS:-1}" != 0 ]; then
  echo "== generate data sets (seed fixed; reused when already made)" >&2
  if ! "$BENCH" gen "$OUT" >> "$RES"; then
    echo "bench: data generation failed" >&2
    exit 1
  fi
  step "plain ingest" 1 "$BENCH" ingest "$OUT/big.csv"
  step "gzip ingest" 1 "$BENCH" ingest-gz "$OUT/big.csv.gz"
  step "gamma/log fit, big set, threads 2" 2 "$BENCH" fit "$OUT/big.csv" 2 big_t2 "$OUT"
  step "gamma/log fit, big set, threads 1" 1 "$BENCH" fit "$OUT/big.csv" 1 big_t1 "$OUT"
  step "gamma/log fit, small set (linearity), threads 2" 2 "$BENCH" fit "$OUT/lin.csv" 2 lin_t2 "$OUT"
  step "gamma/log fit, p = 50, threads 2" 2 "$BENCH" fit "$OUT/p50.csv" 2 p50_t2 "$OUT"

  "$BENCH" report "$RES" "$OUT" || failed=1
fi

# The comparer (issue 12's targets): compare, cross-validation, Box-Cox, Tweedie and the
# negative binomial, each beside the one fit it is made of, on BENCH_CMP_ROWS rows (default
# 200000; a list, e.g. "200000 2000000", runs each).  BENCH_CMP=0 skips this part.
if [ "${BENCH_CMP:-1}" != 0 ]; then
  BL="$B/ballast"
  CMP="$B/bench/bench_cmp"
  for rows in ${BENCH_CMP_ROWS:-200000}; do
    D="$OUT/cmp$rows"
    RES="$D/results.txt"
    mkdir -p "$D" && : > "$RES" || exit 1
    echo "== comparer data, $rows rows (seed fixed; reused when already made)" >&2
    "$CMP" gen "$D" "$rows" >> "$RES" || { failed=1; continue; }
    m="--response y --terms x1,x2,x3,x4,x5,site --json -q"
    # shellcheck disable=SC2086  # $m is separate words
    {
      step "the program alone (memory baseline)" 1 "$CMP" time base - -- "$BL" --version
      step "read: an intercept-only fit" 2 "$CMP" time read - -- "$BL" fit "$D/cmp.csv" \
        --response y --json -q
      step "one gamma/log fit" 2 "$CMP" time gam - -- "$BL" fit "$D/cmp.csv" $m \
        --family gamma --link log
      step "one OLS fit" 2 "$CMP" time ols - -- "$BL" fit "$D/cmp.csv" $m --method ols
      step "compare --folds 0" 2 "$CMP" time c0 "$D/c0.json" -- "$BL" compare "$D/cmp.csv" \
        $m --folds 0
      step "compare --folds 0 --threads 1" 1 "$CMP" time c0t1 "$D/c0t1.json" -- "$BL" compare \
        "$D/cmp.csv" $m --folds 0 --threads 1
      step "compare, 10 folds" 2 "$CMP" time c10 - -- "$BL" compare "$D/cmp.csv" $m
      step "Box-Cox fit" 2 "$CMP" time bc - -- "$BL" fit "$D/cmp.csv" $m --method ols \
        --transform boxcox
      step "gamma/log fit from gzip" 2 "$CMP" time gz - -- "$BL" fit "$D/cmp.csv.gz" $m \
        --family gamma --link log
      step "zlib inflate alone" 1 "$CMP" time zlib - -- zlib "$D/cmp.csv.gz"
      step "gaussian/log fit, Tweedie data" 2 "$CMP" time twg - -- "$BL" fit "$D/tw.csv" $m \
        --family gaussian --link log
      step "Tweedie, power estimated" 2 "$CMP" time tw - -- "$BL" fit "$D/tw.csv" $m \
        --family tweedie --power est
      step "poisson fit, count data" 2 "$CMP" time poi - -- "$BL" fit "$D/nb.csv" $m \
        --family poisson
      step "negative binomial, theta estimated" 2 "$CMP" time nb - -- "$BL" fit "$D/nb.csv" $m \
        --family negative-binomial
    }
    if cmp -s "$D/c0.json" "$D/c0t1.json"; then echo "same.threads 1"; else echo "same.threads 0"
    fi >> "$RES"
    printf '[defaults]\ndata = cmp.csv\nresponse = y\nterms = x1, x2, x3, x4, x5, site\n' \
      > "$D/bench.spec"
    printf 'folds = 0\n[job c]\n[job g]\nfamily = gamma\nlink = log\n' >> "$D/bench.spec"
    printf '[job n]\ndata = nb.csv\nfamily = negative-binomial\n' >> "$D/bench.spec"
    rm -rf "$D/run1" "$D/run2"
    echo "== run --jobs 1 and --jobs 2 (determinism)" >&2
    if "$BL" run -q "$D/bench.spec" -o "$D/run1" --jobs 1 \
       && "$BL" run -q "$D/bench.spec" -o "$D/run2" --jobs 2; then
      if diff -r "$D/run1" "$D/run2" > /dev/null; then echo "same.jobs 1"; else echo "same.jobs 0"
      fi >> "$RES"
    else
      echo "bench: the run determinism step failed" >&2
      failed=1
    fi
    "$CMP" report "$RES" || failed=1
  done
fi
echo "whole run: $(( $(date +%s) - start )) s" >&2
exit $failed
