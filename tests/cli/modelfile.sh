#!/bin/sh
# modelfile.sh -- model files that contradict themselves (issue 14, class 4): each case is a
# model saved by 'ballast fit ... --save', edited in one place by a Python one-liner, then
# given to 'ballast predict'.  Each must be refused with exit 1, the message naming the file
# and the key by its JSON path, nothing written (-o left absent), and the model file's
# checksum unchanged.  The checks and their tolerances are those of doc/model-format.md
# ("What a reader checks"); the expected facts are closed forms (a variance is >= 0; a
# covariance is symmetric and positive semi-definite; a correlation lies in [-1, 1]; Jensen's
# inequality mean exp(e) >= exp(mean e)), common practice, no source.
#
# Run by 'make check' with BALLAST and top_srcdir set; by hand:
#   BALLAST=build/ballast top_srcdir=. sh tests/cli/modelfile.sh
# Exit status: 0 all checks passed, 1 some failed, 99 the test could not run.

# shellcheck source=tests/cli/lib.sh
. "${top_srcdir:?set top_srcdir to the source tree}/tests/cli/lib.sh"

# An invented pump fleet (as in predict.sh): repair hours by site and age, stops over hours.
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

# ---------------------------------------------------------------- the saved models
save () {
  name=$1
  shift
  bl fit pumps.csv "$@" --save "$name" -o fit.json
  expect_rc "fit --save $name" 0
  bl predict "$name" pumps.csv -o /dev/null -q
  expect_rc "predict with $name as saved" 0
}
save gam.json --response repair --terms age,site --family gamma --link log
save log.json --response repair --terms age,site --method ols --transform log
save nb.json --response stops --terms age --family negative-binomial --offset 'log(hours)'
save tw.json --response repair --terms age --family tweedie --power 1.5
save cl.json --response repair --terms age,site --family gamma --link log --se cluster \
  --cluster site

# edit SRC DST CODE: DST is SRC read as JSON into d, changed by the Python statements CODE
# (with math imported), and written back as JSON.
edit () {
  if ! python3 -c '
import json, math, sys
d = json.load(open(sys.argv[1]))
exec(sys.argv[3])
json.dump(d, open(sys.argv[2], "w"), indent=2)
' "$1" "$2" "$3"; then
    echo "modelfile.sh: could not edit $1 into $2" >&2
    exit 99
  fi
}

# refused NAME SRC CODE KEY TEXT: the model SRC edited by CODE is refused by predict: exit 1,
# stderr "ballast: bad.json: 'KEY': ..." holding TEXT, no output, the file unchanged.
n=0
refused () {
  n=$((n + 1))
  f=bad$n.json
  edit "$2" "$f" "$3"
  sum=$(cksum <"$f")
  rm -f out.csv
  bl predict "$f" pumps.csv -o out.csv
  expect_rc "$1: exit" 1
  expect_err "$1: key" "ballast: $f: '$4': "
  expect_err "$1: message" "$5"
  if [ -e out.csv ]; then
    fail "$1: nothing written" "out.csv exists"
  else
    pass "$1: nothing written"
  fi
  if [ "$(cksum <"$f")" = "$sum" ]; then
    pass "$1: model unchanged"
  else
    fail "$1: model unchanged" "the checksum of $f changed"
  fi
}

# ---------------------------------------------------------------- the covariance
refused "negative variance" gam.json 'd["cov"][1][1] = -d["cov"][1][1]' \
  'cov[1][1]' "a variance must be >= 0, got -"
refused "asymmetric covariance" gam.json 'd["cov"][2][1] *= 1.5' \
  'cov[2][1]' "not symmetric: "
# a difference of 1e-14 max|V| is within the tolerance 1e-12 max|V|: read as symmetric
edit gam.json near.json 'm = max(abs(x) for r in d["cov"] for x in r); d["cov"][2][1] += 1e-14 * m'
bl predict near.json pumps.csv -o out.csv
expect_rc "covariance asymmetric within 1e-12 max|V|: accepted" 0
refused "correlation above 1" gam.json \
  'c = 2 * math.sqrt(d["cov"][0][0] * d["cov"][1][1]); d["cov"][1][0] = d["cov"][0][1] = c' \
  'cov[1][0]' "outside [-1, 1]"
# correlations 0.9, 0.9 and -0.9 among columns 1, 2, 3: each in [-1, 1], but the matrix of
# them has the eigenvalue -0.8 (eigenvector (1, -1, -1)), so no covariance has them
refused "not positive semi-definite" gam.json '
s = [math.sqrt(d["cov"][j][j]) for j in range(4)]
for (j, k, r) in ((1, 2, 0.9), (1, 3, 0.9), (2, 3, -0.9)):
    d["cov"][j][k] = d["cov"][k][j] = r * s[j] * s[k]' \
  'cov' "not positive semi-definite: its correlation form has an eigenvalue below -4e-10 (1e-10 times 4 columns"
refused "zero variance, nonzero covariance" gam.json 'd["cov"][3][3] = 0' \
  'cov[3][0]' "a coefficient of zero variance has zero covariances"
refused "an aliased coefficient with a covariance" gam.json 'd["coef"][2] = None' \
  'cov[0][2]' "expected null: the covariance of an aliased (null) coefficient"
refused "a coefficient that is not a number" gam.json 'd["coef"][2] = "0.5"' \
  'coef[2]' "expected a number or null"
refused "a covariance row too short" gam.json 'd["cov"][3] = d["cov"][3][:3]' \
  'cov[3]' "expected an array as long as 'columns'"
# a cluster covariance from 3 clusters has rank 2 < 4 columns: singular, and accepted above

# ---------------------------------------------------------------- dispersions and counts
refused "negative dispersion" gam.json 'd["dispersion"] = -0.04' \
  'dispersion' "expected a number >= 0, got -0.04"
refused "null dispersion" gam.json 'd["dispersion"] = None' \
  'dispersion' "expected a number >= 0"
refused "zero dispersion with a variance" gam.json 'd["dispersion"] = 0' \
  'cov[0][0]' "but the dispersion is 0"
refused "negative phi_pearson" gam.json 'd["phi_pearson"] = -1' \
  'phi_pearson' "expected a number >= 0 or null"
refused "negative phi_ml" gam.json 'd["phi_ml"] = -1' 'phi_ml' "expected a number >= 0 or null"
refused "gamma without phi_ml" gam.json 'd["phi_ml"] = None' \
  'phi_ml' "expected a number: intervals of the gamma family use it"
refused "least squares without phi_pearson" log.json 'd["phi_pearson"] = None' \
  'phi_pearson' "expected a number: intervals of the gaussian family use it"
refused "rank above the estimated coefficients" gam.json 'd["rank"] = 5' \
  'rank' "5, but 'coef' has 4 estimated (non-null) coefficients"
refused "rank above n" gam.json 'd["n"] = 3' 'rank' "4 is more than the 3 rows ('n')"
refused "no rows" gam.json 'd["n"] = 0' 'n' "expected at least 1 row"
refused "dof_resid above n - rank" gam.json 'd["dof_resid"] = 9' \
  'dof_resid' "9 is more than n - rank = 8"
refused "t intervals on 0 dof" gam.json 'd["dof_resid"] = 0' \
  'wald_is_t' "t intervals need dof_resid >= 1"
refused "level 1.5" gam.json 'd["level"] = 1.5' 'level' "expected a number in (0, 1), got 1.5"
refused "level 0" gam.json 'd["level"] = 0' 'level' "expected a number in (0, 1), got 0"
refused "se kind unknown" gam.json 'd["se_kind"] = "robust"' \
  'se_kind' "expected model, hc0, hc1, hc2, hc3, cluster or pearson, got 'robust'"

# ---------------------------------------------------------------- family parameters
refused "negative theta" nb.json 'd["family_par"] = -2' \
  'family_par' "the negative binomial's theta must be a positive number, got -2"
refused "theta 0" nb.json 'd["family_par"] = 0' 'family_par' "must be a positive number, got 0"
refused "no theta" nb.json 'd["family_par"] = None' 'family_par' "must be a positive number"
refused "Tweedie power 2.5" tw.json 'd["family_par"] = 2.5' \
  'family_par' "the Tweedie power must lie strictly between 1 and 2, got 2.5"
refused "Tweedie power 1" tw.json 'd["family_par"] = 1' 'family_par' "strictly between 1 and 2"
refused "a parameter for the gamma family" gam.json 'd["family_par"] = 3' \
  'family_par' "expected null: the gamma family has no parameter"

# ---------------------------------------------------------------- kinds
refused "method unknown" gam.json 'd["method"] = "irls"' \
  'method' "expected glm, ols or wls, got 'irls'"
refused "family unknown" gam.json 'd["family"] = "weibull"' 'family' \
  "unknown family 'weibull' (expected gaussian, poisson, gamma, inverse-gaussian, negative-binomial, tweedie)"
refused "link unknown" gam.json 'd["link"] = "logit"' 'link' \
  "unknown link 'logit' (expected identity, log, inverse, sqrt)"
refused "variance kind unknown" gam.json 'd["variance"]["kind"] = "column^2"' \
  'variance.kind' "expected none, column or fitted, got 'column^2'"
refused "a variance power without a variance function" gam.json 'd["variance"]["power"] = 2' \
  'variance.power' "expected null: kind none has no power"
refused "a variance column without a column variance" gam.json \
  'd["variance"]["column"] = "age"' 'variance.column' "expected null"
refused "transform kind unknown" log.json 'd["transform"]["kind"] = "exp"' \
  'transform.kind' "expected none, log, sqrt or boxcox, got 'exp'"
refused "lambda on a log transform" log.json 'd["transform"]["lambda"] = 0.5' \
  'transform.lambda' "expected null: only kind boxcox has a lambda"
refused "a shift without a transform" gam.json 'd["transform"]["shift"] = 1' \
  'transform.shift' "expected 0: kind none shifts nothing"

# ---------------------------------------------------------------- names and levels
refused "levels repeated" gam.json 'd["categorical"][0]["levels"][1] = "mill-lane"' \
  'categorical[0].levels[1]' "level 'mill-lane' of 'site' repeats levels[0]"
refused "reference among the levels" gam.json 'd["categorical"][0]["reference"] = "north-quay"' \
  'categorical[0].reference' "the reference 'north-quay' of 'site' is also listed in levels[1]"
refused "empty reference" gam.json 'd["categorical"][0]["reference"] = ""' \
  'categorical[0].reference' "expected a level, got ''"
refused "no levels" gam.json 'd["categorical"][0]["levels"] = []' \
  'categorical[0].levels' "'site' has no level besides its reference"
refused "a level that is not a string" gam.json 'd["categorical"][0]["levels"][1] = 7' \
  'categorical[0].levels[1]' "expected a string"
refused "a categorical column twice" gam.json \
  'd["categorical"].append(dict(d["categorical"][0]))' \
  'categorical[1].column' "'site' repeats categorical[0].column"
refused "column labels repeated" gam.json 'd["columns"][3] = d["columns"][2]' \
  'columns[3]' "'site=mill-lane' repeats columns[2]"
refused "intercept not first" gam.json 'd["columns"][0] = "const"' \
  'columns[0]' "expected 'intercept' (the model has an intercept), got 'const'"
refused "empty response" gam.json 'd["response"] = ""' 'response' "got ''"
refused "a term that is not a string" gam.json 'd["terms"][1] = 3' 'terms[1]' "expected a string"

# ---------------------------------------------------------------- smearing
refused "smearing on an untransformed model" gam.json \
  'd["smearing"] = json.load(open("log.json"))["smearing"]' \
  'smearing' "expected null: a model without a transform has no smearing data"
refused "smearing n unlike the fit's" log.json \
  's = d["smearing"]; s["n"] += 1; s["residuals"].append(0.0)' \
  'smearing.n' "13 residuals, but the fit has 12 rows ('n')"
refused "smearing stride unlike the writer's" log.json \
  's = d["smearing"]; s["stride"] = 2; s["residuals"] = s["residuals"][::2]' \
  'smearing.stride' "2, but n = 12 gives the stride 1"
refused "smearing mean_exp 0" log.json 'd["smearing"]["mean_exp"] = 0' \
  'smearing.mean_exp' "a mean of exp(e) must be > 0, got 0"
refused "smearing mean_exp below exp(mean)" log.json \
  's = d["smearing"]; s["mean_exp"] = 0.9 * math.exp(s["mean"])' \
  'smearing.mean_exp' "is below exp(mean)"
refused "smearing mean_sq below mean^2" log.json 'd["smearing"]["mean_sq"] = -1' \
  'smearing.mean_sq' "-1 is below mean^2"
refused "smearing min above the mean" log.json \
  's = d["smearing"]; s["min"] = max(s["residuals"])' 'smearing.min' "is above the mean"
refused "a kept residual below min" log.json '
s = d["smearing"]; r = s["residuals"]; k = r.index(min(r)); r[k] = s["min"] - 1' \
  "smearing.residuals[$(python3 -c 'import json; r = json.load(open("log.json"))["smearing"]["residuals"]; print(r.index(min(r)))')]" \
  "is below the least residual 'min'"
refused "smearing min not the least residual" log.json \
  's = d["smearing"]; s["min"] = s["min"] - 0.5' 'smearing.min' "but the least of the 12 residuals is"
refused "smearing mean unlike the residuals'" log.json 'd["smearing"]["mean"] -= 0.05' \
  'smearing.mean' "but the 12 residuals have the mean"
refused "a residual that is not a number" log.json 'd["smearing"]["residuals"][4] = None' \
  'smearing.residuals[4]' "expected a number"

finish
