#!/usr/bin/env python3
"""Writes an invented default history for the PD calibration (docs/calibration.md).

Obligors are invented (ids OY-00001 ...). Each obligor has a lasting distance-to-default level
drawn from a normal distribution (mean 3.4, sd 1.4) and a yearly move (sd 0.6); each year-end
as_of from 2019 to 2023 it is observed with that year's DD and defaults within the following year
with the true logistic probability 1 / (1 + exp(-(a + b DD))), a = -1.6, b = -0.75. A defaulted
obligor leaves the sample. Deterministic: the same seed writes the same bytes.

  python3 tools/gen_default_history.py [--obligors 1600] [--seed 20261203] [-o samples/default_history.csv]
  python3 tools/gen_default_history.py --obligors 200000 -o /tmp/big.csv   # about 1,000,000 rows
"""
import argparse
import math
import random
import sys

TRUE_INTERCEPT = -1.6
TRUE_SLOPE = -0.75
YEARS = ["2019-12-31", "2020-12-31", "2021-12-31", "2022-12-31", "2023-12-31"]


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--obligors", type=int, default=1600)
    ap.add_argument("--seed", type=int, default=20261203)
    ap.add_argument("-o", "--output", default="samples/default_history.csv")
    args = ap.parse_args()
    rng = random.Random(args.seed)
    rows = ["id,as_of,distance_to_default,defaulted"]
    defaults = 0
    for k in range(1, args.obligors + 1):
        level = rng.gauss(3.4, 1.4)
        for as_of in YEARS:
            dd = round(level + rng.gauss(0.0, 0.6), 6)
            pd = 1.0 / (1.0 + math.exp(-(TRUE_INTERCEPT + TRUE_SLOPE * dd)))
            defaulted = 1 if rng.random() < pd else 0
            rows.append(f"OY-{k:05d},{as_of},{dd:.6f},{defaulted}")
            defaults += defaulted
            if defaulted:
                break
    with open(args.output, "w", newline="\n") as f:
        f.write("\n".join(rows) + "\n")
    n = len(rows) - 1
    print(f"{args.output}: {n} obligor-years, {defaults} defaults ({100.0 * defaults / n:.2f}%)", file=sys.stderr)


if __name__ == "__main__":
    main()
