#!/usr/bin/python3
"""glm_mle.py -- maximum-likelihood reference values for the GLM engine, computed without IRLS.

For each of 12 family/link pairs this script maximizes the log-likelihood of
eta = b0 + b1*x1 + b2*x2 with prior weights a_i = w directly over (beta, log dispersion) with
scipy.optimize (trust-exact, analytic gradient and Hessian), polishes with Newton steps on the
analytic Hessian, checks the result, and writes tests/reference/glm_mle.txt.

Usage (from anywhere; paths are relative to this file):
  /usr/bin/python3 tests/reference/glm_mle.py              # fit the shipped data, write .txt
  /usr/bin/python3 tests/reference/glm_mle.py --make-data  # first regenerate the two CSV files

The data are invented: tests/data/mle_counts.csv and tests/data/mle_amounts.csv, made once with
a fixed-seed NumPy generator (--make-data) and then kept, so that the reference does not depend
on NumPy's random streams staying the same across versions.  The fits always read the CSV text
back (Python float() is correctly rounded, as strtod is), so they see exactly what the C tests see.

Log-likelihoods with prior weights a_i (the definitions of src/lib/family.c; dispersion phi is
that of a row with a_i = 1):
  gaussian  y_i distributed N(mu_i, sigma^2/a_i):
            l = sum [-0.5 log(2 pi sigma^2/a_i) - a_i (y_i - mu_i)^2 / (2 sigma^2)]
  poisson   l = sum a_i [y_i log mu_i - mu_i - lgamma(y_i + 1)]
  gamma     shape nu a_i, mean mu_i:
            l = sum [nu a_i log(nu a_i y_i/mu_i) - nu a_i y_i/mu_i - log y_i - lgamma(nu a_i)]
  inv. gaussian, dispersion phi/a_i:
            l = sum [-0.5 log(2 pi phi y_i^3/a_i) - a_i (y_i - mu_i)^2 / (2 phi mu_i^2 y_i)]
(McCullagh, P. and Nelder, J. A. (1989) Generalized Linear Models, 2nd ed., ch. 2 and 8;
Johnson, Kotz and Balakrishnan (1994) Continuous Univariate Distributions, vol. 1, ch. 15 for
the inverse gaussian density.)

Every derivative is taken through mu: dl/dbeta = X' (dl/dmu * m1), and
d2l/dbeta dbeta' = X' diag(d2l/dmu2 * m1^2 + dl/dmu * m2) X, with m1 = dmu/deta and
m2 = d2mu/deta2 of the link (identity 1, 0; log mu, mu; inverse -mu^2, 2 mu^3).  The analytic
gradient and Hessian are checked against central finite differences before they are trusted.
"""

import math
import os
import sys

import numpy as np
import scipy
import scipy.optimize
import scipy.special

HERE = os.path.dirname(os.path.abspath(__file__))
DATA = os.path.join(HERE, "..", "data")
OUT = os.path.join(HERE, "glm_mle.txt")
SEED = 20261201
N = 60
GRAD_TOL = 1e-9          # required relative gradient norm (see gradnorm below)

# ---------------------------------------------------------------------------------------------
# Invented data (written once with --make-data)


def make_data():
  """Write the two CSV files from a fixed-seed generator.

  Counts: true mean linear in x1, x2 and bounded away from 0 (0.9 .. 4.6), so that identity,
  log and inverse links all have interior maxima with every fitted mean (and, for the inverse
  link, every eta) positive, while means near 1 still give some zero counts.  Amounts: gamma
  with shape 2.5 (skewed) and mean 5.5 .. 14.5.  Weights uniform on 0.5 .. 2.  Numbers are
  written with fixed precision so the files are the same on every platform."""
  rng = np.random.default_rng(SEED)
  x1 = np.round(rng.uniform(-1.0, 1.0, N), 4)
  x2 = np.round(rng.uniform(-1.0, 1.0, N), 4)
  w = np.round(rng.uniform(0.5, 2.0, N), 3)
  mu = 2.75 + 1.1 * x1 + 0.75 * x2
  y = rng.poisson(mu)
  with open(os.path.join(DATA, "mle_counts.csv"), "w") as f:
    f.write("y,x1,x2,w\n")
    for i in range(N):
      f.write("%d,%.4f,%.4f,%.3f\n" % (y[i], x1[i], x2[i], w[i]))

  x1 = np.round(rng.uniform(-1.0, 1.0, N), 4)
  x2 = np.round(rng.uniform(-1.0, 1.0, N), 4)
  w = np.round(rng.uniform(0.5, 2.0, N), 3)
  mu = 10.0 + 3.0 * x1 + 1.5 * x2
  shape = 2.5
  y = rng.gamma(shape, mu / shape)
  y = np.maximum(np.round(y, 4), 0.0001)
  with open(os.path.join(DATA, "mle_amounts.csv"), "w") as f:
    f.write("y,x1,x2,w\n")
    for i in range(N):
      f.write("%.4f,%.4f,%.4f,%.3f\n" % (y[i], x1[i], x2[i], w[i]))


def read_csv(name):
  with open(os.path.join(DATA, name)) as f:
    head = f.readline().strip().split(",")
    assert head == ["y", "x1", "x2", "w"], head
    rows = [[float(c) for c in line.strip().split(",")] for line in f if line.strip()]
  a = np.array(rows)
  X = np.column_stack([np.ones(len(a)), a[:, 1], a[:, 2]])
  return a[:, 0], X, a[:, 3]

# ---------------------------------------------------------------------------------------------
# Links: mu = ginv(eta), m1 = dmu/deta, m2 = d2mu/deta2, valid(eta)

LINKS = {
  "identity": dict(g=lambda m: m, ginv=lambda e: e,
                   m1=lambda e: np.ones_like(e), m2=lambda e: np.zeros_like(e)),
  "log": dict(g=np.log, ginv=np.exp, m1=np.exp, m2=np.exp),
  "inverse": dict(g=lambda m: 1.0 / m, ginv=lambda e: 1.0 / e,
                  m1=lambda e: -1.0 / e**2, m2=lambda e: 2.0 / e**3),
}

# ---------------------------------------------------------------------------------------------
# Families.  Each returns, for mu (all valid) and the log-dispersion t:
#   l (scalar), l_mu (dl/dmu_i), l_mumu (d2l/dmu_i^2), l_t, l_tt, l_mut (d2l/dmu_i dt)
# The dispersion parameter t is log sigma (gaussian), log nu (gamma), log phi (inv. gaussian).


def fam_gaussian(y, mu, a, t):
  s2 = math.exp(2.0 * t)
  r = y - mu
  terms = -0.5 * np.log(2.0 * math.pi * s2 / a) - a * r * r / (2.0 * s2)
  return (math.fsum(terms), a * r / s2, -a / s2 * np.ones_like(mu),
          math.fsum(-1.0 + a * r * r / s2), math.fsum(-2.0 * a * r * r / s2), -2.0 * a * r / s2)


def fam_poisson(y, mu, a, t):
  terms = a * (scipy.special.xlogy(y, mu) - mu - scipy.special.gammaln(y + 1.0))
  z = np.zeros_like(mu)
  return (math.fsum(terms), a * (y / mu - 1.0), -a * y / mu**2, 0.0, 0.0, z)


def fam_gamma(y, mu, a, t):
  k = math.exp(t) * a                    # shape of row i
  terms = (k * np.log(k * y / mu) - k * y / mu - np.log(y) - scipy.special.gammaln(k))
  l_mu = k * (y - mu) / mu**2
  l_mumu = k * (1.0 / mu**2 - 2.0 * y / mu**3)
  dk = np.log(k * y / mu) + 1.0 - y / mu - scipy.special.digamma(k)   # dl_i/dk_i
  l_t = math.fsum(k * dk)
  l_tt = math.fsum(k * dk + k - k * k * scipy.special.polygamma(1, k))
  return (math.fsum(terms), l_mu, l_mumu, l_t, l_tt, l_mu)


def fam_invgauss(y, mu, a, t):
  phi = math.exp(t)
  q = a * (y - mu)**2 / (mu**2 * y)
  terms = -0.5 * np.log(2.0 * math.pi * phi * y**3 / a) - q / (2.0 * phi)
  l_mu = a * (y - mu) / (phi * mu**3)
  l_mumu = a * (2.0 * mu - 3.0 * y) / (phi * mu**4)
  return (math.fsum(terms), l_mu, l_mumu, math.fsum(-0.5 + q / (2.0 * phi)),
          math.fsum(-q / (2.0 * phi)), -l_mu)


FAMILIES = {
  # name: (function, variance V(mu), unit deviance d(y, mu), dispersion free, data file)
  "gaussian": (fam_gaussian, lambda m: np.ones_like(m), lambda y, m: (y - m)**2, True,
               "mle_amounts.csv"),
  "poisson": (fam_poisson, lambda m: m,
              lambda y, m: 2.0 * (scipy.special.xlogy(y, y / m) - (y - m)), False,
              "mle_counts.csv"),
  "gamma": (fam_gamma, lambda m: m**2, lambda y, m: 2.0 * (-np.log(y / m) + (y - m) / m), True,
            "mle_amounts.csv"),
  "inverse-gaussian": (fam_invgauss, lambda m: m**3, lambda y, m: (y - m)**2 / (m**2 * y), True,
                       "mle_amounts.csv"),
}

# ---------------------------------------------------------------------------------------------


class Model:
  def __init__(self, family, link, y, X, a):
    self.fam, self.var, self.udev, self.free, _ = FAMILIES[family]
    self.lk = LINKS[link]
    self.link = link
    self.y, self.X, self.a = y, X, a
    self.n, self.p = X.shape
    self.k = self.p + (1 if self.free else 0)

  def split(self, theta):
    return theta[:self.p], (theta[self.p] if self.free else 0.0)

  def valid(self, eta):
    if not np.all(np.isfinite(eta)):
      return False
    if self.link == "inverse":
      return bool(np.all(eta > 0.0))
    if self.link == "identity":
      return bool(np.all(eta > 0.0))     # every family here needs mu > 0 (gaussian: by choice)
    return bool(np.all(eta < 700.0))

  def parts(self, theta):
    beta, t = self.split(theta)
    eta = self.X @ beta
    if not self.valid(eta):
      return None
    mu = self.lk["ginv"](eta)
    return eta, mu, self.fam(self.y, mu, self.a, t)

  def loglik(self, theta):
    pr = self.parts(theta)
    return -math.inf if pr is None else pr[2][0]

  # At a point outside the domain (a trial step the trust region will reject, since l = -inf
  # there) grad and hess return finite placeholders; the optimizer evaluates them eagerly.
  def grad(self, theta):
    pr = self.parts(theta)
    if pr is None:
      return np.zeros(self.k)
    eta, mu, (l, l_mu, l_mumu, l_t, l_tt, l_mut) = pr
    g = self.X.T @ (l_mu * self.lk["m1"](eta))
    return np.append(g, l_t) if self.free else g

  def hess(self, theta):
    pr = self.parts(theta)
    if pr is None:
      return -np.eye(self.k)
    eta, mu, (l, l_mu, l_mumu, l_t, l_tt, l_mut) = pr
    m1, m2 = self.lk["m1"](eta), self.lk["m2"](eta)
    H = np.zeros((self.k, self.k))
    H[:self.p, :self.p] = self.X.T @ ((l_mumu * m1 * m1 + l_mu * m2)[:, None] * self.X)
    if self.free:
      c = self.X.T @ (l_mut * m1)
      H[:self.p, self.p] = c
      H[self.p, :self.p] = c
      H[self.p, self.p] = l_tt
    return H

  def start(self):
    """Intercept-only start: b0 = g(weighted mean of y), slopes 0 -- always a valid point."""
    ybar = np.sum(self.a * self.y) / np.sum(self.a)
    beta = np.zeros(self.p)
    beta[0] = self.lk["g"](ybar)
    if not self.free:
      return beta
    mu = np.full(self.n, ybar)
    phi = np.sum(self.a * (self.y - mu)**2 / self.var(mu)) / self.n   # moment estimate
    fam = self.fam.__name__
    t = {"fam_gaussian": 0.5 * math.log(phi), "fam_gamma": -math.log(phi),
         "fam_invgauss": math.log(phi)}[fam]
    return np.append(beta, t)


def fd_check(m, theta):
  """Largest relative difference between the analytic gradient/Hessian and central finite
  differences (step h = 1e-5 max(1, |theta_j|)).  Guards the formulas above."""
  g, H = m.grad(theta), m.hess(theta)
  gfd, Hfd = np.zeros_like(g), np.zeros_like(H)
  for j in range(len(theta)):
    h = 1e-5 * max(1.0, abs(theta[j]))
    tp, tm = theta.copy(), theta.copy()
    tp[j] += h
    tm[j] -= h
    gfd[j] = (m.loglik(tp) - m.loglik(tm)) / (2 * h)
    Hfd[:, j] = (m.grad(tp) - m.grad(tm)) / (2 * h)
  scale_g = max(1.0, np.max(np.abs(gfd)), abs(m.loglik(theta)) * 1e-6)
  eg = np.max(np.abs(g - gfd)) / scale_g
  eh = np.max(np.abs(H - Hfd)) / max(1.0, np.max(np.abs(Hfd)))
  return eg, eh


def gradnorm(m, theta):
  """max_j |dl/dtheta_j| max(1, |theta_j|) / max(1, |l|): the relative change in l that a
  relative change in any parameter would bring, to first order (common practice, no source)."""
  g = m.grad(theta)
  return float(np.max(np.abs(g) * np.maximum(1.0, np.abs(theta))) / max(1.0, abs(m.loglik(theta))))


def fit(family, link):
  y, X, a = read_csv(FAMILIES[family][4])
  m = Model(family, link, y, X, a)
  theta0 = m.start()
  assert np.isfinite(m.loglik(theta0)), (family, link, "start not valid")
  eg0, eh0 = fd_check(m, theta0)
  res = scipy.optimize.minimize(lambda th: -m.loglik(th), theta0, method="trust-exact",
                                jac=lambda th: -m.grad(th), hess=lambda th: -m.hess(th),
                                options=dict(gtol=1e-11, maxiter=2000))
  theta = res.x
  # Newton polish on the analytic Hessian; keep a step only if it does not lower l.
  for _ in range(8):
    step = np.linalg.solve(m.hess(theta), m.grad(theta))
    cand = theta - step
    if m.loglik(cand) >= m.loglik(theta) - 1e-12 * abs(m.loglik(theta)):
      theta = cand
    if gradnorm(m, theta) < 1e-14:
      break
  gn = gradnorm(m, theta)
  # A second optimizer (BFGS, gradient only) from the same start must reach the same maximum.
  res2 = scipy.optimize.minimize(lambda th: -m.loglik(th), theta0, method="BFGS",
                                 jac=lambda th: -m.grad(th), options=dict(gtol=1e-8, maxiter=5000))
  l2 = -res2.fun
  assert abs(l2 - m.loglik(theta)) <= 1e-9 * abs(m.loglik(theta)), (family, link, l2)
  eg, eh = fd_check(m, theta)
  # The gradient is checked at the start, where it is large; at the optimum it is ~0 and a
  # finite difference of l measures only truncation and rounding error.
  assert max(eg0, eh0, eh) < 1e-5, (family, link, eg0, eh0, eh)
  assert gn < GRAD_TOL, (family, link, gn)
  H = m.hess(theta)
  ev = np.linalg.eigvalsh(-H)
  assert ev.min() > 0.0, (family, link, "not a maximum", ev)

  beta, t = m.split(theta)
  eta = X @ beta
  mu = m.lk["ginv"](eta)
  assert m.valid(eta) and np.all(mu > 0.0), (family, link, "fitted mean not valid")
  if link == "inverse":
    assert np.all(eta > 0.0)
  n, p = m.n, m.p
  dev = math.fsum(a * m.udev(y, mu))
  V = m.var(mu)
  pearson = math.fsum(a * (y - mu)**2 / V)
  if family == "poisson":
    phi_ml = phi_p = 1.0
  else:
    phi_p = pearson / (n - p)
    phi_ml = {"gaussian": math.exp(2.0 * t), "gamma": math.exp(-t),
              "inverse-gaussian": math.exp(t)}[family]
  # Closed forms the optimum must satisfy (common practice, no source): gaussian
  # sigma^2 = sum a r^2 / n and inverse gaussian phi = D / n; gaussian identity beta = WLS.
  if family in ("gaussian", "inverse-gaussian"):
    assert abs(phi_ml - dev / n) <= 1e-12 * phi_ml, (family, link, phi_ml, dev / n)
  if family == "gaussian" and link == "identity":
    sw = np.sqrt(a)
    b_wls = np.linalg.lstsq(X * sw[:, None], y * sw, rcond=None)[0]
    assert np.max(np.abs(b_wls - beta) / np.abs(b_wls)) < 1e-12, (b_wls, beta)

  cov_obs = np.linalg.inv(-H)
  se_obs = np.sqrt(np.diag(cov_obs)[:p])
  m1 = m.lk["m1"](eta)
  W = a * m1 * m1 / V
  se_fisher = np.sqrt(phi_p * np.diag(np.linalg.inv(X.T @ (W[:, None] * X))))
  cross = float(np.max(np.abs(H[:p, p]))) if m.free else 0.0
  return dict(family=family, link=link, data=FAMILIES[family][4], beta=beta, se_fisher=se_fisher,
              se_observed=se_obs, loglik=m.loglik(theta), deviance=dev, phi_ml=phi_ml,
              phi_pearson=phi_p, pearson_chi2=pearson, gradnorm=gn, fd=max(eg0, eh0, eh),
              cross=cross, nit=res.nit, mumin=float(mu.min()),
              etamin=float(eta.min()))


def main():
  if "--make-data" in sys.argv[1:]:
    make_data()
  cases = [(f, l) for f in ("gaussian", "poisson", "gamma", "inverse-gaussian")
           for l in ("identity", "log", "inverse")]
  results = [fit(f, l) for f, l in cases]
  r = repr
  header = [
    "glm_mle.txt -- maximum-likelihood reference fits for ballast's GLM engine.",
    "Written by tests/reference/glm_mle.py (see tests/reference/README.md); do not edit.",
    "Rerun from the top of the tree: /usr/bin/python3 tests/reference/glm_mle.py",
    "Produced with python3 %s, numpy %s, scipy %s."
    % (sys.version.split()[0], np.__version__, scipy.__version__),
    "Data: tests/data/mle_counts.csv (poisson), tests/data/mle_amounts.csv (the others),",
    "invented, n = 60 each.  Model eta = b0 + b1*x1 + b2*x2, prior weights a = w.",
    "Method: direct maximization of the log-likelihood over (beta, log dispersion) with",
    "scipy.optimize.minimize(method='trust-exact') on analytic gradient and Hessian, then",
    "Newton polish; no IRLS.",
    "Keys: beta (b0 b1 b2); se_fisher = sqrt(phi_pearson [(X'WX)^-1]_jj),",
    "W = a (dmu/deta)^2 / V(mu); se_observed = sqrt of the beta block of the inverse",
    "observed information (full Hessian including the log dispersion); loglik l;",
    "deviance D = sum a d; phi_ml (gaussian sigma^2, gamma 1/shape, inverse gaussian D/n,",
    "poisson 1); phi_pearson = pearson_chi2/(n-p) (poisson 1);",
    "pearson_chi2 = sum a (y-mu)^2/V(mu);",
    "gradnorm = max_j |dl/dtheta_j| max(1,|theta_j|) / max(1,|l|) at the reported point.",
    "Numbers are Python repr() of doubles (shortest string that reads back exactly).",
  ]
  with open(OUT, "w") as f:
    for line in header:
      f.write("# %s\n" % line)
    for q in results:
      f.write("\ncase %s %s\n" % (q["family"], q["link"]))
      f.write("data %s\n" % q["data"])
      f.write("beta %s\n" % " ".join(r(float(v)) for v in q["beta"]))
      f.write("se_fisher %s\n" % " ".join(r(float(v)) for v in q["se_fisher"]))
      f.write("se_observed %s\n" % " ".join(r(float(v)) for v in q["se_observed"]))
      for key in ("loglik", "deviance", "phi_ml", "phi_pearson", "pearson_chi2", "gradnorm"):
        f.write("%s %s\n" % (key, r(float(q[key]))))
      f.write("end\n")
  for q in results:
    print("%-16s %-8s l=%-22r gradnorm=%.2e fd=%.1e cross=%.1e nit=%d min mu=%.3f min eta=%.3f"
          % (q["family"], q["link"], q["loglik"], q["gradnorm"], q["fd"], q["cross"], q["nit"],
             q["mumin"], q["etamin"]))


if __name__ == "__main__":
  main()
