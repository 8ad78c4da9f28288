#!/usr/bin/python3
"""firmcall calibrate on a history of book fields (samples/default_history_book.csv).

  1. The calibration from the book fields equals the calibration from a DD column holding the DD
     that `firmcall score` prints for the same rows (intercept, slope, standard errors and
     log-likelihood to 1e-12 relative; isotonic blocks the same), with the built-in settings and
     with a settings file that changes the default point and the measure (the DDs then differ,
     so settings ignored by either command would fail the check).
  2. The logistic fit on that DD against statsmodels' Logit (maximum likelihood, Newton):
     coefficients to 1e-8 relative, standard errors to 1e-6, log-likelihood to 1e-10.
  3. A history with a DD column and book columns uses the DD column and says so in a note.

Usage: calibration_book_fields_check.py FIRMCALL SOURCE_DIR
"""
import csv
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
import statsmodels.api as sm

BOOK_COLUMNS = ["market_cap", "equity_vol", "short_term_debt", "long_term_debt", "rate"]


def rel(a, b):
    return abs(a - b) / max(abs(b), 1e-300)


def calibrate(firmcall, settings, history, method):
    out = subprocess.run([firmcall, "-q", *settings, "calibrate", history, "--method", method, "--format", "json"],
                         check=True, capture_output=True, text=True).stdout
    return json.loads(out)


def printed_dd(firmcall, settings, rows, tmp):
    """The distance_to_default `firmcall score` prints for each row (ids made unique per year)."""
    book = os.path.join(tmp, "book.csv")
    with open(book, "w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["id"] + BOOK_COLUMNS)
        for r in rows:
            w.writerow([r["id"] + "@" + r["as_of"]] + [r[c] for c in BOOK_COLUMNS])
    scored = os.path.join(tmp, "scored.csv")
    subprocess.run([firmcall, "-q", *settings, "score", book, "--format", "csv", "-o", scored], check=True)
    with open(scored, newline="") as f:
        out = list(csv.DictReader(f))
    assert len(out) == len(rows) and all(o["status"] == "ok" for o in out)
    return [o["distance_to_default"] for o in out]


def compare(firmcall, settings, rows, book_history, tmp, failures):
    dd_text = printed_dd(firmcall, settings, rows, tmp)
    dd_history = os.path.join(tmp, "dd_history.csv")
    with open(dd_history, "w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["id", "as_of", "distance_to_default", "defaulted"])
        for r, dd in zip(rows, dd_text):
            w.writerow([r["id"], r["as_of"], dd, r["defaulted"]])
    label = "settings file" if settings else "built-in settings"
    for method in ("logistic", "isotonic"):
        a = calibrate(firmcall, settings, book_history, method)
        b = calibrate(firmcall, settings, dd_history, method)
        if method == "logistic":
            for key in ("intercept", "slope", "intercept_se", "slope_se", "log_likelihood"):
                print(f"{label}: {key} from book fields {a[key]!r}, from score's DD {b[key]!r}")
                if rel(a[key], b[key]) > 1e-12:
                    failures.append(f"{label} {key}")
        elif a["blocks"] != b["blocks"]:
            failures.append(f"{label} isotonic blocks")
    return np.array([float(x) for x in dd_text]), calibrate(firmcall, settings, book_history, "logistic")


def main():
    firmcall, source = sys.argv[1], sys.argv[2]
    history = os.path.join(source, "samples", "default_history_book.csv")
    with open(history, newline="") as f:
        rows = list(csv.DictReader(f))
    y = np.array([float(r["defaulted"]) for r in rows])
    failures = []
    with tempfile.TemporaryDirectory() as tmp:
        settings_file = os.path.join(tmp, "settings.yaml")
        with open(settings_file, "w") as f:
            f.write("scoring:\n  default_point_weight: 0.8\n  measure: risk-neutral\n")
        dd, fit = compare(firmcall, [], rows, history, tmp, failures)
        dd_other, fit_other = compare(firmcall, ["--config", settings_file], rows, history, tmp, failures)
        if not np.all(dd_other < dd):  # a larger default point lowers every DD (Merton 1974)
            failures.append("the settings file did not change the DDs")

        ref = sm.Logit(y, sm.add_constant(dd)).fit(method="newton", tol=1e-14, maxiter=100, disp=False)
        se = np.sqrt(np.diag(ref.cov_params()))
        checks = [("intercept", fit["intercept"], ref.params[0], 1e-8), ("slope", fit["slope"], ref.params[1], 1e-8),
                  ("intercept_se", fit["intercept_se"], se[0], 1e-6), ("slope_se", fit["slope_se"], se[1], 1e-6),
                  ("log_likelihood", fit["log_likelihood"], ref.llf, 1e-10)]
        for name, got, want, tol in checks:
            print(f"logistic {name}: firmcall {got!r} statsmodels {want!r} relative difference {rel(got, want):.3g}")
            if rel(got, want) > tol:
                failures.append("statsmodels " + name)
        if fit["observations"] != len(rows) or fit["defaults"] != int(y.sum()):
            failures.append("logistic counts")

        both = os.path.join(tmp, "both.csv")
        with open(both, "w", newline="") as f:
            w = csv.writer(f, lineterminator="\n")
            w.writerow(["id", "as_of", "distance_to_default", "defaulted"] + BOOK_COLUMNS)
            for r, d in zip(rows, dd):
                w.writerow([r["id"], r["as_of"], repr(d + 1.0), r["defaulted"]] + [r[c] for c in BOOK_COLUMNS])
        run = subprocess.run([firmcall, "calibrate", both, "--format", "json"], check=True, capture_output=True,
                             text=True)
        shifted = json.loads(run.stdout)
        # DD + 1 for every row: the same fit with the intercept moved by -slope (exact algebra of the
        # logistic link), so the DD column was used, not the book columns.
        if rel(shifted["slope"], fit["slope"]) > 1e-8 or rel(shifted["intercept"], fit["intercept"] - fit["slope"]) > 1e-8:
            failures.append("DD column with book columns: the DD column was not used")
        if "book columns 'market_cap', 'equity_vol', 'short_term_debt', 'long_term_debt', 'rate' are not used" \
                not in run.stderr:
            failures.append("DD column with book columns: no note")
    if failures:
        print("FAILED: " + ", ".join(failures))
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
