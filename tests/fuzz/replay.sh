#!/bin/sh
# replay.sh -- 'make check' replays every fuzz harness's seed corpus and saved regressions
# (tests/fuzz/corpus/NAME, tests/fuzz/regressions/NAME) through tests/fuzz/replay_NAME, built
# with the rest of the suite (under the sanitizers in the sanitizer build).
: "${top_srcdir:?set top_srcdir}" "${builddir:?set builddir}"
pass=0
fail=0
for h in csv terms spec model predict; do
  bin=$builddir/tests/fuzz/replay_$h
  dirs=$top_srcdir/tests/fuzz/corpus/$h
  if [ -d "$top_srcdir/tests/fuzz/regressions/$h" ]; then
    dirs="$dirs $top_srcdir/tests/fuzz/regressions/$h"
  fi
  # shellcheck disable=SC2086  # the folders are separate words
  if "$bin" $dirs; then
    pass=$((pass + 1))
    echo "ok   replay $h"
  else
    fail=$((fail + 1))
    echo "FAIL replay $h"
  fi
done
echo "$pass passed, $fail failed"
[ "$fail" -eq 0 ]
