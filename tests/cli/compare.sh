#!/bin/sh
# compare.sh -- 'ballast diagnose' and 'ballast compare' from the outside: exit status,
# stderr text, the JSON keys on stdout, the residual CSV, and reproducibility.
#
# Run by 'make check' with BALLAST, top_srcdir (and optionally VALGRIND) set; by hand:
#   BALLAST=build/ballast top_srcdir=. sh tests/cli/compare.sh
# Exit status: 0 all checks passed, 1 some failed, 99 the test could not run.
# Messages follow STYLE.md (Command line): "ballast: CONTEXT: message", usage errors add
# "see 'ballast COMMAND --help'"; exit 0 done, 1 data or model problem, 2 usage.

# shellcheck source=tests/cli/lib.sh
. "${top_srcdir:?set top_srcdir to the source tree}/tests/cli/lib.sh"

pumps=$top_srcdir/data/pumps.csv.gz
terms="age_years, load_pct, site"

# ---------------------------------------------------------------- help
bl diagnose --help
expect_rc "diagnose --help exit" 0
expect_line1 "diagnose --help usage on stdout" \
  "usage: ballast diagnose DATA --response COL [--terms TERMS] [OPTION]..."
expect_err_empty "diagnose --help: nothing on stderr"
bl compare --help
expect_rc "compare --help exit" 0
expect_line1 "compare --help usage on stdout" \
  "usage: ballast compare DATA --response COL [--terms TERMS] [OPTION]..."
expect_out "compare --help lists the default candidates" "ls,ls-log,ls-sqrt,ls-bc,wls-mu"

# ---------------------------------------------------------------- usage errors (exit 2)
bl compare "$pumps" --response repair_hours --terms "$terms" --family gamma
expect_rc "compare --family exit" 2
expect_err "compare --family hint" "choose them with --candidates"
expect_err "compare --family names the option" "ballast: --family: "
expect_err "compare --family usage hint" "see 'ballast compare --help'"
expect_out_empty "compare --family: nothing on stdout"
bl compare "$pumps" --response repair_hours --terms "$terms" --family=gamma
expect_rc "compare --family= exit" 2
expect_err "compare --family= names the option" "ballast: --family: "
for opt in --method=glm --link=log --variance=fitted^1 --transform=log --shift=1 \
           --dispersion=pearson; do
  bl compare "$pumps" --response repair_hours "$opt"
  expect_rc "compare $opt exit" 2
  expect_err "compare $opt hint" "--candidates"
done
bl compare "$pumps" --response repair_hours --folds 1
expect_rc "compare --folds 1 exit" 2
expect_err "compare --folds 1 message" "ballast: --folds: expected 0 or an integer >= 2, got '1'"
expect_err "compare --folds 1 usage hint" "see 'ballast compare --help'"
bl compare "$pumps" --response repair_hours --folds -3
expect_rc "compare --folds -3 exit" 2
bl compare "$pumps" --response repair_hours --seed x
expect_rc "compare --seed x exit" 2
expect_err "compare --seed x message" "ballast: --seed: expected a non-negative integer"
bl compare "$pumps" --response repair_hours --candidates bogus
expect_rc "compare --candidates bogus exit" 2
expect_err "compare --candidates bogus message" \
  "ballast: --candidates: unknown candidate 'bogus'"
expect_err "compare --candidates bogus usage hint" "see 'ballast compare --help'"
bl compare "$pumps" --response repair_hours --candidates ls,gam-log,ls
expect_rc "compare --candidates duplicate exit" 2
expect_err "compare --candidates duplicate message" \
  "ballast: --candidates: candidate 'ls' is listed twice"
bl compare "$pumps" --response repair_hours --candidates "ls,,gam-log"
expect_rc "compare --candidates empty entry exit" 2
expect_err "compare --candidates empty entry message" "ballast: --candidates: empty entry"
bl compare "$pumps" --response repair_hours --candidates ls-bc=9
expect_rc "compare --candidates ls-bc=9 exit" 2
expect_err "compare --candidates ls-bc=9 message" "unknown candidate 'ls-bc=9'"
bl compare "$pumps" --response repair_hours --bogus
expect_rc "compare unknown option exit" 2
expect_err "compare unknown option message" "ballast: --bogus: unknown option"
bl diagnose "$pumps" --response repair_hours --bogus
expect_rc "diagnose unknown option exit" 2
expect_err "diagnose unknown option message" "ballast: --bogus: unknown option"
expect_err "diagnose unknown option hint" "see 'ballast diagnose --help'"
bl diagnose "$pumps" --response repair_hours --seed x
expect_rc "diagnose --seed x exit" 2
expect_err "diagnose --seed x message" "ballast: --seed: expected a non-negative integer"
bl diagnose "$pumps" --response repair_hours --residuals
expect_rc "diagnose --residuals without a value exit" 2
expect_err "diagnose --residuals without a value message" \
  "ballast: --residuals: this option needs a value"
bl diagnose "$pumps" --response no_such_column
expect_rc "diagnose unknown response exit" 2

# ---------------------------------------------------------------- diagnose JSON
bl diagnose "$pumps" --response repair_hours --terms "$terms" --json \
  --residuals resid.csv
expect_rc "diagnose --json exit" 0
expect_err "diagnose drop warning" "warning: 34 rows set aside (missing 'load_pct')"
expect_json_has "diagnose keys" \
  breusch_pagan.stat breusch_pagan.dof breusch_pagan.p \
  koenker.stat koenker.dof koenker.p white.stat white.dof white.p \
  spread.ratio spread.null95 spread.flag \
  spread.groups[0].n spread.groups[0].fitted_mean spread.groups[0].rms \
  variance_power.estimate variance_power.se variance_power.groups_used \
  suggested_family lack_of_fit.flag lack_of_fit.groups
expect_json "diagnose rows used" data.rows_used 2966
expect_json "diagnose model method (OLS by default)" model.method '"ols"'
expect_py "diagnose spread groups: 5 summing to n" \
  'len(d["spread"]["groups"]) == 5 and sum(g["n"] for g in d["spread"]["groups"]) == 2966'
expect_py "diagnose dof: rank less the intercept" \
  'd["breusch_pagan"]["dof"] == d["koenker"]["dof"] and d["breusch_pagan"]["dof"] >= 3'
expect_py "diagnose p-values in [0, 1]" \
  'all(0 <= d[t]["p"] <= 1 for t in ("breusch_pagan", "koenker", "white"))'
expect_py "diagnose spread flag rule (ratio >= 2 and > null95)" \
  'd["spread"]["flag"] == (d["spread"]["ratio"] >= 2 and d["spread"]["ratio"] > d["spread"]["null95"])'
expect_py "diagnose suggested family is a family" \
  'd["suggested_family"] in ("gaussian", "gamma", "inverse-gaussian")'
save_out diag1.json
bl diagnose "$pumps" --response repair_hours --terms "$terms" --json -q
if cmp -s "$tmp/.out" diag1.json; then pass "diagnose JSON byte-identical on two runs"
else fail "diagnose JSON byte-identical on two runs" "outputs differ"; fi
expect_err_empty "diagnose -q: nothing on stderr"

# ---------------------------------------------------------------- residual table
if [ -f resid.csv ]; then
  pass "diagnose --residuals wrote the file"
else
  fail "diagnose --residuals wrote the file" "no resid.csv"
fi
line1=$(sed -n 1p resid.csv 2>/dev/null)
if [ "$line1" = "row,fitted,response,pearson,deviance,working,quantile,leverage,cooks" ]; then
  pass "residual CSV header"
else
  fail "residual CSV header" "got '$line1'"
fi
nlines=$(wc -l <resid.csv 2>/dev/null)
if [ "${nlines:-0}" -eq 2967 ]; then
  pass "residual CSV: one line per row used"
else
  fail "residual CSV: one line per row used" "$nlines lines, expected 2967"
fi
# OLS: leverages sum to the rank (trace of the hat matrix; an identity) and response =
# pearson = deviance = working residual
if msg=$(python3 - resid.csv <<'PY' 2>&1
import csv, sys
rows = list(csv.DictReader(open(sys.argv[1])))
h = sum(float(r["leverage"]) for r in rows)
assert abs(h - round(h)) < 1e-8 and round(h) >= 4, "sum of leverages %r" % h
for r in rows[:200]:
    v = [float(r[k]) for k in ("response", "pearson", "deviance", "working")]
    assert max(v) - min(v) <= 1e-9 * max(1.0, abs(v[0])), r
assert rows[0]["row"] == "1"
PY
); then
  pass "residual CSV identities"
else
  fail "residual CSV identities" "$msg"
fi
bl diagnose "$pumps" --response repair_hours --terms "$terms" -q --residuals resid2.csv
if cmp -s resid.csv resid2.csv; then pass "residual CSV identical on two runs"
else fail "residual CSV identical on two runs" "files differ"; fi

# ---------------------------------------------------------------- compare JSON
bl compare "$pumps" --response repair_hours --terms "$terms" --json --folds 5
expect_rc "compare --json exit" 0
expect_json_has "compare keys" data rank_by folds seed candidates recommended advice
expect_py "compare candidate keys" \
  'all(all(k in c for k in ("id","method","family","link","transform","lambda","variance_power","n","k","loglik","aic","aicc","bic","loglik_discrete","aic_discrete","delta_aic","akaike_weight","cv_rmse","cv_mae","spread_ratio","spread_null95","normality_p","converged","rank","notes")) for c in d["candidates"])'
expect_json "compare rank_by for continuous y" rank_by '"aic"'
expect_json "compare folds" folds 5
expect_json "compare seed (default)" seed 20261201
expect_py "compare n equal for every candidate" \
  'set(c["n"] for c in d["candidates"]) == {2966}'
expect_py "compare weights sum to 1" \
  'abs(sum(c["akaike_weight"] for c in d["candidates"] if c["akaike_weight"] is not None) - 1) < 1e-12'
expect_py "compare winner has delta 0" \
  '[c["delta_aic"] for c in d["candidates"] if c["id"] == d["recommended"]] == [0]'
expect_py "compare poisson not applicable with a note" \
  '[c["notes"] != [] and c["aic"] is None for c in d["candidates"] if c["id"] == "poi-log"] == [True]'
expect_py "compare advice is a non-empty list" 'len(d["advice"]) >= 2'
save_out cmp1.json
bl compare "$pumps" --response repair_hours --terms "$terms" --json --folds 5 -q
if cmp -s "$tmp/.out" cmp1.json; then pass "compare JSON byte-identical on two runs"
else fail "compare JSON byte-identical on two runs" "outputs differ"; fi
bl compare "$pumps" --response repair_hours --terms "$terms" --json --folds 0 -q \
  --candidates gam-log,ls
expect_rc "compare --folds 0 exit" 0
expect_json "compare --folds 0 reported" folds 0
expect_py "compare --folds 0: cv fields null" \
  'all(c["cv_rmse"] is None and c["cv_mae"] is None for c in d["candidates"])'
expect_py "compare --candidates keeps the order" \
  '[c["id"] for c in d["candidates"]] == ["gam-log", "ls"]'
save_out cmp0.json

# consistency: compare's AIC of gam-log is 'ballast fit --family gamma --link log's fit.aic
bl fit "$pumps" --response repair_hours --terms "$terms" --family gamma --link log --json -q
expect_rc "fit gamma/log exit" 0
expect_py "compare gam-log aic equals fit's" \
  '[c["aic"] for c in load("cmp0.json")["candidates"] if c["id"] == "gam-log"] == [d["fit"]["aic"]]'
expect_py "compare gam-log aic equals fit's (with cv)" \
  '[c["aic"] for c in load("cmp1.json")["candidates"] if c["id"] == "gam-log"] == [d["fit"]["aic"]]'

# integer y: the counts of the toy line are ranked by the discretized likelihood
cat >counts.csv <<'EOF2'
y,x
0,0.1
2,0.2
1,0.3
3,0.4
2,0.5
5,0.6
4,0.7
6,0.8
7,0.9
9,1.0
EOF2
bl compare counts.csv --response y --terms x --json --folds 0
expect_rc "compare counts exit" 0
expect_json "compare counts rank_by" rank_by '"aic_discrete"'
expect_py "compare counts: gamma not applicable (y = 0)" \
  '[c["notes"] != [] and c["converged"] is False for c in d["candidates"] if c["id"] == "gam-log"] == [True]'

# text report
bl compare "$pumps" --response repair_hours --terms "$terms" --folds 0 -q
expect_rc "compare text exit" 0
expect_out "compare text: winner line" "ranked first by AIC: gam-log"

finish
