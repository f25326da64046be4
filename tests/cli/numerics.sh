#!/bin/sh
# numerics.sh -- the numerical options act as documented (issue 13, class 8): --max-iter caps
# every step (the iteration count in the JSON never exceeds it, and reaching it without
# convergence is exit 1), --epsilon moves the stopping point both ways (iterations in the
# JSON), and a fit whose maximum lies on the edge of the parameter space is reported as such
# (issue 13, class 7; the case of tests/reference/boundary.txt, ig_inverse, whose SciPy
# constrained minimum has eta = 0 at data row 1, line 2).
#
# Run by 'make check' with BALLAST and top_srcdir set; by hand:
#   BALLAST=./ballast top_srcdir=. sh tests/cli/numerics.sh

# shellcheck source=tests/cli/lib.sh
. "${top_srcdir:?set top_srcdir to the source tree}/tests/cli/lib.sh"

data="$top_srcdir/tests/data/boundary.csv"
ig='--response y_near --terms x --family inverse-gaussian --link identity --json'

iters () {
  python3 -c 'import json,sys; print(json.load(open(sys.argv[1]))["status"]["iterations"])' \
    "$tmp/.out"
}

# ---------------------------------------------------------------- --epsilon
# shellcheck disable=SC2086
bl fit "$data" $ig
expect_rc "default epsilon exit" 0
n_def=$(iters)
# shellcheck disable=SC2086
bl fit "$data" $ig --epsilon 1e-3
expect_rc "loose epsilon exit" 0
expect_json "loose epsilon converged" status.converged true
n_loose=$(iters)
# shellcheck disable=SC2086
bl fit "$data" $ig --epsilon 1e-14
expect_rc "tight epsilon exit" 0
n_tight=$(iters)
if [ "$n_loose" -lt "$n_def" ] && [ "$n_tight" -gt "$n_def" ]; then
  pass "epsilon 1e-3 / 1e-10 / 1e-14: $n_loose < $n_def < $n_tight iterations"
else
  fail "epsilon moves the stopping point" "$n_loose, $n_def, $n_tight iterations"
fi

# ---------------------------------------------------------------- --max-iter
cap=$((n_def - 2))
# shellcheck disable=SC2086
bl fit "$data" $ig --max-iter "$cap"
expect_rc "max-iter below the need exit" 1
expect_err "max-iter below the need message" "ballast: fit: no convergence in $cap iterations"
expect_json "max-iter: iterations equal the cap" status.iterations "$cap"
expect_json "max-iter: not converged" status.converged false
# shellcheck disable=SC2086
bl fit "$data" $ig --max-iter "$n_def"
expect_rc "max-iter at the need exit" 0
expect_json "max-iter at the need: iterations" status.iterations "$n_def"

# ---------------------------------------------------------------- the edge
bl fit "$data" --response y_decay --terms x --family inverse-gaussian --link inverse --json
expect_rc "edge exit" 1
expect_err "edge message" "no interior maximum: at $data:2 the fitted mean runs to infinity"
expect_json "edge: not converged" status.converged false
expect_py "edge: at most 50 iterations" 'd["status"]["iterations"] <= 50'
expect_py "edge: the reason of the null log-likelihood" \
  '"boundary" in d["fit"]["null_reasons"]["loglik"]'

finish
