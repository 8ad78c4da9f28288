#!/usr/bin/env python3
"""Writes an invented outcomes file for `firmcall validate` (docs/validation.md).

Each row is an invented obligor with the PD given at the start of a one-year period and whether it
defaulted within the year. PDs are log-normal around 1% (ln PD ~ N(ln 0.008, 1.0), held to
[0.0003, 0.35]); defaults are drawn from a "true" PD that is the given PD times a lognormal factor
(so the PDs rank well but not perfectly), giving a default rate of about 1.5%. `pd_alt` is a
noisier second PD on the same rows (for --compare-column). Deterministic for a given seed; plain
Python (no numpy), so any python3 runs it.

Usage: gen_outcomes.py [--rows N] [--seed S] [--grades] [--as-of DATE] [--prefix P] [-o FILE]
"""
import argparse
import math
import random
import sys

# The default master scale of config/firmcall.yaml (upper PD of each grade).
SCALE = [("FC1", 0.0001), ("FC2", 0.00025), ("FC3", 0.0005), ("FC4", 0.001), ("FC5", 0.0025),
         ("FC6", 0.005), ("FC7", 0.01), ("FC8", 0.025), ("FC9", 0.1), ("FC10", 1.0)]
SEGMENTS = ["corporate", "sme", "real_estate"]


def grade_of(pd):
    for label, top in SCALE:
        if pd <= top:
            return label
    return SCALE[-1][0]


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=3000)
    ap.add_argument("--seed", type=int, default=20260101)
    ap.add_argument("--grades", action="store_true", help="write a grade column (default scale)")
    ap.add_argument("--as-of", default="2025-12-31")
    ap.add_argument("--prefix", default="OBL", help="id prefix")
    ap.add_argument("-o", "--output", default="-")
    a = ap.parse_args()
    rng = random.Random(a.seed)
    out = sys.stdout if a.output == "-" else open(a.output, "w", newline="")
    cols = ["id", "pd", "pd_alt", "defaulted"] + (["grade"] if a.grades else []) + ["as_of", "segment"]
    out.write(",".join(cols) + "\n")
    for k in range(a.rows):
        pd = min(0.35, max(0.0003, math.exp(rng.gauss(math.log(0.008), 1.0))))
        pd = float(f"{pd:.6f}")  # four to six digits, as a rating system prints them: ties occur
        true_pd = min(0.9, pd * math.exp(rng.gauss(-0.1, 0.45)))
        defaulted = 1 if rng.random() < true_pd else 0
        pd_alt = min(0.5, max(0.0003, pd * math.exp(rng.gauss(0.0, 0.9))))
        row = [f"{a.prefix}-{k + 1:06d}", repr(pd), f"{pd_alt:.6f}", str(defaulted)]
        if a.grades:
            row.append(grade_of(pd))
        row += [a.as_of, SEGMENTS[rng.randrange(len(SEGMENTS))]]
        out.write(",".join(row) + "\n")
    if out is not sys.stdout:
        out.close()


if __name__ == "__main__":
    main()
