#!/bin/sh
# keys.sh -- every key acts or is refused (issue 14, class 3): the nested test of --against in
# diagnose and in a spec job's result.json; the keys compare and diagnose refuse (exit 2);
# --folds above the row count (exit 1 naming both numbers); a second reference level for one
# column; the family list and the negative binomial's own support message.  The values are
# ballast's own behaviour (doc/cli.md, doc/spec-format.md); no outside source is needed.
# shellcheck source=tests/cli/lib.sh
. "${top_srcdir:?set top_srcdir to the source tree}/tests/cli/lib.sh"

nb=$top_srcdir/tests/data/nb_counts.csv

bl diagnose "$nb" --response y --terms x1,x2 --family poisson --against x1 --json
expect_rc "diagnose --against: exit 0" 0
expect_json "diagnose --against: the test's terms" against.terms '"x1"'
expect_py "diagnose --against: the same test as fit" \
  'd["against"]["form"] == "chisq" and d["against"]["dof"] == 1'
save_out diag.json
bl fit "$nb" --response y --terms x1,x2 --family poisson --against x1 --json
expect_py "diagnose and fit: one statistic" \
  'd["against"]["stat"] == load("diag.json")["against"]["stat"]'
bl diagnose "$nb" --response y --terms x1,x2 --family poisson --against x1
expect_out "diagnose --against: text report" "Against the smaller model (x1)"

cat > nested.spec <<SPEC
[job small]
data = $nb
response = y
terms = x1, x2
family = poisson
against = x1
SPEC
bl run nested.spec -o out -q
expect_rc "spec against: exit 0" 0
run python3 -c 'import json; d = json.load(open("out/small/result.json")); assert d["against"]["terms"] == "x1", d'
expect_rc "spec against: in result.json" 0

for k in "--against x1" "--level 0.9" "--se hc1" "--cluster x1" "--theta 2" "--power 1.5"; do
  # shellcheck disable=SC2086
  bl compare "$nb" --response y --terms x1,x2 $k
  expect_rc "compare $k: refused" 2
done
for k in "--level 0.9" "--se hc1" "--dispersion pearson"; do
  # shellcheck disable=SC2086
  bl diagnose "$nb" --response y --terms x1,x2 $k
  expect_rc "diagnose $k: refused" 2
  expect_err "diagnose $k: message" "ballast: ${k% *}: diagnose reports no coefficients"
done

head -6 "$nb" > six.csv
bl compare six.csv --response y --terms x1 --folds 9
expect_rc "--folds 9 on 5 rows: exit 1" 1
expect_err "--folds 9 on 5 rows: both numbers" \
  "ballast: --folds: 9 folds need at least 9 rows; the model has 5"
for f in 1 0x -3; do
  bl compare six.csv --response y --folds "$f"
  expect_rc "--folds $f: exit 2" 2
done
bl compare six.csv --response y --terms x1 --folds 5 --json
expect_json "--folds 5 on 5 rows: done" folds 5
# the default 10 folds on 5 rows (not the user's number): no cross-validation, said so
bl compare six.csv --response y --terms x1 --json
expect_rc "default folds on 5 rows: exit 0" 0
expect_json "default folds on 5 rows: none run" folds 0
expect_out "default folds on 5 rows: the advice says why" \
  "no cross-validation: the 5 rows are fewer than the default 10 folds"

bl fit "$nb" --response y --family poison
expect_err "--family: every family listed" "(expected gaussian, poisson, gamma, \
inverse-gaussian, negative-binomial, tweedie)"
printf 'y,x\n-1,1\n2,2\n3,4\n1,3\n' > neg.csv
bl fit neg.csv --response y --terms x --family negative-binomial
expect_rc "negative binomial, y < 0: exit 1" 1
expect_err "negative binomial, y < 0: its name" "the negative-binomial family needs y >= 0"
bl fit "$nb" --response y --reference g=a --reference g=b
expect_rc "two reference levels: exit 2" 2
expect_err "two reference levels: message" \
  "ballast: --reference: two reference levels for one column: 'g=a' and 'g=b'"

finish
