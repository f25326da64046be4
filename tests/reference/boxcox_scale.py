#!/usr/bin/python3
"""boxcox_scale.py -> boxcox_scale.txt: the Box-Cox profile log-likelihood evaluated directly
in 60-digit arithmetic (mpmath), as the reference for the cancellation-free evaluation of
src/lib/fit_transform.c (issue 13, class 2).

For each case the data (x, y) are invented here (NumPy default_rng with the seed shown) and
written into the .txt as Python repr() of doubles, so the C test reads exactly these numbers.
At each power L the script forms z_i = (y_i^L - 1) / L (log y_i at L = 0) in 60 digits, the
least-squares fit of z on (1, x) (or on x alone, no intercept) by the normal equations in 60
digits, and
  l(L) = -n/2 (log(2 pi RSS / n) + 1) + (L - 1) sum log y_i
(Box & Cox 1964, J. R. Statist. Soc. B 26, 211-252, section 3).  Nothing here shares code or
algorithm with ballast: no centering, no expm1, no QR; the 60 digits alone carry the spread of
z against the constant -1/L (z = 1/3 + 1e-18 terms at y = 1e6, L = -3).

Cases:
  scale_S (S = 1e-3, 1, 1e3, 1e6), n = 40, intercept: y = S exp(0.4 x + 0.15 e), x uniform
    on (-1, 1), e standard normal; the profile at L = -3, -2.5, ..., 3 (13 powers) with the
    coefficients of z;
  noint_S (S = 1e-3, 1e6): the same data, no intercept, the same powers;
  issue: the example of issue 13, n = 60, y near 2e4 from a true power -2.7:
    y^L = w0 (1 + 0.8 x + 0.05 e), w0 = (2e4)^-2.7; lambda-hat (the root of dl/dL,
    found from a 0.1 grid over [-3, 3]) and the 95% interval ends, the roots of
    l(L) = l(hat) - chi2_1(0.95) / 2 (nan when the profile does not fall that far inside
    [-3, 3]).
Rerun from the top of the tree: /usr/bin/python3 tests/reference/boxcox_scale.py
"""
import sys
import numpy as np
import mpmath as mp
import scipy
from scipy.stats import chi2

mp.mp.dps = 60
OUT = "tests/reference/boxcox_scale.txt"
POWERS = [-3 + 0.5 * k for k in range(13)]


def profile(x, y, L, intercept):
    """(l(L), beta) of z = BoxCox(y, L) on (1, x) or x, in 60 digits."""
    n = len(y)
    L = mp.mpf(L)
    ly = [mp.log(mp.mpf(v)) for v in y]
    z = [lv if L == 0 else (mp.exp(L * lv) - 1) / L for lv in ly]
    cols = ([[mp.mpf(1)] * n] if intercept else []) + [[mp.mpf(v) for v in x]]
    p = len(cols)
    A = mp.matrix(p, p)
    b = mp.matrix(p, 1)
    for j in range(p):
        for k in range(p):
            A[j, k] = mp.fsum(cols[j][i] * cols[k][i] for i in range(n))
        b[j] = mp.fsum(cols[j][i] * z[i] for i in range(n))
    beta = mp.lu_solve(A, b)
    rss = mp.fsum((z[i] - mp.fsum(cols[j][i] * beta[j] for j in range(p))) ** 2
                  for i in range(n))
    ll = -mp.mpf(n) / 2 * (mp.log(2 * mp.pi * rss / n) + 1) + (L - 1) * mp.fsum(ly)
    return ll, [beta[j] for j in range(p)]


def data_scale(S, seed):
    rng = np.random.default_rng(seed)
    x = np.round(rng.uniform(-1, 1, 40), 4)
    y = S * np.exp(0.4 * x + 0.15 * rng.standard_normal(40))
    return [float(v) for v in x], [float(v) for v in y]


def data_issue(seed):
    rng = np.random.default_rng(seed)
    n, L = 60, -2.7
    x = np.round(rng.uniform(-1, 1, n), 4)
    w0 = 2e4 ** L
    w = w0 * (1 + 0.8 * x + 0.05 * rng.standard_normal(n))
    assert (w > 0).all()
    y = w ** (1 / L)
    return [float(v) for v in x], [float(v) for v in y]


def fmt(v):
    return repr(float(v))


def main():
    out = []
    out.append("# boxcox_scale.txt -- the Box-Cox profile in 60-digit arithmetic (mpmath).")
    out.append("# Written by tests/reference/boxcox_scale.py (see its docstring); do not edit.")
    out.append("# Produced with python3 %s, numpy %s, scipy %s, mpmath %s." % (
        sys.version.split()[0], np.__version__, scipy.__version__, mp.__version__))
    out.append("# Per case: intercept 0/1, x and y (the data), then 'at L loglik b...' lines,")
    out.append("# or lambda, lambda_lo, lambda_hi, loglik (issue).  Numbers: repr() of doubles.")
    cases = []
    for S, seed in [(1e-3, 11), (1.0, 12), (1e3, 13), (1e6, 14)]:
        x, y = data_scale(S, seed)
        cases.append(("scale_%g" % S, x, y, 1))
        if S in (1e-3, 1e6):
            cases.append(("noint_%g" % S, x, y, 0))
    for name, x, y, ic in cases:
        out.append("")
        out.append("case " + name)
        out.append("intercept %d" % ic)
        out.append("x " + " ".join(fmt(v) for v in x))
        out.append("y " + " ".join(fmt(v) for v in y))
        for L in POWERS:
            ll, beta = profile(x, y, L, ic)
            out.append("at %s %s %s" % (fmt(L), fmt(ll), " ".join(fmt(b) for b in beta)))
        out.append("end")
    # the issue's example
    x, y = data_issue(20261204)
    f = lambda L: profile(x, y, L, 1)[0]
    grid = [mp.mpf(-3) + mp.mpf(k) / 10 for k in range(61)]
    vals = [f(g) for g in grid]
    m = max(range(61), key=lambda k: vals[k])
    assert 0 < m < 60, "the issue case must have an interior maximum"
    lhat = mp.findroot(lambda L: mp.diff(f, L), grid[m])
    top = f(lhat)
    # chi2_1(0.95) / 2 = z_0.975^2 / 2 = erfinv(0.95)^2, in 60 digits; scipy agrees
    half = mp.erfinv(mp.mpf("0.95")) ** 2
    assert abs(float(half) - chi2.ppf(0.95, 1) / 2) < 1e-14
    thr = top - half
    ends = []
    for side in (-1, 1):
        k = m
        while 0 <= k + side <= 60 and vals[k + side] >= thr:
            k += side
        if not 0 <= k + side <= 60:
            ends.append(float("nan"))
            continue
        a, b = grid[k + side], (grid[k] if k != m else lhat)
        ends.append(mp.findroot(lambda L: f(L) - thr, (min(a, b), max(a, b)),
                                solver="anderson"))
    out.append("")
    out.append("case issue")
    out.append("intercept 1")
    out.append("x " + " ".join(fmt(v) for v in x))
    out.append("y " + " ".join(fmt(v) for v in y))
    out.append("lambda " + fmt(lhat))
    out.append("lambda_lo " + fmt(ends[0]))
    out.append("lambda_hi " + fmt(ends[1]))
    out.append("loglik " + fmt(top))
    for L in (-3.0, -2.7, -2.0, 0.0, 1.0):
        ll, beta = profile(x, y, L, 1)
        out.append("at %s %s %s" % (fmt(L), fmt(ll), " ".join(fmt(b) for b in beta)))
    out.append("end")
    with open(OUT, "w") as fp:
        fp.write("\n".join(out) + "\n")


if __name__ == "__main__":
    main()
