#!/bin/sh
# demo.sh -- check that the shipped demo data are what gen_demo makes from the default seed.
#
# Usage: data/demo.sh GEN_DEMO DATA_DIR
#   GEN_DEMO  path of the compiled data/gen_demo.c, e.g. built with
#             gcc -std=c99 -O2 data/gen_demo.c $(pkg-config --cflags --libs gsl) -o /tmp/gen_demo
#   DATA_DIR  folder holding pumps.csv.gz and stops.csv.gz (normally data/)
# Regenerates both files in a temporary folder, compares them byte for byte with the
# decompressed shipped files, and exits 0 when both match, 1 when either differs or cannot be
# made, 2 on a usage error.

if [ $# -ne 2 ]; then
  echo "usage: demo.sh GEN_DEMO DATA_DIR" >&2
  exit 2
fi
gen=$1
dir=$2
if [ ! -x "$gen" ]; then
  echo "demo.sh: '$gen': not an executable file" >&2
  exit 2
fi

tmp=$(mktemp -d "${TMPDIR:-/tmp}/ballast-demo.XXXXXX") || exit 1
trap 'rm -rf "$tmp"' EXIT
trap 'exit 1' HUP INT TERM

if ! "$gen" "$tmp/pumps.csv" "$tmp/stops.csv"; then
  echo "demo.sh: '$gen' failed" >&2
  exit 1
fi

status=0
for name in pumps stops; do
  shipped=$dir/$name.csv.gz
  if [ ! -r "$shipped" ]; then
    echo "demo.sh: '$shipped': cannot read" >&2
    status=1
  elif ! gzip -dc "$shipped" > "$tmp/$name.shipped" ; then
    echo "demo.sh: '$shipped': not a valid gzip file" >&2
    status=1
  elif cmp -s "$tmp/$name.shipped" "$tmp/$name.csv"; then
    echo "demo.sh: $name.csv: identical ($(wc -l < "$tmp/$name.csv") lines)"
  else
    echo "demo.sh: $name.csv: differs from '$shipped'" >&2
    cmp "$tmp/$name.shipped" "$tmp/$name.csv" >&2
    status=1
  fi
done
exit $status
