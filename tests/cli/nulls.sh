#!/bin/sh
# nulls.sh -- every null in every JSON document has its reason, and no text report prints a
# non-finite number (issue 13, class 10): fit with every family and method, fixed and
# estimated theta and Tweedie power, transforms, robust and cluster standard errors,
# --against, diagnose, compare with and without folds (continuous, integer and zero-holding
# y), saved models, and a spec run's result.json and summary.json.  Each document is walked
# by tests/cli/nulls.py (the rule is in its header and in doc/json.md, "Null values").
#
# Run by 'make check' with BALLAST, top_srcdir (and optionally VALGRIND) set; by hand:
#   BALLAST=build/ballast top_srcdir=. sh tests/cli/nulls.sh
# Exit status: 0 all checks passed, 1 some failed, 99 the test could not run.

# shellcheck source=tests/cli/lib.sh
. "${top_srcdir:?set top_srcdir to the source tree}/tests/cli/lib.sh"

walker=$top_srcdir/tests/cli/nulls.py
rem=$top_srcdir/tests/data/remedies.csv
nb=$top_srcdir/tests/data/nb_counts.csv
pumps=$top_srcdir/data/pumps.csv.gz
stops=$top_srcdir/data/stops.csv.gz

# ---------------------------------------------------------------- data
# nb_counts.csv with a cluster column (7 clusters by row number) and a copy of x1 (aliased).
awk -F, 'NR == 1 { print $0 ",cl,x1b"; next } { print $0 "," NR % 7 "," $2 }' "$nb" >nbc.csv
# Tweedie data with exact zeros (the compound Poisson-gamma representation, Jorgensen 1997,
# section 4.2), from Python's Mersenne Twister with a fixed seed.
python3 - >tw.csv <<'EOF'
import math, random
random.seed(20261204)
p, phi = 1.5, 1.0
print("y,x,g")
for i in range(200):
    x = round(random.random(), 4)
    mu = math.exp(0.3 + 0.7 * x)
    lam = mu ** (2 - p) / (phi * (2 - p))
    alpha, gam = (2 - p) / (p - 1), phi * (p - 1) * mu ** (p - 1)
    u, k, pk = random.random(), 0, math.exp(-lam)
    c = pk
    while u > c:
        k += 1
        pk *= lam / k
        c += pk
    y = random.gammavariate(k * alpha, gam) if k else 0.0
    print("%.6f,%s,%s" % (y, x, "abc"[i % 3]))
EOF
# Three rows and three coefficients: no residual degrees of freedom.
printf 'y,x,z\n1.5,0.2,3.1\n2.7,0.9,1.4\n3.3,1.6,2.2\n' >tiny.csv
# Twelve rows: too few for the spread ratio and for 10 folds.
printf 'y,x\n' >small.csv
for i in 1 2 3 4 5 6 7 8 9 10 11 12; do
  printf '%s.%s,%s\n' $((i * 3 % 7 + 1)) $((i * 7 % 10)) $i >>small.csv
done

# ---------------------------------------------------------------- the documents
# jdoc NAME ARG...: one JSON document written to NAME.json (exit status 0, or 1 for a
# model that fails, whose document is still complete); tdoc NAME ARG...: the text report.
jdoc () {
  name=$1
  shift
  bl "$@" --json -q
  if [ "$rc" -le 1 ] && [ -s "$tmp/.out" ]; then
    save_out "$name.json"
    pass "$name: document written (exit $rc)"
  else
    fail "$name" "exit status $rc, no document"
  fi
}
tdoc () {
  name=$1
  shift
  bl "$@" -q
  if [ "$rc" -le 1 ] && [ -s "$tmp/.out" ]; then
    save_out "$name.txt"
    pass "$name: report written (exit $rc)"
  else
    fail "$name" "exit status $rc, no report"
  fi
}
both () {
  name=$1
  shift
  jdoc "$name" "$@"
  tdoc "$name" "$@"
}

F="fit $rem --response hours --terms load,flow"
both fit-gaussian $F
both fit-ols $F --method ols
both fit-log $F --method ols --transform log
both fit-sqrt $F --method ols --transform sqrt
both fit-boxcox $F --method ols --transform boxcox
both fit-boxcox-fixed $F --method ols --transform boxcox=0.5
both fit-gamma $F --family gamma --link log
both fit-gamma-inv $F --family gamma
both fit-ig $F --family inverse-gaussian
both fit-wls-col $F --method wls --variance load^est
both fit-wls-mu $F --method wls --variance fitted^est
both fit-wls-fixed $F --method wls --variance fitted^1.5
both fit-weights $F --method wls --weights w
both fit-hc3 $F --family gamma --link log --se hc3
both fit-against $F --family gamma --link log --against load
both fit-level $F --level 0.9 --se hc1
N="fit nbc.csv --response y --terms x1,x2"
both fit-poisson $N --family poisson
both fit-pearson $N --family poisson --dispersion pearson
both fit-nb $N --family negative-binomial
both fit-nb-fixed $N --family negative-binomial --theta 2.5
both fit-nb-against $N --family negative-binomial --against x1
both fit-nb-fixed-against $N --family negative-binomial --theta 2.5 --against x1
both fit-cluster $N --family poisson --se cluster --cluster cl
both fit-aliased fit nbc.csv --response y --terms x1,x2,x1b --family poisson
both fit-noconv $N --family poisson --max-iter 1
T="fit tw.csv --response y --terms x"
both fit-tweedie $T --family tweedie
both fit-tweedie-fixed $T --family tweedie --power 1.3
both fit-tweedie-against fit tw.csv --response y --terms x,g --family tweedie --against x
both fit-tiny fit tiny.csv --response y --terms x,z --method ols
both fit-tiny-glm fit tiny.csv --response y --terms x,z --family gamma --link log
both fit-stops fit "$stops" --response unplanned_stops --terms mean_age,site \
  --offset "log(operating_hours)" --family poisson

D="diagnose $rem --response hours --terms load,flow"
both diag-default $D
both diag-against $D --against load
both diag-gamma $D --family gamma --link log
both diag-counts diagnose nbc.csv --response y --terms x1,x2 --family poisson
both diag-nb diagnose nbc.csv --response y --terms x1,x2 --family negative-binomial --theta 2
both diag-tweedie diagnose tw.csv --response y --terms x --family tweedie
both diag-small diagnose small.csv --response y --terms x
both diag-tiny diagnose tiny.csv --response y --terms x,z

both cmp-folds compare $rem --response hours --terms load,flow
both cmp-nofolds compare $rem --response hours --terms load,flow --folds 0
both cmp-counts compare nbc.csv --response y --terms x1,x2
both cmp-counts-nofolds compare nbc.csv --response y --terms x1,x2 --folds 0
both cmp-zeros compare tw.csv --response y --terms x
both cmp-small compare small.csv --response y --terms x
both cmp-pumps compare "$pumps" --response repair_hours --terms age_years,load_pct,site

# Saved models (model_write.c): every family and transform.
for m in "fit-gamma:$F --family gamma --link log" "fit-log:$F --method ols --transform log" \
         "fit-nb-fixed:$N --family negative-binomial --theta 2.5" \
         "fit-tweedie:$T --family tweedie" "fit-wls-mu:$F --method wls --variance fitted^est" \
         "fit-cluster:$N --family poisson --se cluster --cluster cl" \
         "fit-tiny:fit tiny.csv --response y --terms x,z --method ols"; do
  name=model-${m%%:*}
  # shellcheck disable=SC2086  # the command is split into its words on purpose
  bl ${m#*:} -q -o /dev/null --save "$name.json"
  if [ "$rc" -eq 0 ] && [ -s "$name.json" ]; then
    pass "$name: saved"
  else
    fail "$name" "exit status $rc, no model file"
  fi
done
# predict on the saved models: its figures are CSV, where an empty cell is a null; a
# non-finite number must never be printed (checked on the CSV as on a text report).
printf 'load,flow\n1.3,200\n2.9,25\n' >new.csv
for m in model-fit-gamma model-fit-log model-fit-wls-mu; do
  bl predict "$m.json" new.csv -q
  save_out "pred-$m.csv"
  expect_rc "predict $m" 0
done

# A spec run: every job's result.json and the summary.
cat >nulls.spec <<EOF
[defaults]
data = $rem
response = hours
terms = load, flow
folds = 0

[job cmp]

[job gam]
family = gamma
link = log
against = load

[job nbfix]
data = $PWD/nbc.csv
response = y
terms = x1, x2
family = negative-binomial
theta = 2.5

[job tw]
data = $PWD/tw.csv
response = y
terms = x
candidates = tw-log, gam-log, ls

[job small]
data = $PWD/small.csv
response = y
terms = x
folds = 10
EOF
bl run nulls.spec -o runout -q
expect_rc "run exit" 0

# ---------------------------------------------------------------- the walk
found=0
for f in *.json *.txt *.csv runout/*.json runout/*/*.json runout/*.html runout/*.csv \
         runout/*/*.csv; do
  [ -f "$f" ] || continue
  case $f in *.json | *.txt) g=$f ;; *) cp "$f" "$tmp/.walk.txt"; g=$tmp/.walk.txt ;; esac
  found=$((found + 1))
  run python3 "$walker" "$g"
  if [ "$rc" -eq 0 ]; then
    pass "walk $f"
  else
    fail "walk $f" "$(head -5 "$tmp/.out")"
  fi
done
if [ "$found" -ge 100 ]; then
  pass "documents walked: $found"
else
  fail "documents walked" "$found, expected at least 100"
fi

# The walker itself catches a null without a reason and a nan in a text.
printf '{"a": {"b": null, "null_reasons": {"c": "x"}}}\n' >bad.json
run python3 "$walker" bad.json
expect_rc "walker: unexplained null found" 1
printf '{"a": {"b": null, "null_reasons": {"b": "why"}}, "c": [{"d": null}],\n' >good.json
printf ' "null_reasons": {"c.d": "why"}}\n' >>good.json
run python3 "$walker" good.json
expect_rc "walker: explained nulls accepted" 0
printf 'figure  value\naic     nan\n' >bad.txt
run python3 "$walker" bad.txt
expect_rc "walker: nan in a text found" 1
printf 'infinite loop, nanometre, info\n' >good.txt
run python3 "$walker" good.txt
expect_rc "walker: words with nan or inf in them pass" 0

finish
