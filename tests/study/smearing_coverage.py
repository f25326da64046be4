#!/usr/bin/python3
"""Coverage of the mean interval of a log-transformed least-squares prediction (Duan's
smeared mean, doc/methods.md section 10), by simulation.

Model (invented; common practice for such studies, no source): x fixed, uniform on (0, 2)
(drawn once per n), log y = 1 + 0.5 x + sigma eps with eps standard normal, so the true mean
of y at x0 is exp(1 + 0.5 x0 + sigma^2 / 2).  Each replicate is fitted by the ballast
program (`fit --transform log --save`) and `predict` gives the 95% interval of the mean at
x0 = mean(x) and at the 95th percentile of x; the study counts how often it holds the true
mean.

Targets (issue 13, class 10): coverage within 95 +- 1.5 points at n = 100 and 95 +- 1 at
n = 1000, for sigma = 0.5 and 1, at both points, over 4000 replicates (NumPy
default_rng(20261204 + n + round(100 sigma))).  Usage:
tests/study/smearing_coverage.py [--reps N] [BALLAST]; exit status 1 when a target fails.
"""
import csv, io, os, subprocess, sys, tempfile
import numpy as np

def run(ballast, n, sigma, reps):
    rng = np.random.default_rng(20261204 + n + round(100 * sigma))
    x = rng.uniform(0.0, 2.0, n)
    pts = [float(np.mean(x)), float(np.quantile(x, 0.95))]
    truth = [np.exp(1.0 + 0.5 * p + sigma * sigma / 2.0) for p in pts]
    cover = [0, 0]
    with tempfile.TemporaryDirectory() as d:
        data, model, new = (os.path.join(d, f) for f in ("d.csv", "m.json", "new.csv"))
        with open(new, "w") as f:
            f.write("x\n%.17g\n%.17g\n" % tuple(pts))
        for _ in range(reps):
            y = np.exp(1.0 + 0.5 * x + sigma * rng.standard_normal(n))
            with open(data, "w") as f:
                f.write("y,x\n")
                f.write("".join("%.17g,%.17g\n" % (a, b) for a, b in zip(y, x)))
            subprocess.run([ballast, "fit", data, "--response", "y", "--terms", "x",
                            "--method", "ols", "--transform", "log", "--save", model, "-q",
                            "-o", os.devnull], check=True)
            out = subprocess.run([ballast, "predict", model, new, "-q"], check=True,
                                 capture_output=True, text=True).stdout
            for k, r in enumerate(csv.DictReader(io.StringIO(out))):
                cover[k] += float(r["mean_lo"]) <= truth[k] <= float(r["mean_hi"])
    return [c / reps for c in cover]

def main():
    args = sys.argv[1:]
    reps = 4000
    if args[:1] == ["--reps"]:
        reps = int(args[1]); args = args[2:]
    ballast = args[0] if args else os.environ.get("BALLAST", "./ballast")
    ok = True
    for n, tol in ((100, 0.015), (1000, 0.01)):
        for sigma in (0.5, 1.0):
            c = run(ballast, n, sigma, reps)
            for where, ck in zip(("mean(x)", "q95(x)"), c):
                good = abs(ck - 0.95) <= tol
                ok &= good
                print("n = %4d, sigma = %.1f, at %-7s: coverage %.4f over %d  [95 +- %.1f] %s"
                      % (n, sigma, where, ck, reps, 100 * tol, "ok" if good else "FAILED"),
                      flush=True)
    sys.exit(0 if ok else 1)

if __name__ == "__main__":
    main()
