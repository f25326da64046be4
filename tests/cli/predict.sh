#!/bin/sh
# predict.sh -- 'ballast fit --save' and 'ballast predict' from the outside: exit status,
# stderr text, the CSV written, and that nothing is written when predicting fails.
#
# Run by 'make check' with BALLAST, top_srcdir (and optionally VALGRIND) set; by hand:
#   BALLAST=build/ballast top_srcdir=. sh tests/cli/predict.sh
# Exit status: 0 all checks passed, 1 some failed, 99 the test could not run.

# shellcheck source=tests/cli/lib.sh
. "${top_srcdir:?set top_srcdir to the source tree}/tests/cli/lib.sh"

usage_hint="see 'ballast predict --help'"

# py_csv NAME FILE EXPR: the Python expression EXPR is true, with rows = the records of the
# CSV file FILE as dicts, head = its header list, and math imported.
py_csv () {
  if pc_msg=$(python3 -c '
import csv, math, sys
with open(sys.argv[1], newline="") as f:
    r = list(csv.reader(f))
head, rows = r[0], [dict(zip(r[0], x)) for x in r[1:]]
try:
    ok = eval(sys.argv[2], {"rows": rows, "head": head, "math": math})
except Exception as e:
    print("%s: %s" % (type(e).__name__, e)); sys.exit(1)
if not ok:
    print("false: " + sys.argv[2]); sys.exit(1)
' "$2" "$3" 2>&1); then
    pass "$1"
  else
    fail "$1" "$pc_msg"
  fi
}

# expect_absent NAME FILE: FILE does not exist, and no temporary file was left beside it.
expect_absent () {
  if [ -e "$2" ] || ls "$2".tmp-* >/dev/null 2>&1; then
    fail "$1" "'$2' (or a temporary file beside it) exists"
  else
    pass "$1"
  fi
}

# ---------------------------------------------------------------- data
# The gaussian line of fit.sh (closed form, common practice, no source): x = 0.5 .. 4.5,
# y = 2 + 3 x + e with e = 0.5, -1, 0, 1, -0.5, so beta = (2, 3) exactly, n = 5, xbar = 2.5,
# Sxx = 10, phi = s^2 = RSS / 3 = 5/6.  At a new x the mean is 2 + 3 x, and with
# h = 1/n + (x - xbar)^2 / Sxx the half-widths are t s sqrt(h) (mean) and t s sqrt(1 + h)
# (new observation; Draper & Smith 1998, Applied Regression Analysis, 3rd ed., section 3.2).
cat >line.csv <<'EOF'
y,x
4,0.5
5.5,1.5
9.5,2.5
13.5,3.5
15,4.5
EOF
cat >line_new.csv <<'EOF'
x,tag
0.25,first
2.5,"mid, quoted"
6.125,
EOF

# An invented pump fleet: repair hours by site and age, counts of stops over running hours.
cat >pumps.csv <<'EOF'
serial,site,age,load,hours,stops,repair
P-101,north-quay,2.385,0.61,612,3,4.12
P-102,kiln-road,7.12,0.47,288,4,6.93
P-103,mill-lane,4.4,0.93,903,9,9.58
P-104,north-quay,11.07,0.72,455,8,12.4
P-105,kiln-road,0.93,0.38,731,2,2.77
P-106,mill-lane,5.81,0.66,512,6,7.35
P-107,north-quay,8.64,0.55,377,5,8.01
P-108,kiln-road,3.3,0.81,1044,7,5.26
P-109,mill-lane,9.9,0.44,268,4,10.9
P-110,north-quay,6.05,0.89,820,9,6.48
P-111,kiln-road,12.6,0.52,401,7,14.2
P-112,mill-lane,1.77,0.71,655,3,3.91
EOF

# ---------------------------------------------------------------- help and usage (exit 2)
bl predict --help
expect_rc "--help exit" 0
expect_line1 "--help usage on stdout" \
  "usage: ballast predict MODEL NEWDATA [-o OUT.csv] [--keep COL,...] [--level X]"
expect_err_empty "--help: nothing on stderr"
bl predict
expect_rc "no arguments exit" 2
expect_err "no arguments message" "ballast: expected MODEL and NEWDATA"
expect_err "no arguments hint" "$usage_hint"
bl predict a.json
expect_rc "one argument exit" 2
bl predict a.json b.csv c.csv
expect_rc "three arguments exit" 2
expect_err "three arguments message" "ballast: c.csv: only MODEL and NEWDATA are taken"
bl predict a.json b.csv --bogus
expect_rc "unknown option exit" 2
expect_err "unknown option message" "ballast: --bogus: unknown option"
bl predict a.json b.csv --level 1.5
expect_rc "--level 1.5 exit" 2
expect_err "--level 1.5 message" "ballast: --level: expected a number between 0 and 1, got '1.5'"
bl predict a.json b.csv --keep 'a,,b'
expect_rc "--keep empty name exit" 2
expect_err "--keep empty name message" "ballast: --keep: empty column name"
bl predict a.json b.csv -o
expect_rc "-o missing value exit" 2
expect_err "-o missing value message" "ballast: -o: this option needs a value"
bl fit line.csv --response y --terms x --save -
expect_rc "fit --save - exit" 2
expect_err "fit --save - message" "ballast: --save: the model needs a file name, not '-'"

# ---------------------------------------------------------------- fit --save
bl fit line.csv --response y --terms x --save line.json
expect_rc "fit --save exit" 0
expect_out "fit --save: the report still on stdout" "Estimates"
expect_absent "fit --save: no temporary file left" line.json.tmp
run python3 -c '
import json, sys
d = json.load(open("line.json"))
ok = (d["format"] == "ballast-model" and d["format_version"] == 1 and d["terms"] == ["x"]
      and d["columns"] == ["intercept", "x"] and abs(d["coef"][0] - 2) < 1e-12
      and abs(d["coef"][1] - 3) < 1e-12 and d["dof_resid"] == 3
      and abs(d["phi_pearson"] - 5 / 6) < 1e-12 and d["method"] == "glm"
      and d["family"] == "gaussian" and d["link"] == "identity")
sys.exit(0 if ok else 1)'
expect_rc "fit --save: the model file's keys and values" 0
bl fit line.csv --response y --terms x --save nodir/line.json
expect_rc "fit --save into a missing folder exit" 1
expect_err "fit --save into a missing folder message" "ballast: nodir/line.json: cannot create"

# ---------------------------------------------------------------- predict: the line
bl predict line.json line_new.csv --keep tag
expect_rc "line predict exit" 0
expect_line1 "line header" "row,mean,mean_lo,mean_hi,pred_lo,pred_hi,tag"
expect_err_empty "line: no response, no scores"
save_out line_pred.csv
py_csv "line: one record per row, numbered" line_pred.csv \
  '[r["row"] for r in rows] == ["1", "2", "3"]'
py_csv "line: mean = 2 + 3 x" line_pred.csv \
  'all(abs(float(r["mean"]) - (2 + 3 * x)) <= 1e-12 * (2 + 3 * x)
       for r, x in zip(rows, (0.25, 2.5, 6.125)))'
# The ratio of the half-widths is sqrt((1 + h) / h), whatever t is (closed form above).
py_csv "line: prediction / mean half-width = sqrt((1 + h) / h)" line_pred.csv \
  'all(abs((float(r["pred_hi"]) - float(r["mean"])) / (float(r["mean_hi"]) - float(r["mean"]))
           - math.sqrt((1 + h) / h)) <= 1e-12
       for r, h in zip(rows, [0.2 + (x - 2.5) ** 2 / 10 for x in (0.25, 2.5, 6.125)]))'
# t(3, 0.975) = 3.182446305284263 (from memory; the C suite checks t against GSL).
py_csv "line: mean half-width = t s sqrt(h)" line_pred.csv \
  'all(abs(float(r["mean_hi"]) - float(r["mean"])
           - 3.182446305284263 * math.sqrt(5 / 6 * h)) <= 1e-9
       for r, h in zip(rows, [0.2 + (x - 2.5) ** 2 / 10 for x in (0.25, 2.5, 6.125)]))'
py_csv "line: intervals symmetric" line_pred.csv \
  'all(abs(float(r["mean"]) * 2 - float(r["pred_lo"]) - float(r["pred_hi"])) <= 1e-12
       for r in rows)'
py_csv "line: --keep copies text, quoted when needed, empty when missing" line_pred.csv \
  '[r["tag"] for r in rows] == ["first", "mid, quoted", ""]'
bl predict line.json line_new.csv --level 0.5
save_out line_50.csv
py_csv "line: --level 0.5 narrower" line_50.csv \
  'float(rows[0]["pred_hi"]) - float(rows[0]["mean"]) < 2.5'

# On the training rows, with the response: the scores; RMSE^2 = RSS / n = 2.5 / 5 (above).
bl predict line.json line.csv
expect_rc "line on its own rows exit" 0
expect_err "line scores on stderr" \
  "scores on 'line.csv' (5 of 5 rows have 'y'): deviance 2.5, rmse 0.707107, mae 0.6"
bl predict line.json line.csv -o scored.csv
expect_rc "-o exit" 0
expect_out "-o: scores on stdout" "rmse 0.707107"
expect_err_empty "-o: nothing on stderr"
py_csv "-o: the file has every row" scored.csv 'len(rows) == 5'
bl predict line.json line.csv -o scored.csv -q
expect_out_empty "-q: no scores"

# ---------------------------------------------------------------- predict: GLMs
bl fit pumps.csv --response stops --terms 'age,site' --family poisson \
  --offset 'log(hours)' --save stops.json -q
expect_rc "poisson fit --save exit" 0
bl predict stops.json pumps.csv --keep serial,site,age
expect_rc "poisson predict exit" 0
save_out stops_pred.csv
expect_line1 "poisson header" "row,mean,mean_lo,mean_hi,pred_lo,pred_hi,serial,site,age"
py_csv "poisson: integer prediction interval ends around the mean" stops_pred.csv \
  'all(float(r["pred_lo"]).is_integer() and float(r["pred_hi"]).is_integer()
       and float(r["pred_lo"]) <= float(r["mean"]) <= float(r["pred_hi"]) for r in rows)'
py_csv "poisson: mean interval brackets the mean" stops_pred.csv \
  'all(float(r["mean_lo"]) < float(r["mean"]) < float(r["mean_hi"]) for r in rows)'
py_csv "poisson: kept numbers are %.17g of the cell" stops_pred.csv \
  '[r["age"] for r in rows][:2] == ["2.3849999999999998", "7.1200000000000001"]'
py_csv "poisson: kept levels as text" stops_pred.csv \
  '[r["site"] for r in rows][:3] == ["north-quay", "kiln-road", "mill-lane"]'
expect_err "poisson: scores" "scores on 'pumps.csv' (12 of 12 rows have 'stops')"

bl fit pumps.csv --response repair --terms 'age,log(load),site' --family gamma --link log \
  --save repair.json -q
expect_rc "gamma fit --save exit" 0
# A new site list without 'mill-lane': its indicator column stays (all zero).
cat >two_sites.csv <<'EOF'
site,age,load
kiln-road,4.25,0.58
north-quay,10.5,0.83
EOF
bl predict repair.json two_sites.csv
expect_rc "gamma predict, a level absent exit" 0
save_out repair_pred.csv
# (The gamma prediction interval leaves out the coefficients' uncertainty, so it need not
# contain the mean's interval: only each interval around the mean is checked.)
py_csv "gamma: positive intervals around the mean" repair_pred.csv \
  'all(0 < float(r["pred_lo"]) < float(r["mean"]) < float(r["pred_hi"])
       and float(r["mean_lo"]) < float(r["mean"]) < float(r["mean_hi"]) for r in rows)'

bl fit pumps.csv --response repair --terms 'age,site' --transform boxcox --save bc.json -q
expect_rc "boxcox fit --save exit" 0
bl predict bc.json two_sites.csv
expect_rc "boxcox predict exit" 0
save_out bc_pred.csv
py_csv "boxcox: ordered intervals" bc_pred.csv \
  'all(float(r["pred_lo"]) < float(r["mean_lo"]) < float(r["mean"]) < float(r["mean_hi"])
       < float(r["pred_hi"]) for r in rows)'

bl fit pumps.csv --response repair --terms 'age,site' --variance 'fitted^est' --save wls.json -q
expect_rc "wls fit --save exit" 0
bl predict wls.json two_sites.csv
expect_rc "wls predict exit" 0

# ---------------------------------------------------------------- errors: exit 1, nothing written
# Each failing run writes to out.csv, which already holds "old": it must stay as it was, with
# no temporary file beside it, and stdout must stay empty.
printf 'old\n' >out.csv
check_failed () {
  expect_rc "$1 exit" 1
  expect_err "$1 message" "$2"
  expect_out_empty "$1: nothing on stdout"
  if [ "$(cat out.csv)" = "old" ] && ! ls out.csv.tmp-* >/dev/null 2>&1; then
    pass "$1: out.csv untouched"
  else
    fail "$1: out.csv untouched" "out.csv changed or a temporary file was left"
  fi
}

printf 'site,age\nkiln-road,3.2\n' >nocol.csv
bl predict repair.json nocol.csv -o out.csv
check_failed "missing column" \
  "ballast: nocol.csv:1: no column 'load', which the model needs (term 'log(load)')"
printf 'site,age,load\nkiln-road,3.2,0.5\nsouth-pier,4.1,0.6\n' >level.csv
bl predict repair.json level.csv -o out.csv
check_failed "unseen level" "ballast: level.csv:3: 'site' has level 'south-pier', which \
the model does not know (its levels: kiln-road, mill-lane, north-quay)"
printf 'site,age,load\nkiln-road,3.2,0.5\nmill-lane,,0.6\n' >cell.csv
bl predict repair.json cell.csv -o out.csv
check_failed "missing cell" "ballast: cell.csv:3: missing value in 'age'"
printf 'site,age,load\nkiln-road,3.2,0.5\nmill-lane,4.4,0\n' >domain.csv
bl predict repair.json domain.csv -o out.csv
check_failed "domain error" "ballast: domain.csv:3: log(load): value 0 is not > 0"
bl predict repair.json two_sites.csv --keep site,serial -o out.csv
check_failed "--keep a missing column" "ballast: two_sites.csv:1: no column 'serial' to keep"
bl predict repair.json absent.csv -o out.csv
check_failed "NEWDATA missing" "ballast: absent.csv: "
bl predict absent.json two_sites.csv -o out.csv
check_failed "MODEL missing" "ballast: absent.json: cannot open"
bl predict line.csv two_sites.csv -o out.csv
check_failed "MODEL not JSON" "ballast: line.csv:1:"
expect_err "MODEL not JSON says so" "not a model file: invalid JSON"
printf '{"name": "pump fleet", "rows": 12}\n' >other.json
bl predict other.json two_sites.csv -o out.csv
check_failed "not a model file" \
  "ballast: other.json: not a ballast model file (no \"format\": \"ballast-model\")"
sed 's/"format_version": 1/"format_version": 7/' repair.json >newer.json
bl predict newer.json two_sites.csv -o out.csv
check_failed "newer format_version" \
  "ballast: newer.json: 'format_version': 7 is newer than this ballast reads (1)"
head -c 400 repair.json >cut.json
bl predict cut.json two_sites.csv -o out.csv
check_failed "corrupt JSON" "ballast: cut.json:"
expect_err "corrupt JSON says so" "invalid JSON"
# The same errors on stdout: nothing at all is printed there.
bl predict repair.json level.csv
expect_rc "unseen level to stdout exit" 1
expect_out_empty "unseen level to stdout: nothing written"


# --median: the naive back-transform beside the smeared mean.  For the log transform the
# smeared mean is exp(x'b) mean(exp(e_i)) (Duan 1983), so mean / median is one constant > 1.
zcat "$top_srcdir/data/pumps.csv.gz" | head -n 301 > med.csv
bl fit med.csv --response repair_hours --terms age_years --transform log --save med.json -q
expect_rc "median: fit --save" 0
bl predict med.json med.csv --median -q
expect_rc "median: predict --median" 0
expect_line1 "median: header" "row,mean,mean_lo,mean_hi,pred_lo,pred_hi,median"
save_out med-out.csv
run python3 -c '
import csv, sys
rows = list(csv.DictReader(open(sys.argv[1])))
r = [float(x["mean"]) / float(x["median"]) for x in rows]
assert len(rows) == 300 and min(r) > 1.0 and max(r) - min(r) < 1e-12 * max(r), (min(r), max(r))
' med-out.csv
expect_rc "median: mean / median is the smearing factor on every row" 0
bl predict med.json med.csv -q
expect_line1 "median: absent without --median" "row,mean,mean_lo,mean_hi,pred_lo,pred_hi"

finish
