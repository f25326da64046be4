#!/usr/bin/python3
"""Coverage of ballast's cluster-robust 95% intervals (fit --se cluster), by simulation.

Model (invented; common practice for such studies, no source): G clusters of M = 10 rows;
x_gi = u_g + v_gi and y_gi = 1 + 0.5 x_gi + a_g + e_gi with u, v, a, e independent
standard normals, so both x and the error are correlated within a cluster (intra-cluster
correlation 0.5 for each).  Each replicate is written as CSV and fitted by the ballast
program with `--se cluster --cluster g --json`; the interval of the slope of x is read from
the document and checked against 0.5.

Targets (issue 13, class 6): coverage >= 92% with G = 6 and within 95 +- 1.5% with G = 50,
over 2000 replicates with fixed seeds.  The interval is beta -/+ t_{G-1} se (CR1).  With the
old reference, t on n - k, the same replicates give the figure printed as "t(n-k)", computed
here from the same se so the two are comparable.

Usage: tests/study/cluster_coverage.py [--reps N] [BALLAST]; exit status 1 when a target
fails.  NumPy default_rng(20261204 + G); SciPy only for the t quantiles of the comparison.
"""
import json, os, subprocess, sys, tempfile
import numpy as np
from scipy import stats

def run(ballast, G, reps, m=10):
    rng = np.random.default_rng(20261204 + G)
    cover = cover_old = 0
    with tempfile.TemporaryDirectory() as d:
        path = os.path.join(d, "r.csv")
        for _ in range(reps):
            u = rng.standard_normal(G); a = rng.standard_normal(G)
            g = np.repeat(np.arange(G), m)
            x = u[g] + rng.standard_normal(G * m)
            y = 1.0 + 0.5 * x + a[g] + rng.standard_normal(G * m)
            with open(path, "w") as f:
                f.write("y,x,g\n")
                for yi, xi, gi in zip(y, x, g):
                    f.write("%.17g,%.17g,c%d\n" % (yi, xi, gi))
            out = subprocess.run([ballast, "fit", path, "--response", "y", "--terms", "x",
                                  "--se", "cluster", "--cluster", "g", "--json"],
                                 check=True, capture_output=True, text=True).stdout
            doc = json.loads(out)
            c = doc["coef"][1]
            assert c["ref_dof"] == G - 1 and doc["clusters"] == G
            cover += c["lo"] <= 0.5 <= c["hi"]
            q = stats.t.ppf(0.975, G * m - 2)
            cover_old += abs(c["beta"] - 0.5) <= q * c["se"]
    return cover / reps, cover_old / reps

def main():
    args = sys.argv[1:]
    reps = 2000
    if args[:1] == ["--reps"]:
        reps = int(args[1]); args = args[2:]
    ballast = args[0] if args else os.environ.get("BALLAST", "./ballast")
    ok = True
    for G, lo, hi in ((6, 0.92, 1.0), (50, 0.935, 0.965)):
        c, c_old = run(ballast, G, reps)
        good = lo <= c <= hi
        ok &= good
        print("G = %2d, %d replicates: coverage t(G-1) %.4f  [target %.3f..%.3f] %s;"
              "  t(n-k) would give %.4f" % (G, reps, c, lo, hi, "ok" if good else "FAILED",
                                           c_old))
    sys.exit(0 if ok else 1)

if __name__ == "__main__":
    main()
