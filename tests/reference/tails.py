#!/usr/bin/python3
"""Log tail and log interval probabilities of ballast's families, far into both tails.

Reference values for tests/check_family.c (family_tails_reference), computed in arbitrary
precision with mpmath (Debian python3-mpmath) from the textbook definitions, and checked
against SciPy's logsf / logcdf wherever SciPy's double result is finite and not rounded:

  gaussian  F(y) = Phi((y - mu) / sigma), sigma^2 = phi                     mpmath.ncdf
  gamma     F(y) = P(shape, y / scale), shape = 1/phi, scale = mu phi      mpmath.gammainc
  inverse gaussian (Chhikara & Folks 1989, eq. 2.3), lambda = 1/phi:
            F(y) = Phi(s (y/mu - 1)) + exp(2 lambda/mu) Phi(-s (y/mu + 1)), s = sqrt(lambda/y)
            S(y) = Phi(-s (y/mu - 1)) - exp(2 lambda/mu) Phi(-s (y/mu + 1)) at 400 digits,
            where the difference of the two small terms loses no digit that matters
  tweedie   F(y) = e^-lam + sum_n e^-lam lam^n / n! P(n alpha, y / gamma)
            lam = mu^(2-p) / (phi (2-p)), alpha = (2-p)/(p-1), gamma = phi (p-1) mu^(p-1)
            (Jorgensen 1997, section 4.2; the series summed until its terms are 1e-60 of it)
  poisson   P(Y <= k) = Q(k + 1, mu)                                       mpmath.gammainc
  negative binomial  P(Y <= k) = I_p(theta, k + 1), p = theta / (theta + mu) mpmath.betainc

p-values ("pvalue DIST x d1 d2 0.0 0.0 value", the natural log of the upper tail):
  chisq     log P(X > x) on d1 dof = log Q(d1/2, x/2)                        mpmath.gammainc
  f         log P(F > x) on (d1, d2) = log I_w(d2/2, d1/2), w = d2/(d2 + d1 x) mpmath.betainc
  t2        log P(|T| > x) on d1 dof = log I_w(d1/2, 1/2), w = d1/(d1 + x^2)   mpmath.betainc
  norm2     log P(|Z| > x) = log erfc(x / sqrt 2)                              mpmath.erfc

Each case is "KIND FAMILY mu phi par y1 y2 value" with the prior weight 1:
  interval  log P(y1 < Y <= y2)   (y1 = y - 1/2, y2 = y + 1/2, y = mu + k sd, rounded to
                                   an integer for the discretized likelihood's rows)
  logsf     log P(Y > y1)          (y2 unused, written as 0)
  logcdf    log P(Y <= y1)
for k = 0, 5, 9, 20, 38, 40, 60 standard deviations above the mean, and below it where the
support allows.  Every number is repr() of a double.  Rerun from the top of the tree:
  /usr/bin/python3 tests/reference/tails.py > tests/reference/tails.txt
"""
import math
import sys

import mpmath as mp
import numpy as np
import scipy
import scipy.stats as ss

mp.mp.dps = 400
KS = [0, 5, 9, 20, 38, 40, 60]


def norm_F(mu, phi, _par):
    sd = mp.sqrt(phi)
    return lambda y: mp.ncdf((y - mu) / sd)


def norm_S(mu, phi, _par):
    sd = mp.sqrt(phi)
    return lambda y: mp.ncdf(-(y - mu) / sd)


def gamma_F(mu, phi, _par):
    shape = 1 / mp.mpf(phi)
    scale = mp.mpf(mu) * phi
    return lambda y: mp.gammainc(shape, 0, y / scale, regularized=True) if y > 0 else mp.mpf(0)


def gamma_S(mu, phi, _par):
    shape = 1 / mp.mpf(phi)
    scale = mp.mpf(mu) * phi
    return lambda y: mp.gammainc(shape, y / scale, mp.inf, regularized=True) if y > 0 else mp.mpf(1)


def ig_F(mu, phi, _par):
    lam = 1 / mp.mpf(phi)
    mu = mp.mpf(mu)

    def F(y):
        if y <= 0:
            return mp.mpf(0)
        y = mp.mpf(y)
        s = mp.sqrt(lam / y)
        return mp.ncdf(s * (y / mu - 1)) + mp.exp(2 * lam / mu) * mp.ncdf(-s * (y / mu + 1))
    return F


def ig_S(mu, phi, _par):
    lam = 1 / mp.mpf(phi)
    mu = mp.mpf(mu)

    def S(y):
        if y <= 0:
            return mp.mpf(1)
        y = mp.mpf(y)
        s = mp.sqrt(lam / y)
        return mp.ncdf(-s * (y / mu - 1)) - mp.exp(2 * lam / mu) * mp.ncdf(-s * (y / mu + 1))
    return S


def tweedie_parts(mu, phi, p):
    mu, phi, p = mp.mpf(mu), mp.mpf(phi), mp.mpf(p)
    lam = mu ** (2 - p) / (phi * (2 - p))
    alpha = (2 - p) / (p - 1)
    gam = phi * (p - 1) * mu ** (p - 1)
    return lam, alpha, gam


def tweedie_tail(mu, phi, p, y, upper):
    lam, alpha, gam = tweedie_parts(mu, phi, p)
    y = mp.mpf(y)
    total = mp.mpf(0) if upper else mp.exp(-lam)
    if y == 0:
        return (1 - mp.exp(-lam)) if upper else total
    n = 1
    while True:
        w = mp.exp(-lam + n * mp.log(lam) - mp.loggamma(n + 1))
        if upper:
            g = mp.gammainc(n * alpha, y / gam, mp.inf, regularized=True)
        else:
            g = mp.gammainc(n * alpha, 0, y / gam, regularized=True)
        term = w * g
        total += term
        if n > lam and w < total * mp.mpf(10) ** -60:
            break
        n += 1
    return total


def poisson_F(mu, k):
    return mp.gammainc(k + 1, mu, mp.inf, regularized=True)


def poisson_S(mu, k):
    return mp.gammainc(k + 1, 0, mu, regularized=True)


def nb_F(mu, th, k):
    p = mp.mpf(th) / (mp.mpf(th) + mu)
    return mp.betainc(th, k + 1, 0, p, regularized=True)


def nb_S(mu, th, k):
    q = mp.mpf(mu) / (mp.mpf(th) + mu)
    return mp.betainc(k + 1, th, 0, q, regularized=True)


def emit(kind, fam, mu, phi, par, y1, y2, val):
    v = float(val)
    assert math.isfinite(v), (kind, fam, y1, y2)
    print(f"{kind} {fam} {mu!r} {phi!r} {par!r} {float(y1)!r} {float(y2)!r} {v!r}")
    return v


def scipy_check(v, ref, what):
    """SciPy as a second, independent double-precision route (only where finite)."""
    if ref is None or not math.isfinite(ref) or ref == 0.0:
        return
    rel = abs(v - ref) / abs(ref)
    assert rel < 1e-8, (what, v, ref, rel)


def continuous(fam, mu, phi, par, F, S, sd, lower_ks, sp):
    for k in KS:
        y = mu + k * sd
        lo, hi = y - 0.5, y + 0.5
        if k >= 1:   # above the mean: the upper tails carry the digits
            val = mp.log(S(lo) - S(hi))
        else:
            val = mp.log(F(hi) - F(lo))
        v = emit("interval", fam, mu, phi, par, lo, hi, val)
        if sp is not None:
            with np.errstate(all="ignore"):
                a, b = sp.logsf(lo), sp.logsf(hi)
            if math.isfinite(a) and math.isfinite(b) and b < a:
                scipy_check(v, a + math.log1p(-math.exp(b - a)), (fam, k))
        v = emit("logsf", fam, mu, phi, par, y, 0.0, mp.log(S(y)))
        if sp is not None:
            scipy_check(v, float(sp.logsf(y)), (fam, "logsf", k))
    for k in lower_ks:
        y = mu - k * sd
        lo, hi = y - 0.5, y + 0.5
        v = emit("interval", fam, mu, phi, par, lo, hi, mp.log(F(hi) - F(lo)))
        v = emit("logcdf", fam, mu, phi, par, y, 0.0, mp.log(F(y)))
        if sp is not None:
            scipy_check(v, float(sp.logcdf(y)), (fam, "logcdf", k))


def main():
    print("# tails.txt -- written by tests/reference/tails.py (see its docstring); do not edit")
    print(f"# mpmath {mp.__version__} at {mp.mp.dps} digits; SciPy {scipy.__version__} "
          f"(cross-check); Python {sys.version.split()[0]}")
    print("# KIND FAMILY mu phi par y1 y2 value")

    # gaussian: sd 2.3
    mu, phi = 3.7, 2.3 ** 2
    F = norm_F(mu, phi, 0)
    continuous("gaussian", mu, phi, 0.0, F, norm_S(mu, phi, 0), 2.3, [5, 9, 20, 38, 40, 60],
               ss.norm(mu, 2.3))

    # gamma, shape 2.5 and shape 2000 (lower tails down to 40 sd)
    for mu, phi, lower in ((7.3, 0.4, []), (100.0, 0.0005, [5, 9, 20, 38, 40])):
        sd = mu * math.sqrt(phi)
        continuous("gamma", mu, phi, 0.0, gamma_F(mu, phi, 0), gamma_S(mu, phi, 0), sd, lower,
                   ss.gamma(1 / phi, scale=mu * phi))

    # inverse gaussian: CV 0.5, and CV 0.033 (lambda / mu = 909: exp(2 lambda / mu) overflows)
    for mu, phi, lower in ((4.1, 0.06, []), (2.2, 0.0005, [5, 9, 20])):
        sd = math.sqrt(phi * mu ** 3)
        F = ig_F(mu, phi, 0)
        continuous("inverse-gaussian", mu, phi, 0.0, F, ig_S(mu, phi, 0), sd, lower,
                   ss.invgauss(mu * phi, scale=1 / phi))

    # tweedie p = 1.45
    mu, phi, p = 3.3, 1.7, 1.45
    sd = math.sqrt(phi * mu ** p)
    continuous("tweedie", mu, phi, p, lambda y: tweedie_tail(mu, phi, p, y, False),
               lambda y: tweedie_tail(mu, phi, p, y, True), sd, [], None)

    # poisson and negative binomial: log P(Y > k), log P(Y <= k), log P(Y = k) at integer k
    for mu, lower in ((4.2, []), (250.0, [5, 9, 12])):
        sd = math.sqrt(mu)
        for k in KS:
            y = float(round(mu + k * sd))
            v = emit("logsf", "poisson", mu, 1.0, 0.0, y, 0.0, mp.log(poisson_S(mu, y)))
            scipy_check(v, float(ss.poisson.logsf(y, mu)), ("poisson", k))
            emit("interval", "poisson", mu, 1.0, 0.0, y - 1, y,
                 mp.log(poisson_S(mu, y - 1) - poisson_S(mu, y)))
        for k in lower:
            y = float(round(mu - k * sd))
            v = emit("logcdf", "poisson", mu, 1.0, 0.0, y, 0.0, mp.log(poisson_F(mu, y)))
            scipy_check(v, float(ss.poisson.logcdf(y, mu)), ("poisson", -k))
    mu, th = 6.3, 2.7
    sd = math.sqrt(mu + mu * mu / th)
    for k in KS:
        y = float(round(mu + k * sd))
        v = emit("logsf", "negative-binomial", mu, 1.0, th, y, 0.0, mp.log(nb_S(mu, th, y)))
        scipy_check(v, float(ss.nbinom.logsf(y, th, th / (th + mu))), ("nbinom", k))
        emit("interval", "negative-binomial", mu, 1.0, th, y - 1, y,
             mp.log(nb_S(mu, th, y - 1) - nb_S(mu, th, y)))

    for x, d in ((3.84, 1), (2000.0, 1), (900.0, 7), (30000.0, 40)):
        print(f"pvalue chisq {x!r} {float(d)!r} 0.0 "
              f"0.0 0.0 {float(mp.log(mp.gammainc(mp.mpf(d) / 2, mp.mpf(x) / 2, mp.inf, regularized=True)))!r}")
    for x, d1, d2 in ((4.1, 3, 20), (5000.0, 2, 100), (1e6, 4, 30)):
        w = mp.mpf(d2) / (d2 + d1 * mp.mpf(x))
        print(f"pvalue f {x!r} {float(d1)!r} {float(d2)!r} "
              f"0.0 0.0 {float(mp.log(mp.betainc(mp.mpf(d2) / 2, mp.mpf(d1) / 2, 0, w, regularized=True)))!r}")
    for x, d in ((2.1, 12), (45.0, 30), (300.0, 1000)):
        w = mp.mpf(d) / (d + mp.mpf(x) ** 2)
        print(f"pvalue t2 {x!r} {float(d)!r} 0.0 "
              f"0.0 0.0 {float(mp.log(mp.betainc(mp.mpf(d) / 2, mp.mpf(1) / 2, 0, w, regularized=True)))!r}")
    for x in (1.96, 9.0, 38.5, 45.0, 100.0):
        print(f"pvalue norm2 {x!r} 0.0 0.0 0.0 0.0 {float(mp.log(mp.erfc(mp.mpf(x) / mp.sqrt(2))))!r}")


if __name__ == "__main__":
    main()
