#!/bin/sh
# typing.sh -- column types by a rule over all of a column's cells, not by where a bad cell
# stands (issue 14, class 2).  A column is numeric when more than half of its non-missing
# cells are numbers, and every other cell of it is then an error naming FILE:LINE:COL with
# the hint '--categorical COL'; otherwise it is categorical.  Each case checks the exit
# status, the message and that the data file's checksum is unchanged.  The rule is the
# project's (doc/data-format.md); the group means that check a categorical fit are the
# closed-form least-squares solution of a one-way layout (common practice, no source).
#
# Run by 'make check' with BALLAST and top_srcdir set; by hand:
#   BALLAST=./ballast top_srcdir=. sh tests/cli/typing.sh

# shellcheck source=tests/cli/lib.sh
. "${top_srcdir:?set top_srcdir to the source tree}/tests/cli/lib.sh"

# kept NAME FILE SUM: FILE still has checksum SUM (taken before the run).
kept () {
  if [ "$(cksum <"$2")" = "$3" ]; then
    pass "$1: '$2' unchanged"
  else
    fail "$1: '$2' unchanged" "checksum changed"
  fi
}

# make_data FILE ROWS AT CELL: FILE with columns y,x,site and ROWS rows; x is numeric
# except that data row AT (1-based; 0: none) holds CELL as written (quotes included).
make_data () {
  python3 - "$1" "$2" "$3" "$4" <<'EOF'
import sys
path, rows, at, cell = sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), sys.argv[4]
with open(path, "w") as f:
    f.write("y,x,site\n")
    for i in range(1, rows + 1):
        x = "%.3f" % (1.25 + (i * 37 % 101) / 13.0)
        y = "%.4f" % (2.5 + 0.75 * float(x) + ((i * 53 % 17) - 8) / 9.0)
        if i == at:
            x = cell
        f.write("%s,%s,%s\n" % (y, x, "abc"[i % 3]))
EOF
}

m='--response y --terms x'
hint="--categorical x for a column meant as labels"

# ---- each typo kind in the first, a middle and the last row: the same error, every place
for kind in 1 2 3 4 5; do
  case $kind in
    1) cell='1.2.3' shown='1.2.3' ;;
    2) cell='"1,234"' shown='1,234' ;;
    3) cell='1e5x' shown='1e5x' ;;
    4) cell='N/A' shown='N/A' ;;
    5) cell='heavy' shown='heavy' ;;
  esac
  for at in 1 20 40; do
    make_data t.csv 40 "$at" "$cell"
    sum=$(cksum <t.csv)
    bl fit t.csv $m
    line=$((at + 1))
    expect_rc "typo $shown at row $at: exit" 1
    expect_err "typo $shown at row $at: message" \
      "ballast: t.csv:$line:2: not a number: '$shown' in column 'x' (39 of its 40 non-missing cells are numbers; $hint)"
    expect_out_empty "typo $shown at row $at: nothing on stdout"
    kept "typo $shown at row $at" t.csv "$sum"
  done
done

# ---- the same through gzip and standard input
make_data t.csv 40 1 '1.2.3'
gzip -c t.csv >t.csv.gz
sum=$(cksum <t.csv.gz)
bl fit t.csv.gz $m
expect_rc "gzip: exit" 1
expect_err "gzip: message" "ballast: t.csv.gz:2:2: not a number: '1.2.3' in column 'x' (39 of its 40"
kept "gzip" t.csv.gz "$sum"
bl_in t.csv fit - $m
expect_rc "stdin: exit" 1
expect_err "stdin: message" "ballast: <stdin>:2:2: not a number: '1.2.3' in column 'x' (39 of its 40"
bl_in t.csv.gz fit - $m
expect_rc "gzip stdin: exit" 1
expect_err "gzip stdin: message" "ballast: <stdin>:2:2: not a number: '1.2.3'"

# ---- two bad cells: the earlier is named, whatever the order of the columns' errors
python3 - <<'EOF'
rows = ["y,x,w"] + ["%d.5,%d.25,%d" % (i, i % 7, 1 + i % 3) for i in range(1, 31)]
rows[25] = "25.5,3.25,N/A"
rows[9] = "9.5,1e5x,2"
open("two.csv", "w").write("\n".join(rows) + "\n")
EOF
bl fit two.csv --response y --terms x --weights w
expect_rc "two bad cells: exit" 1
expect_err "two bad cells: the first named" "ballast: two.csv:10:2: not a number: '1e5x'"

# ---- declared categorical: the same file reads, x as labels
make_data t.csv 40 20 '1.2.3'
bl fit t.csv --response y --terms site --categorical x
expect_rc "--categorical x: exit" 0

# ---- one thread or two, in parts of every size: the same error.  About 1.5 MB, so that
# the two-thread reader splits it (parts of 64 KiB at least, table.h).
for at in 1 15000 30000; do
  make_data big.csv 30000 "$at" '1.2.3'
  sum=$(cksum <big.csv)
  bl fit big.csv $m --threads 1
  expect_rc "big, row $at, 1 thread: exit" 1
  cp "$tmp/.err" err1
  bl fit big.csv $m --threads 2
  expect_rc "big, row $at, 2 threads: exit" 1
  if cmp -s err1 "$tmp/.err"; then
    pass "big, row $at: the same message on 1 and 2 threads"
  else
    fail "big, row $at: the same message on 1 and 2 threads" "$(cat err1) / $(cat "$tmp/.err")"
  fi
  expect_err "big, row $at: message" \
    "ballast: big.csv:$((at + 1)):2: not a number: '1.2.3' in column 'x' (29999 of its 30000"
  kept "big, row $at" big.csv "$sum"
done

# ---- a column mostly of labels is categorical, even when its first cell is a number; the
# number is a level as written.  Its fit is the one-way layout: the intercept is the mean
# of the reference level's rows ('7', first in byte order), each other coefficient the
# difference of its level's mean from it.
python3 - <<'EOF'
labels = ["7", "north", "south", "east"]
rows = ["y,g"]
for i in range(48):
    rows.append("%.3f,%s" % (3.125 + (i * 29 % 23) / 7.0, labels[i % 4]))
open("lab.csv", "w").write("\n".join(rows) + "\n")
ys = {}
for r in rows[1:]:
    y, g = r.split(",")
    ys.setdefault(g, []).append(float(y))
mean = {g: sum(v) / len(v) for g, v in ys.items()}
with open("lab.expect", "w") as f:
    f.write("%r %r\n" % (mean["7"], mean["north"] - mean["7"]))
EOF
read -r b0 bnorth <lab.expect
sum=$(cksum <lab.csv)
bl fit lab.csv --response y --terms g --json
expect_rc "mostly labels: exit" 0
expect_json "mostly labels: the number '7' is the reference level" "coef[0].beta" "$b0" 1e-12
expect_json "mostly labels: g=north" "coef[2].label" '"g=north"'
expect_json "mostly labels: g=north's difference" "coef[2].beta" "$bnorth" 1e-12
save_out lab.json
kept "mostly labels" lab.csv "$sum"
# from a pipe (the column is read a second time from the source's temporary copy), from
# gzip, and on one thread: the same coefficients
bl_in lab.csv fit - --response y --terms g --json
expect_rc "mostly labels, stdin: exit" 0
expect_same_coef "mostly labels, stdin" lab.json
cat lab.csv | "$BALLAST" fit - --response y --terms g --json >pipe.json 2>pipe.err
pipe_rc=$?
if [ "$pipe_rc" -eq 0 ] && python3 - <<'EOF'
import json, sys
a = json.load(open("pipe.json"))["coef"]
b = json.load(open("lab.json"))["coef"]
sys.exit(0 if [(c["label"], c["beta"]) for c in a] == [(c["label"], c["beta"]) for c in b] else 1)
EOF
then
  pass "mostly labels, a pipe: the same coefficients"
else
  fail "mostly labels, a pipe: the same coefficients" "exit $pipe_rc: $(cat pipe.err)"
fi
gzip -c lab.csv >lab.csv.gz
bl fit lab.csv.gz --response y --terms g --json --threads 1
expect_rc "mostly labels, gzip: exit" 0
expect_same_coef "mostly labels, gzip" lab.json

# ---- a response that is categorical by its cells is a data error (exit 1) naming the
# first label; declared categorical, it is a usage error (exit 2)
printf 'y,x\nheavy,1\n2.5,2\nlight,3\nmedium,4\n' >ry.csv
bl fit ry.csv --response y --terms x
expect_rc "categorical response: exit" 1
expect_err "categorical response: message" \
  "ballast: ry.csv:2:1: 'y' is categorical: 3 of its 4 non-missing cells are not numbers, the first 'heavy' here (--response); the response must be numeric"
bl fit lab.csv --response y --terms g --categorical y
expect_rc "declared categorical response: exit" 2
expect_err "declared categorical response: message" \
  "ballast: --response: 'y' is categorical (declared); the response must be numeric"
bl fit lab.csv --response y --weights g
expect_rc "categorical weights: exit" 1
expect_err "categorical weights: message" "ballast: lab.csv:3:2: 'g' is categorical"
bl fit lab.csv --response y --offset g
expect_rc "categorical offset: exit" 1
expect_err "categorical offset: message" "(--offset); the offset must be numeric"

finish
