#!/usr/bin/python3
"""Maxima on the edge of the parameter space, and interior maxima next to it (issue 13, class 7).

Reads tests/data/boundary.csv (x = 0..11 and one response column per case, written once with
--make-data from the formulas below and kept) and writes tests/reference/boundary.txt.

For each case the deviance D(b) = sum_i d(y_i, mu_i), mu_i = g^-1(b0 + b1 x_i), with the unit
deviances of McCullagh & Nelder (1989, table 2.1),
  poisson   d = 2 [y log(y/mu) - (y - mu)]        (y log(y/mu) = 0 at y = 0)
  gaussian  d = (y - mu)^2
  gamma     d = 2 [-log(y/mu) + (y - mu)/mu]
  inv. gau. d = (y - mu)^2 / (mu^2 y)
is minimized with SciPy, not with IRLS:

- constrained: SLSQP with the linear constraints eta_i = b0 + b1 x_i >= 0 (the closure of
  the link's range: identity and sqrt mu >= 0, inverse 1/mu >= 0, i.e. mu up to infinity),
  with D written in eta so that it is finite on the edge (poisson mu = eta or eta^2: the
  y = 0 rows' d = 2 mu is 0 there; gaussian sqrt mu = eta^2; inverse gaussian with the
  inverse link D = sum y (eta - 1/y)^2, a weighted least-squares problem in eta).

A case is "edge" when the constrained minimum has an active constraint (eta_i <= 1e-7 of
max |eta|) and its D is below every strictly interior point reached; "interior" when no
constraint is active and Nelder-Mead on the open range, started there, agrees (then beta is the MLE that a fit
must reach, to 1e-8 of |b| + 1). On the edge the script also asserts that points moved
inward from it along b0 have a larger D. Output, one block per case:

  case NAME FAMILY LINK COLUMN
  kind edge|interior
  active ROW...       1-based data rows (the CSV line is ROW + 1) where eta = 0 on the edge
  deviance D          the constrained minimum
  beta B0 B1          the constrained minimizer (interior: the MLE)
  end

Rerun: /usr/bin/python3 tests/reference/boundary.py (Debian's python3-scipy; written with
Python 3.11.2, NumPy 1.24.2, SciPy 1.10.1).
"""
import sys
import numpy as np
from scipy.optimize import minimize

DATA = "tests/data/boundary.csv"
OUT = "tests/reference/boundary.txt"

# name, family, link, column
CASES = [
    ("ig_inverse", "inverse-gaussian", "inverse", "y_decay"),
    ("poi_identity", "poisson", "identity", "y_count"),
    ("poi_sqrt", "poisson", "sqrt", "y_count"),
    ("gau_sqrt", "gaussian", "sqrt", "y_cross"),
    ("gam_identity", "gamma", "identity", "y_near"),
    ("gam_inverse", "gamma", "inverse", "y_decay"),
    ("ig_identity", "inverse-gaussian", "identity", "y_near"),
]


def make_data():
    rng = np.random.default_rng(20261204)
    x = np.arange(12.0)
    decay = 20.0 * np.exp(-0.55 * x) * rng.gamma(25.0, 1 / 25.0, 12)
    count = rng.poisson(np.maximum(0.0, 1.2 * (x - 3.5)))
    count[:3] = 0
    cross = 1.1 * (x - 2.2) + rng.normal(0.0, 0.3, 12)
    near = (0.15 + 0.9 * x) * rng.gamma(30.0, 1 / 30.0, 12)
    with open(DATA, "w") as f:
        f.write("x,y_decay,y_count,y_cross,y_near\n")
        for i in range(12):
            f.write(f"{x[i]:.0f},{decay[i]:.5f},{count[i]:d},{cross[i]:.4f},{near[i]:.4f}\n")


def unit_dev(fam, y, mu):
    if fam == "poisson":
        t = np.where(y > 0, y * np.log(np.where(y > 0, y, 1.0) / mu), 0.0)
        return 2 * (t - (y - mu))
    if fam == "gaussian":
        return (y - mu) ** 2
    if fam == "gamma":
        return 2 * (-np.log(y / mu) + (y - mu) / mu)
    return (y - mu) ** 2 / (mu ** 2 * y)


def dev_eta(fam, link, y, eta):
    """D as a function of eta, finite on the closed range eta >= 0 where the limit is."""
    if fam == "inverse-gaussian" and link == "inverse":
        return np.sum(y * (eta - 1 / y) ** 2)
    mu = {"identity": eta, "sqrt": eta ** 2, "inverse": 1 / np.maximum(eta, 1e-300)}[link]
    if fam == "poisson":
        mu = np.maximum(mu, 1e-300)
    if fam in ("gamma", "inverse-gaussian") and np.any(mu <= 0):
        return np.inf
    return float(np.sum(unit_dev(fam, y, mu)))


def grad(fam, link, y, X, b):
    """dD/db = X' (-2 (y - mu) / V(mu)) dmu/deta (McCullagh & Nelder 1989, section 2.5)."""
    eta = X @ b
    mu, dmu = {"identity": (eta, np.ones_like(eta)), "sqrt": (eta ** 2, 2 * eta),
               "inverse": (1 / eta, -1 / eta ** 2)}[link]
    v = {"poisson": mu, "gaussian": np.ones_like(mu), "gamma": mu ** 2,
         "inverse-gaussian": mu ** 3}[fam]
    return X.T @ (-2 * (y - mu) / v * dmu)


def main():
    if "--make-data" in sys.argv:
        make_data()
    cols = np.genfromtxt(DATA, delimiter=",", names=True)
    x = cols["x"]
    X = np.column_stack([np.ones_like(x), x])
    out = ["# boundary.py: maxima on the edge of the parameter space and interior ones beside it",
           f"# numpy {np.__version__}; rerun: /usr/bin/python3 tests/reference/boundary.py"]
    for name, fam, link, col in CASES:
        y = cols[col]
        g = {"identity": lambda m: m, "sqrt": np.sqrt, "inverse": lambda m: 1 / m}[link]
        b0 = np.array([g(np.mean(y)), 0.0])
        f = lambda b: dev_eta(fam, link, y, X @ b)
        con = {"type": "ineq", "fun": lambda b: X @ b, "jac": lambda b: X}
        best = None
        for start in (b0, np.linalg.lstsq(X, g(np.maximum(y, 0.05)), rcond=None)[0]):
            r = minimize(f, start, method="SLSQP", constraints=[con],
                         options={"ftol": 1e-15, "maxiter": 2000})
            if best is None or r.fun < best.fun:
                best = r
        eta = X @ best.x
        scale = np.max(np.abs(eta))
        active = [i + 1 for i in range(len(y)) if eta[i] <= 1e-7 * scale]
        kind = "edge" if active else "interior"
        if kind == "interior":
            # an interior minimum: BFGS on the open range agrees, gradient checked
            fu = lambda b: f(b) if np.all(X @ b > 0) else 1e300
            r2 = minimize(fu, best.x, method="Nelder-Mead",
                          options={"xatol": 1e-13, "fatol": 1e-15, "maxiter": 20000})
            assert abs(r2.fun - best.fun) <= 1e-10 * (1 + best.fun), (name, r2.fun, best.fun)
            assert np.all(np.abs(r2.x - best.x) <= 1e-6 * (1 + np.abs(best.x))), name
            # Newton polish on the analytic gradient X' (-2 (y - mu) / V(mu) dmu/deta) with a
            # central-difference Hessian of it, until the gradient is at rounding level
            b = best.x.copy()
            for _ in range(20):
                gr = grad(fam, link, y, X, b)
                h = 1e-6 * (1 + np.abs(b))
                H = np.column_stack([(grad(fam, link, y, X, b + h[k] * np.eye(2)[k])
                                      - grad(fam, link, y, X, b - h[k] * np.eye(2)[k]))
                                     / (2 * h[k]) for k in range(2)])
                b = b - np.linalg.solve(0.5 * (H + H.T), gr)
            gn = np.max(np.abs(grad(fam, link, y, X, b)) * (1 + np.abs(b))) / (1 + f(b))
            assert gn < 1e-10, (name, gn)
            assert f(b) <= best.fun + 1e-12 * (1 + best.fun), name
            best.x, best.fun = b, f(b)
        else:
            # and no strictly interior point beats the edge: step inward along the range
            for t in (1e-1, 1e-2, 1e-3, 1e-4):
                inner = best.x + t * np.array([1.0, 0.0]) * max(scale, 1.0) * 1e-3
                assert np.all(X @ inner > 0)
                assert f(inner) >= best.fun - 1e-9 * (1 + best.fun), (name, t)
        out += [f"case {name} {fam} {link} {col}", f"kind {kind}",
                "active " + " ".join(str(a) for a in active) if active else "active",
                f"deviance {best.fun!r}", f"beta {best.x[0]!r} {best.x[1]!r}", "end", ""]
        print(name, kind, active, best.fun, best.x, file=sys.stderr)
    with open(OUT, "w") as fo:
        fo.write("\n".join(out))


if __name__ == "__main__":
    main()
