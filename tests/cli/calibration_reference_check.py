#!/usr/bin/python3
"""firmcall calibrate against independent libraries on samples/default_history.csv.

  logistic  vs statsmodels' Logit (maximum likelihood, Newton): coefficients to 1e-8 relative,
            standard errors (from the inverse Hessian) to 1e-6 relative, log-likelihood to 1e-10.
  isotonic  vs scikit-learn's IsotonicRegression(increasing=False) (pool-adjacent-violators): the
            fitted value at every observation equals the raw PD of its block to 1e-12.

Usage: calibration_reference_check.py FIRMCALL SOURCE_DIR
"""
import csv
import json
import subprocess
import sys

import numpy as np
import statsmodels.api as sm
from sklearn.isotonic import IsotonicRegression


def run(firmcall, history, method):
    out = subprocess.run([firmcall, "-q", "calibrate", history, "--method", method, "--format", "json"],
                         check=True, capture_output=True, text=True).stdout
    return json.loads(out)


def rel(a, b):
    return abs(a - b) / max(abs(b), 1e-300)


def main():
    firmcall, source = sys.argv[1], sys.argv[2]
    history = source + "/samples/default_history.csv"
    with open(history, newline="") as f:
        rows = list(csv.DictReader(f))
    dd = np.array([float(r["distance_to_default"]) for r in rows])
    y = np.array([float(r["defaulted"]) for r in rows])
    failures = []

    fit = run(firmcall, history, "logistic")
    ref = sm.Logit(y, sm.add_constant(dd)).fit(method="newton", tol=1e-14, maxiter=100, disp=False)
    se = np.sqrt(np.diag(ref.cov_params()))
    checks = [("intercept", fit["intercept"], ref.params[0], 1e-8), ("slope", fit["slope"], ref.params[1], 1e-8),
              ("intercept_se", fit["intercept_se"], se[0], 1e-6), ("slope_se", fit["slope_se"], se[1], 1e-6),
              ("log_likelihood", fit["log_likelihood"], ref.llf, 1e-10)]
    for name, got, want, tol in checks:
        print(f"logistic {name}: firmcall {got!r} statsmodels {want!r} relative difference {rel(got, want):.3g}")
        if rel(got, want) > tol:
            failures.append(name)
    if fit["observations"] != len(rows) or fit["defaults"] != int(y.sum()):
        failures.append("logistic counts")

    iso = run(firmcall, history, "isotonic")
    sk = IsotonicRegression(increasing=False).fit(dd, y).predict(dd)
    worst = 0.0
    for x, want in zip(dd, sk):
        block = next(b for b in iso["blocks"] if b["dd_lower"] <= x <= b["dd_upper"])
        worst = max(worst, abs(block["pd_raw"] - want))
    print(f"isotonic: {len(iso['blocks'])} blocks; largest |pd_raw - sklearn| {worst:.3g} over {len(dd)} points")
    if worst > 1e-12:
        failures.append("isotonic values")
    if sum(b["observations"] for b in iso["blocks"]) != len(rows):
        failures.append("isotonic block counts")
    if failures:
        print("FAILED: " + ", ".join(failures))
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
