#!/bin/sh
# demo.sh -- the shipped demo data: regenerate and compare them (data/demo.sh), then fit the
# two models the data were made from and find the generating coefficients.
#
# Run by 'make check' with BALLAST, GEN_DEMO, top_srcdir (and optionally VALGRIND) set; by hand:
#   BALLAST=build/ballast GEN_DEMO=build/data/gen_demo top_srcdir=. sh tests/cli/demo.sh
# Exit status: 0 all checks passed, 1 some failed, 99 the test could not run.

# shellcheck source=tests/cli/lib.sh
. "${top_srcdir:?set top_srcdir to the source tree}/tests/cli/lib.sh"

if [ -z "${GEN_DEMO:-}" ]; then
  echo "demo.sh: set GEN_DEMO to the built data/gen_demo" >&2
  exit 99
fi
data=$top_srcdir/data
readme=$data/README.md

# ---------------------------------------------------------------- data/demo.sh
run sh "$data/demo.sh" "$GEN_DEMO" "$data"
expect_rc "demo.sh: shipped files are what gen_demo makes" 0
expect_out "demo.sh: pumps.csv identical" "demo.sh: pumps.csv: identical (3001 lines)"
expect_out "demo.sh: stops.csv identical" "demo.sh: stops.csv: identical (2401 lines)"
run sh "$data/demo.sh" "$GEN_DEMO"
expect_rc "demo.sh: one argument is a usage error" 2
run sh "$data/demo.sh" "$data/README.md" "$data"
expect_rc "demo.sh: a GEN_DEMO that is not executable is a usage error" 2
expect_err "demo.sh: says so" "not an executable file"
mkdir nodata
run sh "$data/demo.sh" "$GEN_DEMO" nodata
expect_rc "demo.sh: a folder without the files fails" 1

# ---------------------------------------------------------------- the generating values
# The true models are documented in data/README.md; check that the text still says what the
# numbers below assume, so that the two cannot drift apart silently.
# shellcheck disable=SC2016  # the backquotes are Markdown, not a command substitution
for s in 'log mu = 0.9 + 0.045 age_years + 0.012 load_pct + site effect' \
  'north-quay 0, kiln-road 0.15, mill-lane -0.10, eastern-wharf 0.25,' \
  'salt-marsh -0.20, quarry-top 0.05.' \
  'eta = -7.6 + 0.06 mean_age + site effect' \
  'north-quay 0, kiln-road 0.20, mill-lane -0.15, eastern-wharf 0.30, salt-marsh' \
  '-0.25, quarry-top 0.10' \
  '`NA` in 34 rows'; do
  if grep -F -q -e "$s" "$readme"; then
    pass "README documents '$s'"
  else
    fail "README documents '$s'" "not found in $readme"
  fi
done

# within4 LABEL=VALUE...: each named coefficient is within 4 standard errors of VALUE.  Four
# standard errors: a correct fit fails this with probability about 6e-5 per coefficient
# (normal tail, common practice, no source); the data are fixed, so the result is too.
within4 () {
  w_name=$1
  shift
  if w_msg=$(python3 -c '
import json, sys
d = json.load(open(sys.argv[1]))
coef = {c["label"]: c for c in d["coef"]}
bad = []
for arg in sys.argv[2:]:
    label, value = arg.rsplit("=", 1)
    if label not in coef:
        bad.append("%s absent" % label)
        continue
    c = coef[label]
    z = (c["beta"] - float(value)) / c["se"]
    if not abs(z) <= 4:
        bad.append("%s = %.6g is %.2f se from %s" % (label, c["beta"], z, value))
if bad:
    print("; ".join(bad))
    sys.exit(1)
' "$tmp/.out" "$@" 2>&1); then
    pass "$w_name"
  else
    fail "$w_name" "$w_msg"
  fi
}

# ---------------------------------------------------------------- pumps: gamma, log link
# log mu = 0.9 + 0.045 age_years + 0.012 load_pct + site effect (data/README.md).  The reference
# site is eastern-wharf (first in byte order, effect 0.25), so the fitted intercept estimates
# 0.9 + 0.25 and each site contrast its effect minus 0.25.
bl fit "$data/pumps.csv.gz" --response repair_hours --terms 'age_years, load_pct, site' \
  --family gamma --link log --json
expect_rc "pumps: gamma fit exit" 0
expect_json "pumps: converged" status.converged true
expect_json "pumps: family" model.family '"gamma"'
expect_json "pumps: link" model.link '"log"'
expect_json "pumps: rows read" data.rows_read 3000
expect_json "pumps: rows used" data.rows_used 2966
expect_json "pumps: load_pct NA rows set aside" data.drop_reasons '{"missing '\''load_pct'\''": 34}'
expect_err "pumps: warns of the rows set aside" "warning: 34 rows set aside (missing 'load_pct')"
expect_json "pumps: rank" fit.rank 8
within4 "pumps: age_years within 4 se of 0.045" age_years=0.045
within4 "pumps: load_pct within 4 se of 0.012" load_pct=0.012
within4 "pumps: intercept and sites within 4 se" intercept=1.15 site=north-quay=-0.25 \
  site=kiln-road=-0.10 site=mill-lane=-0.35 site=salt-marsh=-0.45 site=quarry-top=-0.20

# ---------------------------------------------------------------- stops: poisson, log(exposure)
# eta = -7.6 + 0.06 mean_age + site effect, mean = operating_hours exp(eta) u (data/README.md).
# The reference site is eastern-wharf again (effect 0.30).  The frailty u makes the counts
# overdispersed (Pearson dispersion near 1.35), so model standard errors are about
# sqrt(1.35) = 1.16 times too small; four of them still hold the true values.
bl fit "$data/stops.csv.gz" --response unplanned_stops --terms 'mean_age, site' \
  --family poisson --link log --offset 'log(operating_hours)' --json
expect_rc "stops: poisson fit exit" 0
expect_json "stops: converged" status.converged true
expect_json "stops: family" model.family '"poisson"'
expect_json "stops: offset" model.offset '"log(operating_hours)"'
expect_json "stops: rows used" data.rows_used 2400
expect_json "stops: rank" fit.rank 7
within4 "stops: mean_age within 4 se of 0.06" mean_age=0.06
within4 "stops: intercept and sites within 4 se" intercept=-7.3 site=north-quay=-0.30 \
  site=kiln-road=-0.10 site=mill-lane=-0.45 site=salt-marsh=-0.55 site=quarry-top=-0.20
# Without the exposure the rate model is wrong: the fit still runs, but the age coefficient
# is no longer the generating one (a check that the offset is used at all).
bl fit "$data/stops.csv.gz" --response unplanned_stops --terms 'mean_age, site' \
  --family poisson --link log --json
expect_rc "stops without offset exit" 0
expect_py "stops without offset: intercept far from -7.3" \
  'abs(d["coef"][0]["beta"] + 7.3) > 4 * d["coef"][0]["se"]'

finish
