#!/bin/sh
# remedies.sh -- 'ballast fit' with the remedies for non-constant variance: --method wls with
# --variance, --transform with --shift, and --se: exit status, stderr text and the JSON keys.
#
# Run by 'make check' with BALLAST, top_srcdir (and optionally VALGRIND) set; by hand:
#   BALLAST=build/ballast top_srcdir=. sh tests/cli/remedies.sh
# Exit status: 0 all checks passed, 1 some failed, 99 the test could not run.
# Messages follow STYLE.md (Command line): "ballast: CONTEXT: message", usage errors add
# "see 'ballast fit --help'"; exit 0 done, 1 data or model problem, 2 usage.
# Values are cross-checked against tests/reference/remedies_mle.txt (SciPy, see
# tests/reference/remedies_mle.py), the same numbers tests/check_wls.c and
# tests/check_transform.c use, with looser tolerances (the JSON carries %.17g, so only the
# fit's own accuracy matters).

# shellcheck source=tests/cli/lib.sh
. "${top_srcdir:?set top_srcdir to the source tree}/tests/cli/lib.sh"

data=$top_srcdir/tests/data/remedies.csv
ref=$top_srcdir/tests/reference/remedies_mle.txt
usage_hint="see 'ballast fit --help'"

# ref CASE KEY: the first value of KEY in CASE of remedies_mle.txt.
ref () {
  awk -v c="$1" -v k="$2" '$1 == "case" { on = ($2 == c) } on && $1 == k { print $2; exit }' \
    "$ref"
}
if [ ! -r "$data" ] || [ ! -r "$ref" ]; then
  echo "remedies.sh: '$data' or '$ref' is missing" >&2
  exit 99
fi

# ---------------------------------------------------------------- small data
# y <= 0 at lines 4 and 6 (for the transforms); a variance column v <= 0 at line 5.
cat >neg.csv <<'EOF'
y,x,v
3.1,1.2,0.8
4.4,2.3,1.7
0,2.9,1.1
5.9,3.1,0
-2,3.8,2.2
7.3,4.6,1.9
EOF
# A falling line whose OLS fitted means go below 0 from line 8 (x = 5.8) on (the fitted line
# is 5.261 - 0.9651 x, numpy.polyfit).
cat >falling.csv <<'EOF'
y,x
4.61,0.5
4.08,1.1
3.52,1.9
2.73,2.8
1.69,3.9
0.55,4.9
-0.31,5.8
-1.42,6.7
EOF
# The spread grows like x^5 (a variance power far beyond 6): x^est is not identified.
awk 'BEGIN { print "y,x"; for (i = 0; i < 40; i++) { x = 1 + 0.23 * i;
             printf "%.12g,%.12g\n", 1.3 + x + 1e-3 * x^5 * sin(2.1 * i), x } }' >wide.csv
# Row 4 (line 5) has its own indicator d: leverage 1.
cat >lev.csv <<'EOF'
y,x,d
3.1,1.2,0
4.4,2.3,0
5.2,2.9,0
5.9,3.1,1
6.2,3.8,0
7.3,4.6,0
EOF

# ---------------------------------------------------------------- usage errors (exit 2)
for v in 'x' 'x^' 'x^abc' '^2' 'fitted^' 'fitted^1.5e' 'fitted'; do
  bl fit "$data" --response hours --terms load --variance "$v"
  expect_rc "--variance '$v' exit" 2
  expect_err "--variance '$v' message" \
    "ballast: --variance: expected COL^K or fitted^K with K a number or 'est', got '$v'"
  expect_err "--variance '$v' hint" "$usage_hint"
  expect_out_empty "--variance '$v': nothing on stdout"
done
for t in 'boxcox=abc' 'boxcox=' 'cube' 'LOG'; do
  bl fit "$data" --response hours --terms load --transform "$t"
  expect_rc "--transform '$t' exit" 2
  expect_err "--transform '$t' message" \
    "ballast: --transform: expected log, sqrt, boxcox or boxcox=L, got '$t'"
  expect_err "--transform '$t' hint" "$usage_hint"
done
bl fit "$data" --response hours --terms load --transform log --shift 1x
expect_rc "--shift 1x exit" 2
expect_err "--shift 1x message" "ballast: --shift: expected a number, got '1x'"
bl fit "$data" --response hours --terms load --shift 1
expect_rc "--shift without --transform exit" 2
expect_err "--shift without --transform message" \
  "ballast: --shift: a shift applies only with --transform"
expect_err "--shift without --transform hint" "$usage_hint"
bl fit "$data" --response hours --terms load --method wls
expect_rc "wls without weights or variance exit" 2
expect_err "wls without weights or variance message" \
  "ballast: --method: wls needs --weights COL or --variance EXPR"
expect_err "wls without weights or variance hint" "$usage_hint"
for m in glm ols; do
  bl fit "$data" --response hours --terms load --method $m --variance fitted^est
  expect_rc "--variance with --method $m exit" 2
  expect_err "--variance with --method $m message" \
    "ballast: --variance: a variance function needs --method wls"
done
bl fit "$data" --response hours --terms load --se hc9
expect_rc "--se hc9 exit" 2
expect_err "--se hc9 message" "ballast: --se: expected model, hc0, hc1, hc2, hc3 or cluster, got 'hc9'"
expect_err "--se hc9 hint" "$usage_hint"
expect_out_empty "--se hc9: nothing on stdout"

# ---------------------------------------------------------------- data and model errors
# Data problems exit 1; a combination the library refuses as a specification (BL_ESPEC: a
# missing column, a transform with a GLM family, an offset with wls) exits 2 with the usage
# hint, as cli_lib_error does for every command.
for t in log sqrt boxcox boxcox=0.5; do
  bl fit neg.csv --response y --terms x --transform $t
  expect_rc "$t y <= 0 exit" 1
  expect_err "$t y <= 0 where" "ballast: neg.csv:4: 'y' has 2 values <= 0"
  expect_err "$t y <= 0 message" "needs y > 0"
  expect_out_empty "$t y <= 0: nothing on stdout"
  bl fit neg.csv --response y --terms x --transform $t --shift 2.5 --json
  expect_rc "$t --shift 2.5 exit" 0
  expect_err "$t --shift 2.5 warning" "ballast: fit: warning: the response was shifted by 2.5"
  expect_err "$t --shift 2.5 warning text" "every result depends on that choice"
  expect_json "$t --shift 2.5 shift" model.transform.shift 2.5
  bl fit neg.csv --response y --terms x --transform $t --shift 2
  expect_rc "$t --shift 2 exit" 1
  expect_err "$t --shift 2 message" "ballast: neg.csv:6: 'y' + 2 has 1 value <= 0"
done
bl fit neg.csv --response y --terms x --method wls --variance v^1
expect_rc "variance column <= 0 exit" 1
expect_err "variance column <= 0 message" \
  "ballast: neg.csv:5: variance column 'v': value 0 is not > 0"
bl fit neg.csv --response y --terms x --variance nosuch^1
expect_rc "variance column absent exit" 2
expect_err "variance column absent message" "ballast: --variance: no column 'nosuch'"
bl fit falling.csv --response y --terms x --variance fitted^1
expect_rc "fitted <= 0 exit" 1
expect_err "fitted <= 0 where" "ballast: falling.csv:8: "
expect_err "fitted <= 0 message" "fitted mean"
bl fit "$data" --response hours --terms load --transform log --family gamma
expect_rc "transform with gamma exit" 2
expect_err "transform with gamma message" "ballast: --transform: a transformed response is fitted"
expect_err "transform with gamma hint" "$usage_hint"
bl fit "$data" --response hours --terms load --variance load^1 --offset 'log(load)'
expect_rc "wls with an offset exit" 2
expect_err "wls with an offset message" "ballast: --offset: an offset applies to GLMs only"
expect_err "wls with an offset hint" "$usage_hint"
bl fit wide.csv --response y --terms x --variance x^est
expect_rc "x^est not identified exit" 1
expect_err "x^est not identified message" "it is not identified by these data"
for k in hc2 hc3; do
  bl fit lev.csv --response y --terms x,d --se $k
  expect_rc "$k leverage 1 exit" 1
  expect_err "$k leverage 1 message" "ballast: lev.csv:5: leverage 1 (the row fits itself"
done
bl fit lev.csv --response y --terms x,d --se hc1 --json
expect_rc "hc1 leverage 1 exit" 0
expect_json "hc1 leverage 1 se_kind" se_kind '"hc1"'

# ---------------------------------------------------------------- JSON of the remedies
# fitted^est against SciPy (remedies_mle.txt, case fitted_est).
bl fit "$data" --response hours --terms load --weights w --variance fitted^est --json
expect_rc "fitted^est exit" 0
expect_json "fitted^est method" model.method '"wls"'
expect_json_has "fitted^est variance keys" model.variance.expr model.variance.power \
  model.variance.power_se
expect_json "fitted^est expr" model.variance.expr '"fitted^2.757"'
expect_json "fitted^est K" model.variance.power "$(ref fitted_est K)" 1e-5
expect_json "fitted^est K se" model.variance.power_se "$(ref fitted_est K_se)" 1e-3
expect_json "fitted^est loglik" fit.loglik "$(ref fitted_est loglik)" 1e-8
expect_json "fitted^est k" fit.k 4
expect_json "fitted^est se_kind" se_kind '"model"'
# load^est (case col_est), and a fixed power with hc3 standard errors.
bl fit "$data" --response hours --terms load --weights w --variance load^est --json
expect_rc "load^est exit" 0
expect_json "load^est K" model.variance.power "$(ref col_est K)" 1e-5
expect_json "load^est loglik" fit.loglik "$(ref col_est loglik)" 1e-8
expect_py "load^est expr" 'd["model"]["variance"]["expr"].startswith("load^1.659")'
bl fit "$data" --response hours --terms load --weights w --variance '[load]^1.7' --se hc3 --json
expect_rc "load^1.7 hc3 exit" 0
expect_json "load^1.7 expr" model.variance.expr '"load^1.7"'
expect_json "load^1.7 power" model.variance.power 1.7
expect_json "load^1.7 power_se" model.variance.power_se null
expect_json "load^1.7 se_kind" se_kind '"hc3"'
save_out hc3.json
bl fit "$data" --response hours --terms load --weights w --variance load^1.7 --json
expect_py "hc3: same beta as the model se" \
  'd["coef"][1]["beta"] == load("hc3.json")["coef"][1]["beta"]'
expect_py "hc3: another se than the model se" \
  'd["coef"][1]["se"] != load("hc3.json")["coef"][1]["se"]'
# Known weights only: method wls without a variance function.
bl fit "$data" --response hours --terms load --method wls --weights w --json
expect_rc "wls weights exit" 0
expect_json "wls weights method" model.method '"wls"'
expect_json "wls weights variance" model.variance null

# Box-Cox against SciPy (case boxcox_flow: no practical power) and the NumPy profile
# (case boxcox_reg: practical power 0).
bl fit "$data" --response flow --transform boxcox --json
expect_rc "boxcox flow exit" 0
expect_json_has "boxcox transform keys" model.transform.name model.transform.lambda \
  model.transform.lambda_lo model.transform.lambda_hi model.transform.lambda_practical \
  model.transform.shift fit.loglik_transformed
expect_json "boxcox flow name" model.transform.name '"boxcox"'
expect_json "boxcox flow method" model.method '"ols"'
expect_json "boxcox flow lambda" model.transform.lambda "$(ref boxcox_flow lambda)" 1e-6
expect_json "boxcox flow lo" model.transform.lambda_lo "$(ref boxcox_flow lambda_lo)" 1e-4
expect_json "boxcox flow hi" model.transform.lambda_hi "$(ref boxcox_flow lambda_hi)" 1e-4
expect_json "boxcox flow practical" model.transform.lambda_practical null
expect_json "boxcox flow shift" model.transform.shift null
expect_json "boxcox flow loglik" fit.loglik "$(ref boxcox_flow loglik)" 1e-8
expect_json "boxcox flow k" fit.k 3
bl fit "$data" --response hours --terms load --transform boxcox --se hc3 --json
expect_rc "boxcox hours exit" 0
expect_json "boxcox hours lambda" model.transform.lambda "$(ref boxcox_reg lambda)" 1e-6
expect_json "boxcox hours practical" model.transform.lambda_practical 0
expect_py "boxcox hours practical not -0" \
  'math.copysign(1.0, d["model"]["transform"]["lambda_practical"]) > 0'
expect_json "boxcox hours se_kind" se_kind '"hc3"'
# A fixed power: no interval, k = rank + 1; the loglik on y's scale adds (L - 1) sum log y.
bl fit "$data" --response hours --terms load --transform boxcox=1 --json
expect_rc "boxcox=1 exit" 0
expect_json "boxcox=1 lambda" model.transform.lambda 1
expect_json "boxcox=1 lo" model.transform.lambda_lo null
expect_json "boxcox=1 k" fit.k 3
expect_py "boxcox=1 loglik = loglik_transformed (Jacobian 0)" \
  'abs(d["fit"]["loglik"] - d["fit"]["loglik_transformed"]) <= 1e-12 * abs(d["fit"]["loglik"])'
bl fit "$data" --response hours --terms load --transform log --json
expect_rc "log exit" 0
expect_json "log name" model.transform.name '"log"'
expect_json "log lambda" model.transform.lambda null
slog=$(awk -F, 'NR > 1 { s += log($1) } END { printf "%.17g", s }' "$data")
expect_py "log loglik = loglik_transformed - sum log y" \
  "abs(d['fit']['loglik'] - (d['fit']['loglik_transformed'] - $slog)) <= 1e-9 * 200"

finish
