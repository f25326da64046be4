#!/bin/sh
# families.sh -- 'ballast fit' and 'ballast diagnose' with the negative binomial and Tweedie
# families, the nested-model test (--against), cluster standard errors (--se cluster
# --cluster) and the spread test by group (diagnose --by): exit status, stderr text, JSON keys.
#
# Run by 'make check' with BALLAST, top_srcdir (and optionally VALGRIND) set; by hand:
#   BALLAST=build/ballast top_srcdir=. sh tests/cli/families.sh
# Exit status: 0 all checks passed, 1 some failed, 99 the test could not run.
# Exit codes per STYLE.md: 0 done, 1 data or model problem, 2 usage (with the line
# "see 'ballast fit --help'").

# shellcheck source=tests/cli/lib.sh
. "${top_srcdir:?set top_srcdir to the source tree}/tests/cli/lib.sh"

nb=$top_srcdir/tests/data/nb_counts.csv
usage_hint="see 'ballast fit --help'"

# ---------------------------------------------------------------- data
# nb_counts.csv (invented, tests/reference/nb_mle.py) with a group g (3 levels) and a cluster
# cl (7 clusters) added by row number.
awk -F, 'NR == 1 { print $0 ",g,cl"; next }
         { print $0 "," substr("pqr", NR % 3 + 1, 1) "," NR % 7 }' "$nb" >nbg.csv
# Tweedie data, 300 rows, p = 1.5, phi = 1, log mu = 0.3 + 0.7 x, from Python's Mersenne
# Twister with a fixed seed (N ~ Poisson(lambda) by inversion, y = Gamma(N alpha, gamma)):
# the compound Poisson-gamma representation (Jorgensen 1997, section 4.2).
python3 - >tw.csv <<'EOF'
import math, random
random.seed(20261202)
p, phi = 1.5, 1.0
print("y,x")
for i in range(300):
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
    print("%.6f,%s" % (y, x))
EOF

# ---------------------------------------------------------------- option errors (usage, 2)
bl fit "$nb" --response y --terms x1,x2 --family negative-binomial --theta 0
expect_rc "--theta 0 exit" 2
expect_err "--theta 0 message" "ballast: --theta: expected a positive number, got '0'"
expect_err "--theta 0 hint" "$usage_hint"
expect_out_empty "--theta 0 stdout"

bl fit "$nb" --response y --terms x1,x2 --family gamma --theta 2
expect_rc "--theta with gamma exit" 2
expect_err "--theta with gamma message" \
  "ballast: --theta: theta applies to --family negative-binomial only"

bl fit tw.csv --response y --terms x --family tweedie --power 2.5
expect_rc "--power 2.5 exit" 2
expect_err "--power 2.5 message" \
  "ballast: --power: expected a number strictly between 1 and 2, or 'est', got '2.5'"

bl fit "$nb" --response y --terms x1,x2 --family poisson --power 1.5
expect_rc "--power with poisson exit" 2
expect_err "--power with poisson message" \
  "ballast: --power: power applies to --family tweedie only"

bl fit "$nb" --response y --terms x1,x2 --family poisson --se cluster
expect_rc "--se cluster without --cluster exit" 2
expect_err "--se cluster without --cluster message" \
  "ballast: --se: cluster standard errors need --cluster COL"
expect_err "--se cluster without --cluster hint" "$usage_hint"

bl fit "$nb" --response y --terms x1,x2 --family poisson --cluster x1
expect_rc "--cluster without --se cluster exit" 2
expect_err "--cluster without --se cluster message" \
  "ballast: --cluster: --cluster applies with --se cluster"

bl fit nbg.csv --response y --terms x1,x2 --family poisson --se cluster --cluster zz
expect_rc "--cluster missing column exit" 2
expect_err "--cluster missing column message" "ballast: --cluster: no column 'zz' in the data"
expect_out_empty "--cluster missing column stdout"

bl fit "$nb" --response y --terms x1,x2 --family poisson --against 'x1,('
expect_rc "--against bad syntax exit" 2
expect_err "--against bad syntax message" "ballast: --against: at character 4:"
expect_err "--against bad syntax hint" "$usage_hint"

bl fit "$nb" --response y --terms x1 --family poisson --against x2
expect_rc "--against not nested exit" 2
# refused before any work, by the terms (issue 14)
expect_err "--against not nested message" "ballast: --against: the smaller model is not \
nested in the larger: its term 'x2' is not one of --terms"

bl fit "$nb" --response y --terms x1,x2 --family poisson --against x2,x1
expect_rc "--against same model exit" 2
expect_err "--against same model message" \
  "ballast: --against: the smaller model has every term of the larger: nothing to test"

# ---------------------------------------------------------------- negative binomial
# theta and its standard error against the SciPy maximization (tests/reference/nb_mle.txt,
# case estimated: theta 2.318655088017265, theta_se_conditional 0.8170014352677546).
bl fit "$nb" --response y --terms x1,x2 --weights w --family negative-binomial --json
expect_rc "nb fit exit" 0
expect_json "nb fit.theta" fit.theta 2.318655088017265 1e-8
expect_json "nb fit.theta_se" fit.theta_se 0.8170014352677546 1e-6
expect_json "nb fit.theta_estimated" fit.theta_estimated true
expect_json "nb fit.k" fit.k 4
expect_json "nb fit.loglik (SciPy -176.67934007450643)" fit.loglik -176.67934007450643 1e-9
expect_json "nb model.family" model.family '"negative-binomial"'

bl fit "$nb" --response y --terms x1,x2 --weights w --family negative-binomial --theta 1.7 \
  --json
expect_rc "nb fixed theta exit" 0
expect_json "nb fixed fit.theta" fit.theta 1.7
expect_json "nb fixed fit.theta_estimated" fit.theta_estimated false
expect_json "nb fixed loglik (SciPy -177.11236811789348)" fit.loglik -177.11236811789348 1e-9

# ---------------------------------------------------------------- Tweedie
bl fit tw.csv --response y --terms x --family tweedie --json
expect_rc "tweedie fit exit" 0
expect_json_has "tweedie keys" fit.power fit.power_lo fit.power_hi fit.power_estimated
expect_py "tweedie interval holds p-hat" \
  "d['fit']['power_lo'] < d['fit']['power'] < d['fit']['power_hi']"
expect_py "tweedie interval covers 1.5 (the generating power)" \
  "d['fit']['power_lo'] < 1.5 < d['fit']['power_hi']"
expect_json "tweedie k (2 coefficients, phi, p)" fit.k 4

bl fit tw.csv --response y --terms x --family tweedie --power 1.5 --json
expect_rc "tweedie fixed power exit" 0
expect_json "tweedie fixed fit.power" fit.power 1.5
expect_json "tweedie fixed fit.power_estimated" fit.power_estimated false
expect_json "tweedie fixed k" fit.k 3

# ---------------------------------------------------------------- --against
# poisson: the statistic is the difference of the two models' deviances, chi-square on 1
# dof: p = erfc(sqrt(stat / 2)) (the chi-square(1) tail; Abramowitz & Stegun 26.4.4).
bl fit "$nb" --response y --terms x1 --family poisson --json
save_out small.json
bl fit "$nb" --response y --terms x1,x2 --family poisson --against x1 --json
expect_rc "--against exit" 0
expect_json_has "--against keys" against.terms against.stat against.dof against.p against.form
expect_json "--against terms" against.terms '"x1"'
expect_json "--against dof" against.dof 1
expect_json "--against form" against.form '"chisq"'
expect_py "--against stat = deviance difference" \
  "abs(d['against']['stat'] - (load('small.json')['fit']['deviance'] - d['fit']['deviance'])) \
<= 1e-9 * d['fit']['deviance']"
expect_py "--against p = chi2(1) tail" \
  "abs(d['against']['p'] - math.erfc(math.sqrt(d['against']['stat'] / 2))) <= 1e-12"

bl fit "$nb" --response y --terms x1,x2 --family gamma --against x1 --json
expect_rc "--against gamma: y has zeros exit" 1

# negative binomial with theta estimated in both models: the statistic is the likelihood
# ratio 2 (l_big - l_small) (the deviances are at different theta and do not subtract)
bl fit "$nb" --response y --terms x1 --weights w --family negative-binomial --json
save_out nbsmall.json
bl fit "$nb" --response y --terms x1,x2 --weights w --family negative-binomial --against x1 \
  --json
expect_rc "--against nb exit" 0
expect_py "--against nb stat = 2 (l_big - l_small)" \
  "abs(d['against']['stat'] - 2 * (d['fit']['loglik'] - load('nbsmall.json')['fit']['loglik'])) \
<= 1e-6"

# ---------------------------------------------------------------- --se cluster
bl fit nbg.csv --response y --terms x1,x2 --family poisson --se cluster --cluster cl --json
expect_rc "--se cluster exit" 0
expect_json "--se cluster se_kind" se_kind '"cluster"'
expect_json "--se cluster clusters" clusters 7
bl fit nbg.csv --response y --terms x1,x2 --family poisson --se cluster --cluster g \
  --categorical g --json
expect_rc "--se cluster categorical exit" 0
expect_json "--se cluster categorical clusters" clusters 3

# ---------------------------------------------------------------- diagnose --by
bl diagnose nbg.csv --response y --terms x1,x2 --family poisson --by g --categorical g --json
expect_rc "diagnose --by exit" 0
expect_json_has "diagnose --by keys" by.column by.stat by.dof by.p by.groups
expect_json "diagnose --by column" by.column '"g"'
expect_json "diagnose --by dof" by.dof 2
expect_py "diagnose --by groups" \
  "[g['level'] for g in d['by']['groups']] == ['p', 'q', 'r'] \
and sum(g['n'] for g in d['by']['groups']) == 80"
bl diagnose nbg.csv --response y --terms x1,x2 --family poisson --by x1
expect_rc "diagnose --by numeric exit" 2
expect_err "diagnose --by numeric message" "ballast: --by: 'x1' is numeric"
expect_err "diagnose --by numeric hint" "see 'ballast diagnose --help'"
bl diagnose nbg.csv --response y --terms x1,x2 --family poisson --by zz
expect_rc "diagnose --by missing exit" 2
expect_err "diagnose --by missing message" "ballast: --by: no column 'zz' in nbg.csv"


# The sqrt link for counts: the negative binomial and poisson with eta = sqrt(mu).
bl fit "$top_srcdir/tests/data/nb_counts.csv" --response y --terms "x1, x2" \
  --family negative-binomial --link sqrt --json -q
expect_rc "negative binomial, sqrt link: exit 0" 0
expect_json "negative binomial, sqrt link: converged" status.converged true
expect_json "negative binomial, sqrt link: link" model.link '"sqrt"'
expect_py "negative binomial, sqrt link: theta estimated" 'd["fit"]["theta"] > 0'
bl fit "$top_srcdir/tests/data/nb_counts.csv" --response y --terms "x1, x2" \
  --family poisson --link sqrt --json -q
expect_rc "poisson, sqrt link: exit 0" 0

finish
