#!/usr/bin/python3
"""remedies_mle.py -- reference values for ballast's remedies for non-constant variance
(weighted least squares with an estimated variance power, Box-Cox), computed without ballast.

Usage (from anywhere; paths are relative to this file):
  /usr/bin/python3 tests/reference/remedies_mle.py              # fit the kept data, write .txt
  /usr/bin/python3 tests/reference/remedies_mle.py --make-data  # first regenerate the CSV

Data: tests/data/remedies.csv, invented (a pump fleet: repair hours against load), made once with
a fixed-seed NumPy generator (--make-data) and then kept; the fits read the CSV text back, so they
see exactly the numbers the C tests read.  Columns: hours (y > 0), load (> 0), w (prior weights),
flow (a second positive response, for an intercept-only Box-Cox case).

Cases written to tests/reference/remedies_mle.txt:

fitted_est  hours = b0 + b1 load, Var hours_i = sigma^2 mu_i^K / w_i, mu = X b, K free.  The
  log-likelihood in (b, K, t = log sigma) is
    l = sum_i [-t - log(2 pi)/2 - (K log mu_i - log w_i)/2 - w_i r_i^2 exp(-2t) mu_i^-K / 2]
  with r = y - mu; at its maximum over t it equals the profiled form
    l(b, K) = -n/2 (log(2 pi S/n) + 1) + 1/2 sum log a_i mu_i^-K,  S = sum a_i mu_i^-K r_i^2.
  It is maximized by scipy.optimize.minimize(method='trust-exact') with the analytic gradient
  and Hessian (checked against central differences), then polished by Newton steps; BFGS on the
  profiled form from another start must reach the same value.  K's standard error is the
  (K, K) element of the inverse of the negative Hessian of the full likelihood (observed
  information).

col_est  the same with Var hours_i = sigma^2 load_i^K / w_i.  For fixed K the MLE of b is the
  weighted least-squares solution (numpy.linalg.lstsq of sqrt(w) y on sqrt(w) X), so the profile
  l(K) is maximized in one dimension (scipy.optimize.minimize_scalar, bounded); K's standard
  error again from the full (b, K, t) Hessian, which for a profile equals 1 / sqrt(-l''(K)).

boxcox_flow  intercept-only Box-Cox of flow: scipy.stats.boxcox(flow, alpha=0.05) gives lambda-hat
  (boxcox_normmax, method 'mle') and the 95% interval; our own profile (below) must agree.

boxcox_reg  Box-Cox of hours on (1, load): profile
    l(L) = -n/2 (log(2 pi RSS(L)/n) + 1) + (L - 1) sum log y,
  RSS(L) the residual sum of squares of the OLS of (y^L - 1)/L (log y at L = 0) on X, maximized
  by minimize_scalar (bounded) on [-3, 3]; interval ends by brentq at top - chi2.ppf(0.95, 1)/2.

boxcox_open  a tiny sample (inline, four values) whose profile stays within 1.92 of its top over
  all of [-3, 3], so both interval ends are open.

practical: the multiple of 0.5 inside [lo, hi] nearest lambda-hat; 'nan' when there is none.
"""

import math
import os
import sys

import numpy as np
import scipy
import scipy.optimize
import scipy.stats

HERE = os.path.dirname(os.path.abspath(__file__))
DATA = os.path.join(HERE, "..", "data", "remedies.csv")
OUT = os.path.join(HERE, "remedies_mle.txt")
SEED = 20261217
N = 80
OPEN_Y = [2.385, 3.71, 2.94, 4.417]      # boxcox_open, also typed into tests/check_transform.c
LAMBDA_RANGE = (-3.0, 3.0)
CHI2_HALF = 0.5 * scipy.stats.chi2.ppf(0.95, 1)

# ---------------------------------------------------------------------------------------------
# Invented data (written once with --make-data)


def make_data():
  """hours: mean 3.2 + 2.4 load, variance 0.35^2 mu^1.6 / w (redrawn until > 0);
  flow: (3 + 1.1 z)^4 from a second generator (seed SEED + 1), z standard normal redrawn
  until 3 + 1.1 z > 0.5 (Box-Cox power near 1/4 with an interval that holds no multiple of
  0.5)."""
  rng = np.random.default_rng(SEED)
  load = np.round(rng.uniform(0.6, 6.0, N), 3)
  w = np.round(rng.uniform(0.5, 2.0, N), 3)
  mu = 3.2 + 2.4 * load
  sd = 0.35 * np.sqrt(mu**1.6 / w)
  hours = np.empty(N)
  for i in range(N):
    v = -1.0
    while v <= 0.05:
      v = mu[i] + sd[i] * rng.standard_normal()
    hours[i] = v
  rng = np.random.default_rng(SEED + 1)
  base = np.empty(N)
  for i in range(N):
    v = 0.0
    while v <= 0.5:
      v = 3.0 + 1.1 * rng.standard_normal()
    base[i] = v
  flow = base ** 4
  with open(DATA, "w") as f:
    f.write("hours,load,w,flow\n")
    for i in range(N):
      f.write("%.4f,%.3f,%.3f,%.6g\n" % (hours[i], load[i], w[i], flow[i]))


def read_data():
  with open(DATA) as f:
    head = f.readline().strip().split(",")
    assert head == ["hours", "load", "w", "flow"], head
    rows = [[float(c) for c in line.strip().split(",")] for line in f if line.strip()]
  a = np.array(rows)
  return a[:, 0], a[:, 1], a[:, 2], a[:, 3]

# ---------------------------------------------------------------------------------------------
# Weighted least squares with a variance power K: full likelihood in theta = (b, K, t)


class PowerModel:
  """Var y_i = exp(2t) v_i / a_i, v_i = mu_i^K (fitted) or x_i^K (column), mu = X b."""

  def __init__(self, y, X, a, col=None):
    self.y, self.X, self.a, self.col = y, X, a, col
    self.p = X.shape[1]

  def parts(self, theta):
    b, K, t = theta[:self.p], theta[self.p], theta[self.p + 1]
    mu = self.X @ b
    if self.col is None and np.any(mu <= 0):
      return None
    c = np.log(mu) if self.col is None else np.log(self.col)
    q = self.a * np.exp(-2.0 * t - K * c)          # precision of row i
    return b, K, t, mu, c, q, self.y - mu

  def loglik(self, theta):
    P = self.parts(theta)
    if P is None:
      return -np.inf
    b, K, t, mu, c, q, r = P
    terms = -t - 0.5 * math.log(2 * math.pi) - 0.5 * (K * c - np.log(self.a)) - 0.5 * q * r * r
    return math.fsum(terms)

  def grad(self, theta):
    b, K, t, mu, c, q, r = self.parts(theta)
    fit = self.col is None
    g_mu = q * r + ((-0.5 * K / mu + 0.5 * K * q * r * r / mu) if fit else 0.0)
    g_K = math.fsum(-0.5 * c + 0.5 * c * q * r * r)
    g_t = math.fsum(-1.0 + q * r * r)
    return np.concatenate([self.X.T @ g_mu, [g_K, g_t]])

  def hess(self, theta):
    b, K, t, mu, c, q, r = self.parts(theta)
    r2 = r * r
    if self.col is None:
      h_mumu = (0.5 * K / mu**2 - K * q * r / mu - q
                + 0.5 * K * (-K * q * r2 / mu**2 - 2.0 * q * r / mu - q * r2 / mu**2))
      h_muK = -0.5 / mu - c * q * r + 0.5 * q * r2 / mu - 0.5 * K * c * q * r2 / mu
      h_mut = -2.0 * q * r - K * q * r2 / mu
    else:
      h_mumu = -q
      h_muK = -c * q * r
      h_mut = -2.0 * q * r
    X, p = self.X, self.p
    H = np.zeros((p + 2, p + 2))
    H[:p, :p] = X.T @ (h_mumu[:, None] * X)
    H[:p, p] = H[p, :p] = X.T @ h_muK
    H[:p, p + 1] = H[p + 1, :p] = X.T @ h_mut
    H[p, p] = math.fsum(-0.5 * c * c * q * r2)
    H[p, p + 1] = H[p + 1, p] = math.fsum(-c * q * r2)
    H[p + 1, p + 1] = math.fsum(-2.0 * q * r2)
    return H


def fd_check(m, theta, h=1e-6):
  """Analytic gradient and Hessian against central differences: worst relative error."""
  g, H = m.grad(theta), m.hess(theta)
  worst = 0.0
  for k in range(len(theta)):
    e = np.zeros(len(theta))
    e[k] = h * max(1.0, abs(theta[k]))
    gp, gm = m.grad(theta + e), m.grad(theta - e)
    fd_g = (m.loglik(theta + e) - m.loglik(theta - e)) / (2 * e[k])
    worst = max(worst, abs(fd_g - g[k]) / max(1.0, abs(g[k])))
    fd_h = (gp - gm) / (2 * e[k])
    worst = max(worst, np.max(np.abs(fd_h - H[:, k]) / np.maximum(1.0, np.abs(H[:, k]))))
  return worst


def gradnorm(m, theta):
  g = m.grad(theta)
  return float(np.max(np.abs(g) * np.maximum(1.0, np.abs(theta))) / max(1.0, abs(m.loglik(theta))))


def wls(y, X, w):
  s = np.sqrt(w)
  b, *_ = np.linalg.lstsq(X * s[:, None], y * s, rcond=None)
  r = y - X @ b
  S = math.fsum(w * r * r)
  n = len(y)
  return b, S, -0.5 * n * (math.log(2 * math.pi * S / n) + 1.0) + 0.5 * math.fsum(np.log(w))


def profiled_fitted(y, X, a, bK):
  """The profiled l(b, K) of the brief: -n/2 (log(2 pi S/n) + 1) + 1/2 sum log w."""
  p = X.shape[1]
  mu = X @ bK[:p]
  if np.any(mu <= 0):
    return -np.inf
  w = a * mu ** -bK[p]
  S = math.fsum(w * (y - mu) ** 2)
  n = len(y)
  return -0.5 * n * (math.log(2 * math.pi * S / n) + 1.0) + 0.5 * math.fsum(np.log(w))


def polish(m, theta, steps=6):
  for _ in range(steps):
    theta = theta - np.linalg.solve(m.hess(theta), m.grad(theta))
  return theta


def fit_fitted(y, X, a):
  m = PowerModel(y, X, a)
  b, S, _ = wls(y, X, a)
  theta0 = np.concatenate([b, [1.0, 0.5 * math.log(S / len(y))]])
  assert fd_check(m, theta0) < 1e-5, fd_check(m, theta0)
  res = scipy.optimize.minimize(lambda th: -m.loglik(th), theta0, jac=lambda th: -m.grad(th),
                                hess=lambda th: -m.hess(th), method="trust-exact",
                                options={"gtol": 1e-12, "maxiter": 500})
  theta = polish(m, res.x)
  gn = gradnorm(m, theta)
  assert gn < 1e-9, gn
  assert fd_check(m, theta) < 1e-5
  info = -m.hess(theta)
  np.linalg.cholesky(info)                         # a maximum: positive definite
  cov = np.linalg.inv(info)
  l = m.loglik(theta)
  p = X.shape[1]
  # the profiled form at the same point, and BFGS on it from K = 0
  assert abs(profiled_fitted(y, X, a, theta[:p + 1]) - l) <= 1e-12 * abs(l)
  r2 = scipy.optimize.minimize(lambda bk: -profiled_fitted(y, X, a, bk),
                               np.concatenate([b, [0.0]]), method="BFGS",
                               options={"gtol": 1e-9})
  assert abs(-r2.fun - l) <= 1e-8 * abs(l), (r2.fun, l)
  se_beta = np.sqrt(np.diag(cov)[:p])
  return dict(beta=theta[:p], se=se_beta, K=theta[p], K_se=math.sqrt(cov[p, p]), loglik=l,
              sigma2=math.exp(2 * theta[p + 1]), gradnorm=gn, mu_min=float(np.min(X @ theta[:p])))


def fit_col(y, X, a, x):
  def prof(K):
    return wls(y, X, a * x ** -K)[2]
  grid = np.linspace(-6.0, 6.0, 121)
  k0 = grid[int(np.argmax([prof(K) for K in grid]))]
  res = scipy.optimize.minimize_scalar(lambda K: -prof(K), bounds=(k0 - 0.2, k0 + 0.2),
                                       method="bounded", options={"xatol": 1e-12})
  K = res.x
  b, S, l = wls(y, X, a * x ** -K)
  m = PowerModel(y, X, a, col=x)
  theta = np.concatenate([b, [K, 0.5 * math.log(S / len(y))]])
  theta = polish(m, theta)
  gn = gradnorm(m, theta)
  assert gn < 1e-9, gn
  assert fd_check(m, theta) < 1e-5
  assert abs(theta[-2] - K) < 1e-7, (theta[-2], K)
  assert abs(m.loglik(theta) - l) <= 1e-12 * abs(l)
  cov = np.linalg.inv(-m.hess(theta))
  p = X.shape[1]
  return dict(beta=theta[:p], K=theta[p], K_se=math.sqrt(cov[p, p]), loglik=m.loglik(theta),
              gradnorm=gn)

# ---------------------------------------------------------------------------------------------
# Box-Cox profile (NumPy, our own)


def bc(y, L):
  return np.log(y) if L == 0 else np.expm1(L * np.log(y)) / L


def bc_profile(y, X, L):
  z = bc(y, L)
  b, *_ = np.linalg.lstsq(X, z, rcond=None)
  rss = math.fsum((z - X @ b) ** 2)
  n = len(y)
  return -0.5 * n * (math.log(2 * math.pi * rss / n) + 1.0) + (L - 1.0) * math.fsum(np.log(y))


def bc_fit(y, X):
  f = lambda L: bc_profile(y, X, L)
  grid = np.linspace(LAMBDA_RANGE[0], LAMBDA_RANGE[1], 61)
  vals = [f(L) for L in grid]
  k = int(np.argmax(vals))
  lo_b, hi_b = grid[max(k - 1, 0)], grid[min(k + 1, len(grid) - 1)]
  res = scipy.optimize.minimize_scalar(lambda L: -f(L), bounds=(lo_b, hi_b), method="bounded",
                                       options={"xatol": 1e-12})
  lh, top = res.x, -res.fun
  thr = top - CHI2_HALF
  g = lambda L: f(L) - thr
  lo = (scipy.optimize.brentq(g, LAMBDA_RANGE[0], lh, xtol=1e-13)
        if g(LAMBDA_RANGE[0]) < 0 else float("nan"))
  hi = (scipy.optimize.brentq(g, lh, LAMBDA_RANGE[1], xtol=1e-13)
        if g(LAMBDA_RANGE[1]) < 0 else float("nan"))
  return dict(lambda_hat=lh, lo=lo, hi=hi, top=top, practical=practical(lh, lo, hi),
              gap_lo=f(LAMBDA_RANGE[0]) - top, gap_hi=f(LAMBDA_RANGE[1]) - top)


def practical(lh, lo, hi):
  a = lo if math.isfinite(lo) else LAMBDA_RANGE[0]
  b = hi if math.isfinite(hi) else LAMBDA_RANGE[1]
  cands = [k / 2.0 for k in range(-6, 7) if a <= k / 2.0 <= b]
  if not cands:
    return float("nan")
  return min(cands, key=lambda c: abs(c - lh))


def main():
  if "--make-data" in sys.argv:
    make_data()
  hours, load, w, flow = read_data()
  n = len(hours)
  X = np.column_stack([np.ones(n), load])
  out = []

  q = fit_fitted(hours, X, w)
  print("fitted_est: K %.6f se %.4f loglik %.10f gradnorm %.1e min mu %.3f"
        % (q["K"], q["K_se"], q["loglik"], q["gradnorm"], q["mu_min"]))
  out.append(("fitted_est", [("beta", q["beta"]), ("se_observed", q["se"]), ("K", q["K"]),
                             ("K_se", q["K_se"]), ("loglik", q["loglik"]),
                             ("gradnorm", q["gradnorm"])]))

  q = fit_col(hours, X, w, load)
  print("col_est: K %.6f se %.4f loglik %.10f gradnorm %.1e"
        % (q["K"], q["K_se"], q["loglik"], q["gradnorm"]))
  out.append(("col_est", [("beta", q["beta"]), ("K", q["K"]), ("K_se", q["K_se"]),
                          ("loglik", q["loglik"]), ("gradnorm", q["gradnorm"])]))

  yt, lmax, (lo, hi) = scipy.stats.boxcox(flow, alpha=0.05)
  lnm = scipy.stats.boxcox_normmax(flow, method="mle")
  own = bc_fit(flow, np.ones((n, 1)))
  assert abs(lnm - lmax) < 1e-12
  assert abs(own["lambda_hat"] - lmax) < 1e-6, (own["lambda_hat"], lmax)
  assert abs(own["lo"] - lo) < 1e-6 and abs(own["hi"] - hi) < 1e-6, (own, lo, hi)
  print("boxcox_flow: scipy %.8f [%.6f, %.6f]; own %.8f [%.6f, %.6f]; practical %s"
        % (lmax, lo, hi, own["lambda_hat"], own["lo"], own["hi"], practical(lmax, lo, hi)))
  out.append(("boxcox_flow", [("lambda", lmax), ("lambda_lo", lo), ("lambda_hi", hi),
                              ("lambda_practical", practical(lmax, lo, hi)),
                              ("loglik", own["top"])]))

  q = bc_fit(hours, X)
  print("boxcox_reg: %.8f [%.6f, %.6f] practical %s loglik %.10f"
        % (q["lambda_hat"], q["lo"], q["hi"], q["practical"], q["top"]))
  out.append(("boxcox_reg", [("lambda", q["lambda_hat"]), ("lambda_lo", q["lo"]),
                             ("lambda_hi", q["hi"]), ("lambda_practical", q["practical"]),
                             ("loglik", q["top"])]))

  yo = np.array(OPEN_Y)
  q = bc_fit(yo, np.ones((len(yo), 1)))
  assert q["gap_lo"] > -CHI2_HALF and q["gap_hi"] > -CHI2_HALF, q
  print("boxcox_open: %.8f [%s, %s] profile at -3, 3 minus top: %.4f %.4f"
        % (q["lambda_hat"], q["lo"], q["hi"], q["gap_lo"], q["gap_hi"]))
  out.append(("boxcox_open", [("lambda", q["lambda_hat"]), ("lambda_lo", q["lo"]),
                              ("lambda_hi", q["hi"]), ("lambda_practical", q["practical"]),
                              ("loglik", q["top"])]))

  header = [
    "remedies_mle.txt -- reference values for WLS with an estimated variance power and Box-Cox.",
    "Written by tests/reference/remedies_mle.py (see its docstring); do not edit.",
    "Rerun from the top of the tree: /usr/bin/python3 tests/reference/remedies_mle.py",
    "Produced with python3 %s, numpy %s, scipy %s." % (sys.version.split()[0], np.__version__,
                                                       scipy.__version__),
    "Data: tests/data/remedies.csv (invented, n = %d); boxcox_open: y = %s inline." % (n, OPEN_Y),
    "Keys: beta (b0 b1); se_observed, K_se: sqrt of the diagonal of the inverse observed",
    "information of the full likelihood in (b, K, log sigma); loglik at the maximum; lambda,",
    "lambda_lo, lambda_hi (nan: open), lambda_practical (nan: none inside).",
    "Numbers are Python repr() of doubles (shortest string that reads back exactly).",
  ]
  with open(OUT, "w") as f:
    for line in header:
      f.write("# %s\n" % line)
    for name, keys in out:
      f.write("\ncase %s\n" % name)
      for k, v in keys:
        vals = np.atleast_1d(v)
        f.write("%s %s\n" % (k, " ".join(repr(float(x)) for x in vals)))
      f.write("end\n")


if __name__ == "__main__":
  main()
