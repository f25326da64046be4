#!/bin/sh
# snapshot.sh -- record everything the command-line tests and the demo run print and write, so
# that a change meant to keep behaviour (a refactoring) can be shown to keep it byte for byte.
#
# Usage: tests/cli/snapshot.sh BUILDDIR OUTDIR
#   BUILDDIR  the configured build tree holding ballast and data/gen_demo
#   OUTDIR    a new folder: one NAME.snap per CLI script (each ballast run's command, exit
#             status, stdout and stderr, temporary paths replaced by TMP), and demo/, the
#             files 'ballast run data/demo.spec' writes
# Then 'diff -r OLD NEW' compares two records.  interrupt.sh is left out: its output depends
# on when a signal lands.  Exit status: 0 recorded, 1 a script could not run, 2 usage.

if [ $# -ne 2 ]; then
  echo "usage: snapshot.sh BUILDDIR OUTDIR" >&2
  exit 2
fi
build=$(cd "$1" && pwd) || exit 2
src=$(cd "$(dirname "$0")/../.." && pwd)
out=$2
if [ -e "$out" ]; then
  echo "snapshot.sh: '$out' exists; name a new folder" >&2
  exit 2
fi
mkdir -p "$out" || exit 1
out=$(cd "$out" && pwd)

status=0
for t in "$src"/tests/cli/*.sh; do
  name=$(basename "$t" .sh)
  case $name in lib | snapshot | interrupt) continue ;; esac
  BALLAST_SNAPSHOT=$out/$name.snap BALLAST=$build/ballast GEN_DEMO=$build/data/gen_demo \
    top_srcdir=$src builddir=$build sh "$t" >"$out/$name.log" 2>&1 || status=1
  rm -f "$out/$name.log"
done

mkdir "$out/demo.tmp" && cp "$src"/data/demo.spec "$src"/data/*.csv.gz "$out/demo.tmp/" \
  && (cd "$out/demo.tmp" && "$build/ballast" run demo.spec -o ../demo -q >../demo.stdout \
    2>../demo.stderr; echo "rc $?" >>../demo.stdout) || status=1
rm -rf "$out/demo.tmp"
exit $status
