#!/usr/bin/env python3
"""Every number firmcall writes in CSV and JSON is the shortest decimal that reads back to its
double, in the layout of Python's repr() (the reference), without repr's ".0" on integers.

Usage: number_format_check.py FIRMCALL SOURCE_DIR

Runs the commands that write CSV and JSON on the sample files and on 2,000 invented obligors
(random magnitudes over several decades, fixed seed), reads every cell and every JSON number as text and checks
that repr(float(text)) gives the same text back: a 17-digit form such as 0.40000000000000002 (the
double 0.4) fails, and so does any text that does not read back to a double exactly as written.
"""
import csv
import json
import os
import random
import re
import shutil
import subprocess
import sys
import tempfile

NUMBER = re.compile(r"^-?(0|[1-9][0-9]*)(\.[0-9]+)?([eE][-+]?[0-9]+)?$")


def shortest(text):
    """Python's repr of the double `text` denotes, without ".0" on integral values."""
    r = repr(float(text))
    return r[:-2] if r.endswith(".0") else r


class Checker:
    def __init__(self):
        self.numbers = 0
        self.failures = []

    def number(self, where, text):
        self.numbers += 1
        if shortest(text) != text:
            self.failures.append(f"{where}: {text} is not the shortest form ({shortest(text)})")

    def csv_file(self, path):
        with open(path, newline="", encoding="utf-8") as f:
            rows = list(csv.reader(f))
        for i, row in enumerate(rows[1:], start=2):
            for j, cell in enumerate(row):
                if NUMBER.match(cell):
                    self.number(f"{os.path.basename(path)}:{i}: column {rows[0][j]}", cell)

    def json_file(self, path):
        name = os.path.basename(path)

        def as_number(text):
            self.number(name, text)
            return text

        with open(path, encoding="utf-8") as f:
            json.load(f, parse_float=as_number, parse_int=as_number)


def write_generated_book(path, rows=2000, seed=11):
    """Invented obligors: amounts from 1 to 1e9, volatilities 5%..150%, rates -1%..8%, horizons
    0.25..10 years; every 97th row has a negative equity volatility (an invalid row)."""
    rng = random.Random(seed)
    with open(path, "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["id", "name", "market_cap", "equity_vol", "short_term_debt", "long_term_debt", "rate",
                    "horizon", "lgd"])
        for i in range(rows):
            scale = 10 ** rng.uniform(0, 9)
            vol = rng.uniform(0.05, 1.5) * (-1 if i % 97 == 0 else 1)
            w.writerow([f"G{i:05d}", f"Invented Firm {i}", scale * rng.uniform(0.2, 3), vol,
                        scale * rng.uniform(0, 1.5), scale * rng.uniform(0, 2), rng.uniform(-0.01, 0.08),
                        rng.choice([0.25, 0.5, 1, 2, 3, 5, 10]), rng.uniform(0.1, 0.9)])


def main():
    if len(sys.argv) != 3:
        print(__doc__, file=sys.stderr)
        return 2
    exe = os.path.realpath(sys.argv[1])
    samples = os.path.join(os.path.realpath(sys.argv[2]), "samples")
    work = tempfile.mkdtemp(prefix="firmcall_numbers_")
    check = Checker()
    files = 0
    try:
        def s(name):
            return os.path.join(samples, name)

        def run(args):
            r = subprocess.run([exe, "-q"] + args, cwd=work, capture_output=True, text=True)
            if r.returncode not in (0, 1):  # 1: some obligors could not be scored
                raise RuntimeError(f"firmcall {' '.join(args)}: exit code {r.returncode}\n{r.stderr}")

        generated = os.path.join(work, "generated.csv")
        write_generated_book(generated)
        books = [s("demo_book.yaml"), s("bad_rows.csv"), generated]
        cal = s("calibration.yaml")
        scen = s("stress_scenarios.yaml")
        hist = [s("history_book.yaml"), s("history_prices.csv"), "-b", s("history_balance_sheets.csv")]
        for k, book in enumerate(books):
            for fmt in ("csv", "json"):
                cases = [
                    ["score", book, "--sensitivities", "--grades", "--pd-calibration", cal],
                    ["score", book, "--horizons", "0.5,1,3,10", "--model", "both"],
                    ["stress", book, "--equity-shocks", "0,-0.3,-0.7", "--equity-vol-multipliers", "1,1.5",
                     "--pd-calibration", cal],
                    ["stress", book, "--reverse-pd", "0.05"],
                    ["portfolio", book, "--pd-calibration", cal] +
                    (["--reporting-currency", "EUR", "--fx", s("demo_fx.csv")] if k == 0 else []),
                ]
                for n, args in enumerate(cases):
                    out = f"out_{k}_{n}.{fmt}"
                    run(args + ["-f", fmt, "-o", out])
                    files += 1
                    (check.csv_file if fmt == "csv" else check.json_file)(os.path.join(work, out))
        for fmt in ("csv", "json"):
            extra = [
                ["stress", s("demo_book.yaml"), "--scenarios", scen, "--sensitivities"],
                ["calibrate", s("default_history.csv")],
                ["calibrate", s("default_history.csv"), "--method", "isotonic"],
                ["history"] + hist + ["-m", "mle"],
                ["validate", s("outcomes.csv")],
            ]
            for n, args in enumerate(extra):
                out = f"extra_{n}.{fmt}"
                run(args + ["-f", fmt, "-o", out])
                files += 1
                (check.csv_file if fmt == "csv" else check.json_file)(os.path.join(work, out))
        db = os.path.join(work, "weekly.sqlite")
        for w in (1, 2, 3):
            run(["score", s(os.path.join("weekly", f"week{w}.yaml")), "--record", "--db", db, "-o", f"w{w}.txt"])
        for fmt in ("csv", "json"):
            for n, args in enumerate([["runs"], ["movers"], ["attribute"], ["track", "ZEP-26"]]):
                out = f"store_{n}.{fmt}"
                run(args + ["--db", db, "-f", fmt, "-o", out])
                files += 1
                (check.csv_file if fmt == "csv" else check.json_file)(os.path.join(work, out))
    except (RuntimeError, OSError) as e:
        check.failures.append(f"could not produce the outputs: {e}")
    finally:
        shutil.rmtree(work, ignore_errors=True)
    for f in check.failures[:20]:
        print(f"number_format: FAIL: {f}", file=sys.stderr)
    if check.failures:
        print(f"number_format: {len(check.failures)} failures", file=sys.stderr)
        return 1
    print(f"number_format: {check.numbers} numbers in {files} CSV and JSON files are the shortest "
          "round-trip form (Python repr)")
    return 0 if check.numbers > 10000 else 1


if __name__ == "__main__":
    sys.exit(main())
