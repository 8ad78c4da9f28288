#!/usr/bin/env python3
"""Checks that docs/outputs.md documents exactly the columns each command writes.

Usage: doc_columns_check.py FIRMCALL SOURCE_DIR

docs/outputs.md documents each output in a Markdown table whose first column is `column_name`,
preceded by a marker line `<!-- columns: NAME -->`; `<!-- columns: NAME extends BASE -->` marks a table
that lists the columns appended to the output BASE, and `... extends BASE before COLUMN` one whose
columns are inserted before BASE's column COLUMN. This script runs every command that
writes CSV on the sample files, in a temporary directory, reads each header and compares it with
the documented list: the same names, in the same order. It fails naming the output and the
columns missing from the docs or documented but not written.
"""
import csv
import os
import re
import shutil
import subprocess
import sys
import tempfile

MARKER = re.compile(r"^<!--\s*columns:\s*([a-z0-9_]+)"
                    r"(?:\s+extends\s+([a-z0-9_]+)(?:\s+before\s+([a-z0-9_]+))?)?\s*-->\s*$")
NAME_CELL = re.compile(r"^`([a-z0-9_]+)`$")


def read_documented(path):
    """Returns {output: [columns]} with `extends` resolved; raises ValueError on a malformed table."""
    lines = open(path, encoding="utf-8").read().split("\n")
    own = {}
    bases = {}
    i = 0
    while i < len(lines):
        m = MARKER.match(lines[i].strip())
        i += 1
        if not m:
            continue
        name, base, before = m.group(1), m.group(2), m.group(3)
        if name in own:
            raise ValueError(f"{path}: output '{name}' is documented twice")
        while i < len(lines) and not lines[i].strip():
            i += 1
        if i >= len(lines) or not lines[i].lstrip().startswith("| column_name |"):
            raise ValueError(f"{path}:{i + 1}: the marker of '{name}' is not followed by a table "
                             "whose first column is column_name")
        i += 2  # header and separator rows
        columns = []
        while i < len(lines) and lines[i].lstrip().startswith("|"):
            first = lines[i].strip().strip("|").split("|")[0].strip()
            cell = NAME_CELL.match(first)
            if not cell:
                raise ValueError(f"{path}:{i + 1}: output '{name}': first cell {first!r} is not "
                                 "one column name in backticks")
            columns.append(cell.group(1))
            i += 1
        own[name] = columns
        bases[name] = (base, before)
    resolved = {}

    def resolve(name, seen=()):
        if name in resolved:
            return resolved[name]
        if name not in own:
            raise ValueError(f"{path}: output '{name}' is not documented")
        if name in seen:
            raise ValueError(f"{path}: output '{name}' extends itself")
        base, before = bases[name]
        if not base:
            cols = list(own[name])
        else:
            cols = list(resolve(base, seen + (name,)))
            at = len(cols)
            if before:
                if before not in cols:
                    raise ValueError(f"{path}: output '{name}': column '{before}' is not in '{base}'")
                at = cols.index(before)
            cols[at:at] = own[name]
        resolved[name] = cols
        return cols

    for name in own:
        resolve(name)
    return resolved


def header_of(path):
    with open(path, newline="", encoding="utf-8") as f:
        return next(csv.reader(f))


def compare(output, written, documented):
    """Returns a list of problem messages (empty when the two agree)."""
    problems = []
    missing = [c for c in written if c not in documented]
    extra = [c for c in documented if c not in written]
    if missing:
        problems.append(f"output '{output}': columns written but missing from docs/outputs.md: "
                        + ", ".join(missing))
    if extra:
        problems.append(f"output '{output}': columns in docs/outputs.md that are not written: "
                        + ", ".join(extra))
    if not missing and not extra and written != documented:
        problems.append(f"output '{output}': docs/outputs.md lists the columns in another order; "
                        f"written: {','.join(written)}")
    return problems


def main():
    if len(sys.argv) != 3:
        print(__doc__, file=sys.stderr)
        return 2
    exe = os.path.realpath(sys.argv[1])
    root = os.path.realpath(sys.argv[2])
    samples = os.path.join(root, "samples")
    try:
        documented = read_documented(os.path.join(root, "docs", "outputs.md"))
    except (OSError, ValueError) as e:
        print(f"doc_columns: {e}", file=sys.stderr)
        return 1

    work = tempfile.mkdtemp(prefix="firmcall_doc_columns_")
    failures = []
    checked = 0
    covered = set()
    try:
        def s(name):
            return os.path.join(samples, name)

        def run(args, accept=(0,)):
            r = subprocess.run([exe, "-q"] + args, cwd=work, capture_output=True, text=True)
            if r.returncode not in accept:
                raise RuntimeError(f"firmcall {' '.join(args)}: exit code {r.returncode}\n{r.stderr}")

        book = s("demo_book.yaml")
        scen = s("stress_scenarios.yaml")
        hist = [s("history_book.yaml"), s("history_prices.csv"), "-b", s("history_balance_sheets.csv")]
        db = os.path.join(work, "weekly.sqlite")
        # (documented output, command arguments, file whose header is compared)
        cases = [
            ("score", ["score", book, "-f", "csv", "-o", "score.csv"], "score.csv"),
            ("score_sensitivities", ["score", book, "--sensitivities", "-f", "csv", "-o", "sens.csv"],
             "sens.csv"),
            ("score_grades", ["score", book, "--grades", "-f", "csv", "-o", "grades.csv"], "grades.csv"),
            ("score_pd_calibration", ["score", book, "--pd-calibration", s("calibration.yaml"), "-f", "csv",
                                      "-o", "calibrated.csv"], "calibrated.csv"),
            ("calibrate_logistic", ["calibrate", s("default_history.csv"), "-f", "csv", "-o",
                                    "cal_logistic.csv"], "cal_logistic.csv"),
            ("calibrate_blocks", ["calibrate", s("default_history.csv"), "--method", "isotonic", "-f", "csv",
                                  "-o", "cal_isotonic.csv"], "cal_isotonic.csv"),
            ("calibrate_blocks", ["calibrate", s("default_history.csv"), "--method", "binned", "-f", "csv",
                                  "-o", "cal_binned.csv"], "cal_binned.csv"),
            ("term", ["score", book, "--horizons", "0.5,1,2,3,5,7,10", "--model", "both", "-f", "csv",
                      "-o", "term.csv"], "term.csv"),
            ("stress", ["stress", book, "--scenarios", scen, "-f", "csv", "-o", "stress.csv",
                        "--summary-output", "stress_summary.csv"], "stress.csv"),
            ("stress_summary", None, "stress_summary.csv"),
            ("stress_pd_calibration", ["stress", book, "--scenarios", scen, "--pd-calibration",
                                       s("calibration.yaml"), "-f", "csv", "-o", "stress_cal.csv",
                                       "--summary-output", "stress_cal_summary.csv"], "stress_cal.csv"),
            ("stress_summary_pd_calibration", None, "stress_cal_summary.csv"),
            ("stress", ["stress", book, "--equity-shocks", "0,-0.1,-0.3", "--equity-vol-multipliers",
                        "1,1.25,1.5,2", "-f", "csv", "-o", "grid.csv"], "grid.csv"),
            ("stress_sensitivities", ["stress", book, "--scenarios", scen, "--sensitivities", "-f",
                                      "csv", "-o", "stress_sens.csv"], "stress_sens.csv"),
            ("stress_reverse", ["stress", book, "--reverse-pd", "0.05", "-f", "csv", "-o",
                                "reverse.csv"], "reverse.csv"),
            ("stress_term", ["stress", book, "--scenarios", scen, "--horizons", "1,3,5,10", "--model",
                             "both", "-f", "csv", "-o", "stress_term.csv"], "stress_term.csv"),
        ]
        for method in ("iterative", "mle", "naive"):
            cases.append(("history", ["history"] + hist + ["-m", method, "-f", "csv", "-o",
                                                          f"history_{method}.csv", "--series",
                                                          f"series_{method}.csv"],
                          f"history_{method}.csv"))
            cases.append(("history_series", None, f"series_{method}.csv"))
        cases += [
            ("score", ["history"] + hist + ["--score", "-f", "csv", "-o", "history_score.csv"],
             "history_score.csv"),
            ("portfolio", ["portfolio", book, "--reporting-currency", "EUR", "--fx", s("demo_fx.csv"), "-f", "csv", "-o", "portfolio.csv", "--summary-output",
                           "portfolio_summary.csv", "--distribution-output", "distribution.csv"],
             "portfolio.csv"),
            ("portfolio_pd_calibration", ["portfolio", book, "--reporting-currency", "EUR", "--fx", s("demo_fx.csv"), "--pd-calibration", s("calibration.yaml"), "-f",
                                          "csv", "-o", "portfolio_calibrated.csv"], "portfolio_calibrated.csv"),
            ("portfolio_summary", None, "portfolio_summary.csv"),
            ("portfolio_distribution", None, "distribution.csv"),
            ("portfolio_monte_carlo", ["portfolio", book, "--reporting-currency", "EUR", "--fx", s("demo_fx.csv"), "--monte-carlo", "2000", "-f", "csv", "-o",
                                       "portfolio_mc.csv", "--distribution-output",
                                       "distribution_mc.csv"], "portfolio_mc.csv"),
            ("portfolio_distribution_monte_carlo", None, "distribution_mc.csv"),
        ]
        for w in (1, 2, 3, 4):
            cases.append((None, ["score", s(os.path.join("weekly", f"week{w}.yaml")), "--record",
                                 "--db", db, "-o", f"week{w}.txt"], None))
        cases += [
            ("runs", ["runs", "--db", db, "-f", "csv", "-o", "runs.csv"], "runs.csv"),
            ("movers", ["movers", "--db", db, "-f", "csv", "-o", "movers.csv"], "movers.csv"),
            ("movers", ["watchlist", "--db", db, "-f", "csv", "-o", "watchlist.csv"], "watchlist.csv"),
            ("attribute", ["attribute", "--db", db, "-f", "csv", "-o", "attribute.csv"], "attribute.csv"),
            ("track", ["track", "ZEP-26", "--db", db, "-f", "csv", "-o", "track.csv"], "track.csv"),
        ]
        cases.append(("validate", ["validate", s("outcomes.csv"), "-f", "csv", "-o", "validate.csv"],
                      "validate.csv"))
        cases.append(("validate_migration", ["validate", "--db", db, "--migration", "1,4", "-f", "csv", "-o",
                                             "migration.csv"], "migration.csv"))
        # Runs recorded with a calibration add its columns to track.
        for w in (1, 2):
            cases.append((None, ["score", s(os.path.join("weekly", f"week{w}.yaml")), "--record", "--db",
                                 "calibrated.sqlite", "--pd-calibration", s("calibration.yaml"), "-o",
                                 f"cal{w}.txt"], None))
        cases.append(("runs_calibrated", ["runs", "--db", "calibrated.sqlite", "-f", "csv", "-o", "runs_cal.csv"],
                      "runs_cal.csv"))
        cases.append(("track_calibrated", ["track", "ZEP-26", "--db", "calibrated.sqlite", "-f", "csv", "-o",
                                           "track_cal.csv"], "track_cal.csv"))
        for output, args, written in cases:
            if args is not None:
                run(args)
            if output is None:
                continue
            if output not in documented:
                failures.append(f"output '{output}' ({written}) has no table in docs/outputs.md "
                                f"(marker <!-- columns: {output} -->)")
                continue
            header = header_of(os.path.join(work, written))
            failures += compare(output, header, documented[output])
            covered.add(output)
            checked += 1
        for output in documented:
            if output not in covered:
                failures.append(f"output '{output}' is documented in docs/outputs.md but no command "
                                "of this test writes it (add the command here)")
    except (RuntimeError, OSError, StopIteration) as e:
        failures.append(f"could not produce the outputs: {e}")
    finally:
        shutil.rmtree(work, ignore_errors=True)

    if failures:
        for f in failures:
            print(f"doc_columns: FAIL: {f}", file=sys.stderr)
        return 1
    print(f"doc_columns: {checked} CSV headers agree with docs/outputs.md "
          f"({len(documented)} documented outputs)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
