#!/usr/bin/python3
"""nb_mle.py -- maximum-likelihood reference values for the negative binomial fit, without IRLS.

The model: y_i ~ NB2 with mean mu_i = exp(b0 + b1 x1_i + b2 x2_i) and Var y_i = mu_i +
mu_i^2 / theta, prior weights a_i = w multiplying each row's log probability.  The
log-likelihood is SciPy's own probability mass function,
  l(beta, theta) = sum_i a_i scipy.stats.nbinom.logpmf(y_i, theta, theta / (theta + mu_i)),
(scipy.stats.nbinom with n = theta and p = theta / (theta + mu) has mean mu and variance
mu + mu^2 / theta; Johnson, Kemp and Kotz 2005, Univariate Discrete Distributions, 3rd ed.,
section 5.1), maximized directly over (beta, t = log theta) with
scipy.optimize.minimize(method="trust-exact") on an analytic gradient and Hessian, then polished
by Newton steps.  The analytic derivatives (below) are checked against central finite
differences of the SciPy log-likelihood before they are trusted:
  dl/deta_i   = a_i theta (y_i - mu_i) / (theta + mu_i)
  dl/dtheta   = sum a_i [psi(y_i + theta) - psi(theta) + log theta + 1 - log(theta + mu_i)
                         - (y_i + theta) / (theta + mu_i)]
  d2l/deta_i2 = -a_i theta mu_i (theta + y_i) / (theta + mu_i)^2
  d2l/deta_i dtheta = a_i (y_i - mu_i) mu_i / (theta + mu_i)^2
  d2l/dtheta2 = sum a_i [psi'(y_i + theta) - psi'(theta) + 1/theta - 2/(theta + mu_i)
                         + (y_i + theta) / (theta + mu_i)^2]
and in t = log theta: dl/dt = theta dl/dtheta, d2l/dt2 = theta^2 d2l/dtheta2 + theta dl/dtheta.

Two fits: theta estimated, and theta fixed at THETA_FIXED (beta only).  Written to
tests/reference/nb_mle.txt (format described there and in tests/reference/README.md).

Usage:  /usr/bin/python3 tests/reference/nb_mle.py [--make-data]
--make-data first rewrites tests/data/nb_counts.csv from a fixed-seed NumPy generator (invented
data: n = 80, x1, x2 uniform on (-1, 1), w uniform on (0.5, 2), y negative binomial with
theta = 2.3 and log mu = 0.8 + 0.6 x1 - 0.4 x2).  The fits read the CSV text back.
"""

import math
import os
import sys

import numpy as np
import scipy
import scipy.optimize
import scipy.special
import scipy.stats

HERE = os.path.dirname(os.path.abspath(__file__))
DATA = os.path.join(HERE, "..", "data", "nb_counts.csv")
OUT = os.path.join(HERE, "nb_mle.txt")
SEED = 20261207
N = 80
THETA_FIXED = 1.7


def make_data():
  rng = np.random.default_rng(SEED)
  x1 = np.round(rng.uniform(-1.0, 1.0, N), 4)
  x2 = np.round(rng.uniform(-1.0, 1.0, N), 4)
  w = np.round(rng.uniform(0.5, 2.0, N), 3)
  mu = np.exp(0.8 + 0.6 * x1 - 0.4 * x2)
  th = 2.3
  y = rng.negative_binomial(th, th / (th + mu))
  with open(DATA, "w") as f:
    f.write("y,x1,x2,w\n")
    for i in range(N):
      f.write("%d,%.4f,%.4f,%.3f\n" % (y[i], x1[i], x2[i], w[i]))


def read_data():
  rows = []
  with open(DATA) as f:
    head = f.readline().strip().split(",")
    assert head == ["y", "x1", "x2", "w"], head
    for line in f:
      rows.append([float(v) for v in line.strip().split(",")])
  a = np.array(rows)
  y, x1, x2, w = a[:, 0], a[:, 1], a[:, 2], a[:, 3]
  X = np.column_stack([np.ones(len(y)), x1, x2])
  return y, X, w


def loglik(beta, th, y, X, w):
  mu = np.exp(X @ beta)
  return float(np.sum(w * scipy.stats.nbinom.logpmf(y, th, th / (th + mu))))


def grad_hess(beta, th, y, X, w):
  """Gradient and Hessian in (beta, t = log theta)."""
  mu = np.exp(X @ beta)
  tm = th + mu
  psi, psi1 = scipy.special.digamma, scipy.special.polygamma
  d_eta = w * th * (y - mu) / tm
  d_th = np.sum(w * (psi(y + th) - psi(th) + math.log(th) + 1.0 - np.log(tm) - (y + th) / tm))
  h_eta = -w * th * mu * (th + y) / tm ** 2
  h_eta_th = w * (y - mu) * mu / tm ** 2
  h_th = np.sum(w * (psi1(1, y + th) - psi1(1, th) + 1.0 / th - 2.0 / tm + (y + th) / tm ** 2))
  p = X.shape[1]
  g = np.empty(p + 1)
  g[:p] = X.T @ d_eta
  g[p] = th * d_th
  H = np.empty((p + 1, p + 1))
  H[:p, :p] = X.T @ (h_eta[:, None] * X)
  H[:p, p] = H[p, :p] = th * (X.T @ h_eta_th)
  H[p, p] = th * th * h_th + th * d_th
  return g, H, h_th


def fd_check(z, y, X, w):
  """Central differences of SciPy's log-likelihood against the analytic gradient, and of the
  analytic gradient against the analytic Hessian; returns the worst relative disagreement."""
  p = X.shape[1]
  f = lambda v: loglik(v[:p], math.exp(v[p]), y, X, w)
  gr = lambda v: grad_hess(v[:p], math.exp(v[p]), y, X, w)[0]
  g, H, _ = grad_hess(z[:p], math.exp(z[p]), y, X, w)
  worst = 0.0
  for j in range(p + 1):
    h = 1e-5 * max(1.0, abs(z[j]))
    e = np.zeros(p + 1)
    e[j] = h
    gj = (f(z + e) - f(z - e)) / (2 * h)
    worst = max(worst, abs(gj - g[j]) / max(1.0, abs(g[j])))
    Hj = (gr(z + e) - gr(z - e)) / (2 * h)
    worst = max(worst, float(np.max(np.abs(Hj - H[:, j]) / np.maximum(1.0, np.abs(H[:, j])))))
  return worst


def fit(y, X, w, theta_fixed=None):
  p = X.shape[1]
  b0 = math.log(np.sum(w * y) / np.sum(w))
  z0 = np.array([b0] + [0.0] * (p - 1) + [0.0])
  worst = fd_check(z0 + np.array([0.0, 0.1, -0.1, 0.3]), y, X, w)
  assert worst < 1e-5, "finite differences disagree: %g" % worst
  if theta_fixed is None:
    f = lambda v: -loglik(v[:p], math.exp(v[p]), y, X, w)
    jac = lambda v: -grad_hess(v[:p], math.exp(v[p]), y, X, w)[0]
    hes = lambda v: -grad_hess(v[:p], math.exp(v[p]), y, X, w)[1]
    r = scipy.optimize.minimize(f, z0, jac=jac, hess=hes, method="trust-exact",
                                options={"gtol": 1e-12})
    z = r.x
    for _ in range(5):
      g, H, _ = grad_hess(z[:p], math.exp(z[p]), y, X, w)
      z = z - np.linalg.solve(H, g)
    r2 = scipy.optimize.minimize(f, z0, jac=jac, method="BFGS", options={"gtol": 1e-10})
    assert abs(-r2.fun - loglik(z[:p], math.exp(z[p]), y, X, w)) < 1e-9 * abs(r2.fun), \
      "BFGS disagrees"
    worst = fd_check(z, y, X, w)
    assert worst < 1e-5, "finite differences disagree at the optimum: %g" % worst
  else:
    t = math.log(theta_fixed)
    f = lambda b: -loglik(b, theta_fixed, y, X, w)
    jac = lambda b: -grad_hess(b, theta_fixed, y, X, w)[0][:p]
    hes = lambda b: -grad_hess(b, theta_fixed, y, X, w)[1][:p, :p]
    r = scipy.optimize.minimize(f, z0[:p], jac=jac, hess=hes, method="trust-exact",
                                options={"gtol": 1e-12})
    b = r.x
    for _ in range(5):
      g, H, _ = grad_hess(b, theta_fixed, y, X, w)
      b = b - np.linalg.solve(H[:p, :p], g[:p])
    z = np.append(b, t)
  beta, th = z[:p], math.exp(z[p])
  g, H, h_th = grad_hess(beta, th, y, X, w)
  gsub = g if theta_fixed is None else g[:p]
  ll = loglik(beta, th, y, X, w)
  scale = np.maximum(1.0, np.abs(z[:len(gsub)]))
  gradnorm = float(np.max(np.abs(gsub) * scale)) / max(1.0, abs(ll))
  assert gradnorm < 1e-9, "gradient norm %g" % gradnorm
  if theta_fixed is None:
    Hs = H
  else:
    Hs = H[:p, :p]
  assert np.all(np.linalg.eigvalsh(-Hs) > 0), "not a maximum"
  cov = np.linalg.inv(-Hs)
  se_beta = np.sqrt(np.diag(cov)[:p])
  mu = np.exp(X @ beta)
  dev = float(np.sum(w * 2.0 * (np.where(y > 0, y * np.log(np.where(y > 0, y, 1.0) / mu), 0.0)
                               - (y + th) * np.log((y + th) / (mu + th)))))
  out = {"beta": beta, "se_observed": se_beta, "theta": th, "loglik": ll, "deviance": dev,
         "gradnorm": gradnorm}
  if theta_fixed is None:
    out["theta_se_observed"] = th * math.sqrt(cov[p, p])      # delta method, exact at the MLE
    out["theta_se_conditional"] = 1.0 / math.sqrt(-h_th)      # beta held at its MLE
  return out


def main():
  if "--make-data" in sys.argv:
    make_data()
  y, X, w = read_data()
  est = fit(y, X, w)
  fix = fit(y, X, w, THETA_FIXED)
  r = repr
  with open(OUT, "w") as f:
    f.write("# nb_mle.txt -- maximum-likelihood negative binomial fits for ballast's famfit.c.\n")
    f.write("# Written by tests/reference/nb_mle.py (see tests/reference/README.md); "
            "do not edit.\n")
    f.write("# Rerun from the top of the tree: /usr/bin/python3 tests/reference/nb_mle.py\n")
    f.write("# Produced with python3 %s, numpy %s, scipy %s.\n"
            % (sys.version.split()[0], np.__version__, scipy.__version__))
    f.write("# Data: tests/data/nb_counts.csv (invented, n = %d); log mu = b0 + b1 x1 + b2 x2,\n"
            % len(y))
    f.write("# prior weights a = w; "
            "l = sum a scipy.stats.nbinom.logpmf(y, theta, theta/(theta+mu)).\n")
    f.write("# Method: trust-exact on analytic gradient and Hessian over (beta, log theta),\n")
    f.write("# Newton polish, gradient checked by central differences; no IRLS.\n")
    f.write("# Keys: beta; se_observed (beta block of the inverse observed information);\n")
    f.write("# theta; theta_se_observed (from the full inverse observed information);\n")
    f.write("# theta_se_conditional = 1/sqrt(-d2l/dtheta2) at the MLE with beta fixed;\n")
    f.write("# loglik; deviance = sum a d(y, mu; theta); gradnorm (relative).\n")
    for name, res in (("estimated", est), ("fixed", fix)):
      f.write("\ncase %s\n" % name)
      f.write("beta %s\n" % " ".join(r(float(v)) for v in res["beta"]))
      f.write("se_observed %s\n" % " ".join(r(float(v)) for v in res["se_observed"]))
      f.write("theta %s\n" % r(float(res["theta"])))
      if name == "estimated":
        f.write("theta_se_observed %s\n" % r(float(res["theta_se_observed"])))
        f.write("theta_se_conditional %s\n" % r(float(res["theta_se_conditional"])))
      f.write("loglik %s\n" % r(res["loglik"]))
      f.write("deviance %s\n" % r(res["deviance"]))
      f.write("gradnorm %s\n" % r(res["gradnorm"]))
      f.write("end\n")
    print("estimated: theta %.6g (se %.3g obs, %.3g cond) loglik %.10g gradnorm %.2g"
          % (est["theta"], est["theta_se_observed"], est["theta_se_conditional"], est["loglik"],
             est["gradnorm"]))
    print("fixed theta %.3g: loglik %.10g gradnorm %.2g" % (THETA_FIXED, fix["loglik"],
                                                             fix["gradnorm"]))


if __name__ == "__main__":
  main()
