#!/bin/sh
# fit.sh -- 'ballast fit' from the outside: exit status, stderr text and the JSON on stdout.
#
# Run by 'make check' with BALLAST, top_srcdir (and optionally VALGRIND) set; by hand:
#   BALLAST=build/ballast top_srcdir=. sh tests/cli/fit.sh
# Exit status: 0 all checks passed, 1 some failed, 99 the test could not run.
# Messages follow STYLE.md (Command line): "ballast: CONTEXT: message", usage errors add
# "see 'ballast fit --help'"; exit 0 done, 1 data or model problem, 2 usage.

# shellcheck source=tests/cli/lib.sh
. "${top_srcdir:?set top_srcdir to the source tree}/tests/cli/lib.sh"

pumps=$top_srcdir/data/pumps.csv.gz
usage_hint="see 'ballast fit --help'"

# ---------------------------------------------------------------- data
# A gaussian line with a known least-squares answer (closed form, common practice, no source):
#   x = 0.5, 1.5, 2.5, 3.5, 4.5; y = 2 + 3 x + e with e = 0.5, -1, 0, 1, -0.5, so
#   y = 4, 5.5, 9.5, 13.5, 15.  Since sum e = 0 and sum (x - xbar) e = 0, the normal equations
#   give beta = (2, 3) exactly.  With n = 5, xbar = 2.5, Sxx = sum (x - xbar)^2 = 10:
#   RSS = sum e^2 = 0.25 + 1 + 0 + 1 + 0.25 = 2.5 (the gaussian deviance), dof 3,
#   phi = RSS / 3 = 5/6; ybar = 9.5, TSS = 30.25 + 16 + 0 + 16 + 30.25 = 92.5 (null deviance);
#   se(slope) = sqrt(phi / Sxx) = sqrt(1/12); se(intercept) = sqrt(phi (1/n + xbar^2 / Sxx))
#   = sqrt(5/6 * 0.825) = sqrt(0.6875); t(slope) = 3 / sqrt(1/12) = 6 sqrt(3).
#   ML loglik: l = -(n/2) (log (2 pi RSS / n) + 1) = -2.5 (log (pi) + 1); k = 3 (two
#   coefficients and sigma); AIC = -2 l + 2 k; BIC = -2 l + k log n.
# Two more rows each miss a cell, so 7 rows are read and 5 used.
cat >line.csv <<'EOF'
y,x
4,0.5
5.5,1.5
NA,2
9.5,2.5
13.5,3.5
15,
15,4.5
EOF

# ---------------------------------------------------------------- help, version, commands
bl --help
expect_rc "--help exit" 0
expect_out "--help lists fit on stdout" "  fit "
expect_err_empty "--help: nothing on stderr"
bl -h
expect_rc "-h exit" 0
expect_line1 "-h usage line" "usage: ballast COMMAND [OPTION]... ARGS"
bl fit --help
expect_rc "fit --help exit" 0
expect_line1 "fit --help usage on stdout" \
  "usage: ballast fit DATA --response COL [--terms TERMS] [OPTION]..."
bl fit -h
expect_rc "fit -h exit" 0
expect_line1 "fit -h usage on stdout" \
  "usage: ballast fit DATA --response COL [--terms TERMS] [OPTION]..."
bl --version
expect_rc "--version exit" 0
expect_line1 "--version first line" "ballast 0.1.0"
bl
expect_rc "no command exit" 2
expect_err "no command message" "ballast: no command given"
expect_out_empty "no command: nothing on stdout"
bl frobnicate
expect_rc "unknown command exit" 2
expect_err "unknown command message" "ballast: unknown command 'frobnicate'"
expect_err "unknown command hint" "see 'ballast --help'"

# ---------------------------------------------------------------- usage errors (exit 2)
bl fit line.csv --response y --bogus
expect_rc "unknown option exit" 2
expect_err "unknown option message" "ballast: --bogus: unknown option"
expect_err "unknown option hint" "$usage_hint"
expect_out_empty "unknown option: nothing on stdout"
bl fit line.csv --response y -z
expect_rc "unknown short option exit" 2
expect_err "unknown short option message" "ballast: -z: unknown option"
bl fit line.csv --terms x --response
expect_rc "missing value exit" 2
expect_err "missing value message" "ballast: --response: this option needs a value"
expect_err "missing value hint" "$usage_hint"
bl fit line.csv --response y -o
expect_rc "-o missing value exit" 2
expect_err "-o missing value message" "ballast: -o: this option needs a value"
bl fit --response y
expect_rc "no DATA exit" 2
expect_err "no DATA message" "no DATA file given"
bl fit line.csv line.csv --response y
expect_rc "two DATA exit" 2
expect_err "two DATA message" "only one DATA file is taken"

bl fit line.csv --terms x
expect_rc "missing --response exit" 2
expect_err "missing --response message" "ballast: --response: the response column is required"
expect_err "missing --response hint" "$usage_hint"
bl fit line.csv --response y --terms x --family poison
expect_rc "bad --family exit" 2
expect_err "bad --family message" "ballast: --family: unknown family 'poison'"
expect_err "bad --family hint" "$usage_hint"
bl fit line.csv --response y --terms x --link logit
expect_rc "bad --link exit" 2
expect_err "bad --link message" "ballast: --link: unknown link 'logit'"
bl fit line.csv --response y --terms x --method nls
expect_rc "bad --method exit" 2
expect_err "bad --method message" "ballast: --method: unknown method 'nls'"
bl fit line.csv --response y --terms x --level 1.5
expect_rc "--level 1.5 exit" 2
expect_err "--level 1.5 message" "ballast: --level: expected a number between 0 and 1, got '1.5'"
bl fit line.csv --response y --terms x --level 0
expect_rc "--level 0 exit" 2
bl fit line.csv --response y --terms x --threads 3
expect_rc "--threads 3 exit" 2
expect_err "--threads 3 message" "ballast: --threads: expected 1 or 2, got '3'"
bl fit line.csv --response y --terms x --max-iter 0
expect_rc "--max-iter 0 exit" 2
expect_err "--max-iter 0 message" "ballast: --max-iter: expected a positive integer, got '0'"
bl fit line.csv --response y --terms x --max-iter 5x
expect_rc "--max-iter 5x exit" 2
bl fit line.csv --response y --terms x --epsilon -1
expect_rc "--epsilon -1 exit" 2
expect_err "--epsilon -1 message" "ballast: --epsilon: expected a positive number, got '-1'"
bl fit line.csv --response y --terms x --delimiter ab
expect_rc "--delimiter ab exit" 2
expect_err "--delimiter ab message" "ballast: --delimiter: expected one character"
bl fit line.csv --response y --terms x --reference site
expect_rc "--reference without = exit" 2
expect_err "--reference without = message" "ballast: --reference: expected COL=LEVEL, got 'site'"
bl fit line.csv --response y --terms x --dispersion robust
expect_rc "bad --dispersion exit" 2
expect_err "bad --dispersion message" "ballast: --dispersion: expected model or pearson"
bl fit line.csv --response y --terms x --solver fast
expect_rc "bad --solver exit" 2
expect_err "bad --solver message" "ballast: --solver:"

# Term syntax: where is "--terms", and the message says at which character.
for t in 'age,,load' 'log(age' 'lg(age)' 'pow(age)'; do
  bl fit line.csv --response y --terms "$t"
  expect_rc "terms '$t' exit" 2
  expect_err "terms '$t' where" "ballast: --terms: "
  expect_err "terms '$t' position" "at character"
  expect_out_empty "terms '$t': nothing on stdout"
done
bl fit line.csv --response y --terms 'lg(age)'
expect_err "terms 'lg(age)' names the function" "unknown function 'lg'"
bl fit line.csv --response y --terms 'x, age'
expect_rc "unknown --terms column exit" 2
expect_err "unknown --terms column message" "ballast: --terms: no column 'age' in line.csv"
bl fit line.csv --response yield --terms x
expect_rc "unknown --response column exit" 2
expect_err "unknown --response column message" "ballast: --response: no column 'yield'"
bl fit line.csv --response y --terms x --weights w
expect_rc "unknown --weights column exit" 2
expect_err "unknown --weights column message" "ballast: --weights: no column 'w'"
bl fit line.csv --response y --terms x --offset 'log(x), x'
expect_rc "two-term --offset exit" 2
expect_err "two-term --offset message" "ballast: --offset: expected one term, got 2"

# ---------------------------------------------------------------- data errors (exit 1)
bl fit nosuch.csv --response y --terms x
expect_rc "missing file exit" 1
expect_err "missing file message" "ballast: nosuch.csv: cannot open"

printf 'y,x\n1.5,2.25\n3.75,12.5kg\n4.125,5.5\n' >kg.csv
bl fit kg.csv --response y --terms x
expect_rc "not a number exit" 1
expect_err "not a number where" "ballast: kg.csv:3:2: "
expect_err "not a number message" "not a number: '12.5kg'"
expect_out_empty "not a number: nothing on stdout"

printf 'y,x\n1.5,2.25\n3.75,4.5,6\n4.125,5.5\n' >fields.csv
bl fit fields.csv --response y --terms x
expect_rc "field count exit" 1
expect_err "field count where and message" "ballast: fields.csv:3: record has 3 fields"

printf 'y,x\n1.5,2.25\n3.75,"4.5\n4.125,5.5\n' >quote.csv
bl fit quote.csv --response y --terms x
expect_rc "unclosed quote exit" 1
expect_err "unclosed quote message" "ballast: quote.csv:3:2: quoted field is never closed"

printf 'y,x,y\n1.5,2.25,1\n3.75,4.5,2\n' >dup.csv
bl fit dup.csv --response y --terms x
expect_rc "duplicate header exit" 1
expect_err "duplicate header message" "ballast: dup.csv:1:3: duplicate column name 'y'"

: >empty.csv
bl fit empty.csv --response y --terms x
expect_rc "empty file exit" 1
expect_err "empty file message" "ballast: empty.csv: no header row"

printf 'y,x\n' >header.csv
bl fit header.csv --response y --terms x
expect_rc "header only exit" 1
expect_err "header only message" "ballast: header.csv: no rows left: 0 read"

printf 'y,x\nNA,1.5\n2.5,NA\n,3.5\n' >allna.csv
bl fit allna.csv --response y --terms x
expect_rc "all rows dropped exit" 1
expect_err "all rows dropped message" "ballast: allna.csv: no rows left: 3 read, all dropped"
expect_err "all rows dropped reasons" "missing 'y': 2, missing 'x': 1"

# Line numbers are those of the file, not row counts: a dropped row comes first, and in
# lines.csv a quoted cell spans two lines.
printf 'y,x,w\nNA,1.5,1\n2.5,2.5,1\n0,3.5,1\n4.5,4.5,0\n' >support.csv
bl fit support.csv --response y --terms x --family gamma
expect_rc "gamma y <= 0 exit" 1
expect_err "gamma y <= 0 line" "ballast: support.csv:4: "
expect_err "gamma y <= 0 message" "y > 0"
printf 'y,x\n1,1.5\n2,2.5\n-1,3.5\n4,4.5\n' >negcount.csv
bl fit negcount.csv --response y --terms x --family poisson
expect_rc "poisson y < 0 exit" 1
expect_err "poisson y < 0 line" "ballast: negcount.csv:4: "
expect_err "poisson y < 0 message" "y >= 0"
printf 'y,x,w,note\n1.5,1.5,1,"two\nlines"\n2.5,2.5,1,b\n3.5,0,1,c\n4.5,4.5,0,d\n' >lines.csv
bl fit lines.csv --response y --terms 'log(x)'
expect_rc "log of x <= 0 exit" 1
expect_err "log of x <= 0 line and term" "ballast: lines.csv:5: log(x): value 0 is not > 0"
bl fit lines.csv --response y --terms x --weights w
expect_rc "weight <= 0 exit" 1
expect_err "weight <= 0 line and message" "ballast: lines.csv:6: weight 0 is not > 0"
bl fit support.csv --response y --terms x --weights w
expect_rc "weight <= 0 after a dropped row exit" 1
expect_err "weight <= 0 after a dropped row line" "ballast: support.csv:5: weight 0 is not > 0"

printf 'y,x\n1.5,1.5\n2.5,inf\n3.5,3.5\n' >inf.csv
bl fit inf.csv --response y --terms x
expect_rc "inf cell exit" 1
expect_err "inf cell where and value" "ballast: inf.csv:3:2: not a decimal number: 'inf'"

# ---------------------------------------------------------------- the gaussian line, exactly
bl fit line.csv --response y --terms x --json
expect_rc "line fit exit" 0
save_out line.json
expect_json "line intercept" "coef[0].beta" 2 1e-12
expect_json "line slope" "coef[1].beta" 3 1e-12
expect_json "line labels" "coef[1].label" '"x"'
expect_json "line se intercept" "coef[0].se" "$(python3 -c 'print(repr(0.6875 ** 0.5))')" 1e-12
expect_json "line se slope" "coef[1].se" "$(python3 -c 'print(repr((1 / 12) ** 0.5))')" 1e-12
expect_json "line t slope" "coef[1].wald" "$(python3 -c 'print(repr(6 * 3 ** 0.5))')" 1e-12
# Student t with 3 dof has the closed-form distribution function (Abramowitz & Stegun 1964,
# Handbook of Mathematical Functions, 26.7.3):
#   F(t) = 1/2 + (1/pi) (u / (1 + u^2) + atan u), u = t / sqrt(3).
# So the two-sided p of t = 6 sqrt(3) (u = 6) is 1 - (2/pi) (6/37 + atan 6), and the interval
# half-width q = (hi - beta) / se satisfies F(q) = 0.975.
expect_py "line p slope (t, 3 dof, A&S 26.7.3)" \
  'abs(d["coef"][1]["p"] - (1 - 2 / math.pi * (6 / 37 + math.atan(6)))) < 1e-10'
expect_py "line interval level (t, 3 dof, A&S 26.7.3)" \
  'all(abs(0.5 + (u / (1 + u * u) + math.atan(u)) / math.pi - 0.975) < 1e-10
       for c in d["coef"] for u in [(c["hi"] - c["beta"]) / c["se"] / math.sqrt(3)])'
expect_py "line interval symmetric" \
  'all(abs((c["hi"] - c["beta"]) - (c["beta"] - c["lo"])) < 1e-12 for c in d["coef"])'
expect_json "line n" fit.n 5
expect_json "line rank" fit.rank 2
expect_json "line dof_resid" fit.dof_resid 3
expect_json "line dof_null" fit.dof_null 4
expect_json "line deviance" fit.deviance 2.5 1e-12
expect_json "line null deviance" fit.deviance_null 92.5 1e-12
expect_json "line phi_pearson" fit.phi_pearson "$(python3 -c 'print(repr(5 / 6))')" 1e-12
expect_json "line phi_ml" fit.phi_ml 0.5 1e-12
expect_json "line loglik" fit.loglik \
  "$(python3 -c 'import math; print(repr(-2.5 * (math.log(math.pi) + 1)))')" 1e-12
expect_json "line k" fit.k 3
expect_py "line aic = -2 l + 2 k" 'abs(d["fit"]["aic"] - (-2 * d["fit"]["loglik"] + 6)) < 1e-12'
expect_py "line bic = -2 l + k log n" \
  'abs(d["fit"]["bic"] - (-2 * d["fit"]["loglik"] + 3 * math.log(5))) < 1e-12'
expect_json "line family" model.family '"gaussian"'
expect_json "line link" model.link '"identity"'
expect_json "line method" model.method '"glm"'
expect_json "line response" model.response '"y"'
expect_json "line terms" model.terms '["x"]'
expect_json "line converged" status.converged true
expect_json "line no error" status.error null
expect_json "line rows read" data.rows_read 7
expect_json "line rows used" data.rows_used 5
expect_json "line rows dropped" data.rows_dropped 2
expect_json "line drop reasons" data.drop_reasons '{"missing '\''x'\''": 1, "missing '\''y'\''": 1}'
expect_json "line data source" data.source '"line.csv"'
expect_json "line tool" tool.name '"ballast"'
expect_json "line version" tool.version '"0.1.0"'
expect_json "line level" level 0.95 1e-15
expect_json "line se kind" se_kind '"model"'
expect_err "line drop warning" "ballast: line.csv: warning: 1 row set aside (missing 'x')"
expect_json_has "line json keys" tool.name tool.version data.source data.rows_read \
  data.rows_used data.rows_dropped data.drop_reasons model.method model.family model.link \
  model.response model.terms model.offset model.weights status.converged status.iterations \
  status.warnings status.error level se_kind coef[0].label coef[0].beta coef[0].se \
  coef[0].wald coef[0].p coef[0].lo coef[0].hi coef[0].aliased fit.n fit.rank fit.dof_resid \
  fit.dof_null fit.deviance fit.deviance_null fit.pearson fit.phi_pearson fit.phi_ml \
  fit.loglik fit.aic fit.aicc fit.bic fit.k

bl fit line.csv --response y --terms x --json --quiet
expect_rc "--quiet exit" 0
expect_no_err "--quiet: no warning" "warning"
bl fit line.csv --response y --terms x --method ols --json
expect_rc "--method ols exit" 0
expect_same_coef "--method ols same coefficients" line.json
expect_json "--method ols recorded" model.method '"ols"'
bl fit line.csv --response y --terms x
expect_rc "text report exit" 0
expect_line1 "text report first line" "ballast 0.1.0 -- one model, fitted"

# ---------------------------------------------------------------- ways of reading the same table
gzip -n -c line.csv >line.csv.gz
bl fit line.csv.gz --response y --terms x --json
expect_rc "gzip exit" 0
expect_same_coef "gzip same coefficients" line.json
awk '{ printf "%s\r\n", $0 }' line.csv >crlf.csv
bl fit crlf.csv --response y --terms x --json
expect_rc "CRLF exit" 0
expect_same_coef "CRLF same coefficients" line.json
{ printf '\357\273\277'; cat line.csv; } >bom.csv
bl fit bom.csv --response y --terms x --json
expect_rc "BOM exit" 0
expect_same_coef "BOM same coefficients" line.json
expect_json "BOM: first column named y" model.response '"y"'
tr ',' '\t' <line.csv >line.tsv
bl fit line.tsv --response y --terms x --json
expect_rc "TSV exit" 0
expect_same_coef "TSV same coefficients" line.json
sed 's/,/;/g; s/\./,/g' <line.csv >semi.csv
bl fit semi.csv --response y --terms x --json --delimiter ';' --decimal-comma
expect_rc "';' and decimal comma exit" 0
expect_same_coef "';' and decimal comma same coefficients" line.json
bl_in line.csv fit - --response y --terms x --json
expect_rc "stdin exit" 0
expect_same_coef "stdin same coefficients" line.json
bl_in line.csv.gz fit - --response y --terms x --json
expect_rc "gzip on stdin exit" 0
expect_same_coef "gzip on stdin same coefficients" line.json
sed '1s/.*/y,flow rate/' <line.csv >flow.csv
bl fit flow.csv --response y --terms '[flow rate]' --json
expect_rc "bracketed name exit" 0
expect_same_coef "bracketed name same coefficients" line.json
bl fit flow.csv --response y --terms 'flow rate' --json
expect_rc "unbracketed name with a space exit" 2

# ---------------------------------------------------------------- -o
bl fit line.csv --response y --terms x --json -o res.json
expect_rc "-o exit" 0
expect_out_empty "-o: nothing on stdout"
if [ -f res.json ]; then
  pass "-o writes the file"
  cp res.json "$tmp/.out"
  expect_same_coef "-o file holds the result" line.json
else
  fail "-o writes the file" "no res.json"
fi
set -- res.json.tmp*
if [ -e "$1" ]; then
  fail "-o leaves no temporary file" "found $*"
else
  pass "-o leaves no temporary file"
fi
bl fit line.csv --response y --terms x --json -o nodir/res.json
expect_rc "-o into a missing folder exit" 1
expect_err "-o into a missing folder message" "ballast: nodir/res.json: "
if [ -e nodir ] || [ -e nodir/res.json ]; then
  fail "-o into a missing folder leaves nothing" "nodir exists"
else
  pass "-o into a missing folder leaves nothing"
fi
mkdir target
bl fit line.csv --response y --terms x --json -o target
expect_rc "-o onto a folder exit (refused before any work)" 2
expect_err "-o onto a folder message" "ballast: --output: 'target' is a folder"
set -- target.tmp*
if [ -e "$1" ] || [ -n "$(ls -A target)" ]; then
  fail "-o onto a folder leaves nothing behind" "found $* $(ls -A target)"
else
  pass "-o onto a folder leaves nothing behind"
fi
bl fit kg.csv --response y --terms x --json -o bad.json
expect_rc "-o with a data error exit" 1
set -- bad.json*
if [ -e "$1" ]; then
  fail "-o with a data error writes no file" "found $*"
else
  pass "-o with a data error writes no file"
fi
if [ -w /dev/full ]; then
  bl fit line.csv --response y --terms x --json -o -
  expect_rc "-o - writes stdout" 0
  expect_same_coef "-o - same coefficients" line.json
  # shellcheck disable=SC2086  # as in bl
  $VALGRIND "$BALLAST" fit line.csv --response y --terms x --json >/dev/full 2>"$tmp/.err"
  rc=$?
  expect_rc "full stdout exit" 1
  expect_err "full stdout message" "write failed"
fi

# ---------------------------------------------------------------- no convergence
bl fit "$pumps" --response repair_hours --terms 'age_years, load_pct, site' --family gamma \
  --link log --max-iter 1 --json
expect_rc "no convergence exit" 1
expect_err "no convergence message" "ballast: fit: no convergence in 1 iteration"
expect_json "no convergence: converged false" status.converged false
expect_json "no convergence: iterations" status.iterations 1
expect_py "no convergence: error is a message" \
  'isinstance(d["status"]["error"], str) and "convergence" in d["status"]["error"]'

# ---------------------------------------------------------------- perfect fit
printf 'y,x\n3.25,0.5\n6.25,1.5\n9.25,2.5\n12.25,3.5\n' >perfect.csv
bl fit perfect.csv --response y --terms x --json
expect_rc "perfect fit exit" 0
expect_err "perfect fit warning" "ballast: fit: warning: perfect fit"
expect_json "perfect fit slope" "coef[1].beta" 3 1e-12
expect_json "perfect fit intercept" "coef[0].beta" 1.75 1e-12
expect_json "perfect fit loglik null" fit.loglik null
expect_json "perfect fit aic null" fit.aic null
expect_json_has "perfect fit says why" fit.null_reasons.loglik
expect_py "perfect fit warning in JSON" \
  'any("perfect fit" in w for w in d["status"]["warnings"])'

# ---------------------------------------------------------------- aliased column
# x2 = 2 x1 exactly (doubling is exact in binary), so x2 adds nothing: it is reported as
# aliased and the other coefficients are those of the fit without it (the column space is the
# same; common practice, no source).
cat >alias.csv <<'EOF'
y,x1,x2,z
3.1,1.2,2.4,0.3
4.9,2.5,5.0,1.1
7.2,3.1,6.2,0.2
8.8,4.7,9.4,1.9
11.5,5.3,10.6,0.7
12.1,6.8,13.6,1.4
EOF
bl fit alias.csv --response y --terms 'x1, z' --json
expect_rc "without the aliased column exit" 0
save_out noalias.json
bl fit alias.csv --response y --terms 'x1, x2, z' --json
expect_rc "aliased column exit" 0
expect_err "aliased column warning" "ballast: fit: warning: 'x2' is aliased"
expect_json "aliased column flagged" "coef[2].aliased" true
expect_json "aliased column label" "coef[2].label" '"x2"'
expect_json "aliased column no estimate" "coef[2].beta" null
expect_json "others not aliased" "coef[1].aliased" false
expect_json "aliased rank" fit.rank 3
expect_json "aliased dof_resid" fit.dof_resid 3
expect_py "aliased: others as without it" \
  'all(abs(a - b) <= 1e-12 * max(1, abs(b)) for a, b in zip(
     [d["coef"][i]["beta"] for i in (0, 1, 3)],
     [c["beta"] for c in load("noalias.json")["coef"]]))'

# ---------------------------------------------------------------- overdispersed counts
# Counts whose Pearson chi2 / dof is about 31, far above 1.  With --dispersion pearson the
# standard errors are those of the model times sqrt(phi_pearson) and the estimates stay the
# same (quasi-likelihood scale; McCullagh & Nelder 1989, Generalized Linear Models, 2nd ed.,
# sec. 4.5, from memory).
printf 'y,x\n0,1\n0,2\n25,3\n1,4\n0,5\n40,6\n2,7\n0,8\n60,9\n3,10\n0,11\n30,12\n' >over.csv
bl fit over.csv --response y --terms x --family poisson --json
expect_rc "overdispersed exit" 0
expect_err "overdispersion warning" "ballast: fit: warning: overdispersion"
expect_err "overdispersion advice" "--dispersion pearson"
expect_json "overdispersed se kind" se_kind '"model"'
expect_json "poisson link" model.link '"log"'
save_out over.json
bl fit over.csv --response y --terms x --family poisson --dispersion pearson --json
expect_rc "--dispersion pearson exit" 0
expect_json "--dispersion pearson se kind" se_kind '"pearson"'
expect_no_err "--dispersion pearson: no overdispersion warning" "overdispersion"
cat >scale.py <<'EOF'
import json, sys
m = json.load(open("over.json"))
p = json.load(open(sys.argv[1]))
f = m["fit"]["phi_pearson"] ** 0.5
ok = all(abs(a["beta"] - b["beta"]) <= 1e-12 * max(1, abs(b["beta"]))
         and abs(a["se"] - f * b["se"]) <= 1e-10 * b["se"] * f
         for a, b in zip(p["coef"], m["coef"]))
sys.exit(0 if ok and m["fit"]["phi_pearson"] > 10 else 1)
EOF
if python3 scale.py "$tmp/.out"; then
  pass "--dispersion pearson scales se by sqrt(phi)"
else
  fail "--dispersion pearson scales se by sqrt(phi)" "see over.json"
fi

finish
