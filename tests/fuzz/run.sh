#!/bin/sh
# run.sh -- build the libFuzzer harnesses with clang and run each for a while.
#
#   tests/fuzz/run.sh BUILD_DIR SECONDS [HARNESS...]
#
# BUILD_DIR is a configured build folder (it holds config.h); everything goes under
# BUILD_DIR/fuzz: the library compiled with -fsanitize=fuzzer-no-link,address,undefined
# (obj/), the harnesses (fuzz_csv, ...), the working corpora (corpus/NAME, seeded from
# tests/fuzz/corpus/NAME; the inputs of tests/fuzz/regressions/NAME are run first, each
# once), crash inputs (artifacts/NAME/) and
# the logs (NAME.log).  HARNESS is csv, terms, spec, model or predict (default: all five).
# SECONDS 0 builds only.  Environment: CC (default clang-14, else clang), FUZZ_JOBS (default
# 1), FUZZ_ARGS (more libFuzzer options).  Exit status 1 when a harness found a crash, leak or
# sanitizer report (its input is in artifacts/NAME/), 2 for a usage or build error.
set -u
if [ $# -lt 2 ]; then
  echo "usage: $0 BUILD_DIR SECONDS [csv|terms|spec|model|predict]..." >&2
  exit 2
fi
bld=$1
secs=$2
shift 2
here=$(cd "$(dirname "$0")" && pwd)
top=$(cd "$here/../.." && pwd)
harnesses=${*:-csv terms spec model predict}
if [ ! -f "$bld/config.h" ]; then
  echo "$0: '$bld' has no config.h: run configure there first" >&2
  exit 2
fi
if [ -z "${CC:-}" ]; then
  if command -v clang-14 >/dev/null 2>&1; then CC=clang-14; else CC=clang; fi
fi
out=$bld/fuzz
mkdir -p "$out/obj" || exit 2
cflags="-g -O1 -fno-omit-frame-pointer -fsanitize=address,undefined -fno-sanitize-recover=all"
cflags="$cflags -I$bld -I$top/src/lib"
cflags="$cflags $(pkg-config --cflags gsl zlib jansson)"
libs="$(pkg-config --libs gsl zlib jansson) -lpthread -lm"

# The library's sources as Makefile.am lists them.
srcs=$(sed -n '/^libballast_core_la_SOURCES/,/^[^	 ]/p' "$top/Makefile.am" \
       | tr ' \\\t=' '\n\n\n\n' | grep '^src/lib/.*\.c$' | sort -u)
# An object is rebuilt when its source or any library header is newer (headers change
# structures that other files' objects lay out).
newest_h=$(ls -t "$top"/src/lib/*.h "$bld/config.h" | head -n 1)
objs=
for s in $srcs; do
  o=$out/obj/$(basename "$s" .c).o
  if [ ! -f "$o" ] || [ "$top/$s" -nt "$o" ] || [ "$newest_h" -nt "$o" ]; then
    $CC $cflags -fsanitize=fuzzer-no-link -c "$top/$s" -o "$o" || exit 2
  fi
  objs="$objs $o"
done

status=0
for h in $harnesses; do
  bin=$out/fuzz_$h
  $CC $cflags -fsanitize=fuzzer "$here/fuzz_$h.c" $objs $libs -o "$bin" || exit 2
  [ "$secs" -gt 0 ] || continue
  mkdir -p "$out/corpus/$h" "$out/artifacts/$h"
  : >"$out/$h.regression.log"
  cp -p "$here/corpus/$h"/* "$out/corpus/$h/" 2>/dev/null
  # The saved regressions run first, one by one (a bug not yet fixed fails here, and is
  # reported, but does not stop the fuzzing of the rest).
  for r in "$here/regressions/$h"/*; do
    [ -f "$r" ] || continue
    if ! "$bin" -timeout=10 "$r" >>"$out/$h.regression.log" 2>&1; then
      echo "fuzz_$h: regression still fails: $r (see $out/$h.regression.log)" >&2
      status=1
    fi
  done
  jobs=
  # -jobs=N (N > 1) writes each worker's log to fuzz-K.log in the current folder: run in OUT
  [ "${FUZZ_JOBS:-1}" -gt 1 ] && jobs="-jobs=$FUZZ_JOBS -workers=$FUZZ_JOBS"
  dict=
  [ -f "$here/$h.dict" ] && dict="-dict=$here/$h.dict"
  echo "fuzz_$h: $secs s, log in $out/$h.log" >&2
  # shellcheck disable=SC2086
  (cd "$out" && "$bin" -max_total_time="$secs" -max_len=4096 -rss_limit_mb=2048 -timeout=10 \
    -print_final_stats=1 -artifact_prefix="$out/artifacts/$h/" $dict $jobs ${FUZZ_ARGS:-} \
    "$out/corpus/$h" >"$out/$h.log" 2>&1)
  rc=$?
  tail -n 12 "$out/$h.log" | grep -E 'stat::|#[0-9]+.*DONE|cov:' | tail -n 6 >&2
  if [ $rc -ne 0 ] || ls "$out/artifacts/$h"/* >/dev/null 2>&1; then
    echo "fuzz_$h: found something (exit $rc): see $out/artifacts/$h/ and $out/$h.log" >&2
    status=1
  fi
done
exit $status
