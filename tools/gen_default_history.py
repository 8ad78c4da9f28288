#!/usr/bin/env python3
"""Writes an invented default history for the PD calibration (docs/calibration.md).

Obligors are invented (ids OY-00001 ...). Each obligor has a lasting distance-to-default level
drawn from a normal distribution (mean 3.4, sd 1.4) and a yearly move (sd 0.6); each year-end
as_of from 2019 to 2023 it is observed with that year's DD and defaults within the following year
with the true logistic probability 1 / (1 + exp(-(a + b DD))), a = -1.6, b = -0.75. A defaulted
obligor leaves the sample. Deterministic: the same seed writes the same bytes.

With --book-fields the history gives no DD column but the book columns of a score book, from
which `firmcall calibrate` computes each DD as `score` does (written to
samples/default_history_book.csv unless -o says otherwise). Each obligor also has a lasting asset
volatility (uniform 0.18 to 0.40, moving by a factor exp(N(0, 0.05)) a year) and short- and
long-term debt (moving by exp(N(0, 0.05)) a year); each year-end has an invented risk-free rate.
The asset value is the one whose Merton DD over one year (drift = rate, default point = short-term
+ 0.5 x long-term debt) is the drawn DD; market_cap and equity_vol are the Black-Scholes equity
value and volatility of that firm (Merton 1974), rounded to 7 significant digits. Defaults are drawn
from the same logistic link of the drawn DD.

  python3 tools/gen_default_history.py [--obligors 1600] [--seed 20261203] [-o samples/default_history.csv]
  python3 tools/gen_default_history.py --obligors 200000 -o /tmp/big.csv   # about 1,000,000 rows
  python3 tools/gen_default_history.py --book-fields --obligors 400 [-o samples/default_history_book.csv]
"""
import argparse
import math
import random
import sys

TRUE_INTERCEPT = -1.6
TRUE_SLOPE = -0.75
YEARS = ["2019-12-31", "2020-12-31", "2021-12-31", "2022-12-31", "2023-12-31"]
RATES = [0.018, 0.004, 0.006, 0.035, 0.042]  # invented year-end risk-free rates, continuously compounded


def norm_cdf(x):
    return 0.5 * math.erfc(-x / math.sqrt(2.0))


def book_fields(dd, asset_vol, short_term, long_term, rate):
    """market_cap and equity_vol of the firm whose one-year Merton DD (drift = rate) is dd."""
    default_point = short_term + 0.5 * long_term
    log_v_dp = dd * asset_vol - (rate - 0.5 * asset_vol * asset_vol)
    asset_value = default_point * math.exp(log_v_dp)
    d2 = dd
    d1 = d2 + asset_vol
    equity = asset_value * norm_cdf(d1) - default_point * math.exp(-rate) * norm_cdf(d2)
    equity_vol = asset_vol * asset_value * norm_cdf(d1) / equity
    return equity, equity_vol


def book_history(rng, obligors):
    rows = ["id,as_of,market_cap,equity_vol,short_term_debt,long_term_debt,rate,defaulted"]
    defaults = 0
    for k in range(1, obligors + 1):
        level = rng.gauss(3.4, 1.4)
        vol_level = rng.uniform(0.18, 0.40)
        short_term = rng.uniform(200.0, 2000.0)
        long_term = short_term * rng.uniform(0.5, 2.0)
        for as_of, rate in zip(YEARS, RATES):
            dd = level + rng.gauss(0.0, 0.6)
            asset_vol = vol_level * math.exp(rng.gauss(0.0, 0.05))
            short_term *= math.exp(rng.gauss(0.0, 0.05))
            long_term *= math.exp(rng.gauss(0.0, 0.05))
            equity, equity_vol = book_fields(dd, asset_vol, round(short_term, 2), round(long_term, 2), rate)
            pd = 1.0 / (1.0 + math.exp(-(TRUE_INTERCEPT + TRUE_SLOPE * dd)))
            defaulted = 1 if rng.random() < pd else 0
            rows.append(f"OB-{k:05d},{as_of},{equity:.7g},{equity_vol:.7g},{short_term:.2f},{long_term:.2f},"
                        f"{rate},{defaulted}")
            defaults += defaulted
            if defaulted:
                break
    return rows, defaults


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--obligors", type=int, default=1600)
    ap.add_argument("--seed", type=int, default=20261203)
    ap.add_argument("--book-fields", action="store_true",
                    help="book columns instead of a distance_to_default column")
    ap.add_argument("-o", "--output")
    args = ap.parse_args()
    if args.output is None:
        args.output = "samples/default_history_book.csv" if args.book_fields else "samples/default_history.csv"
    rng = random.Random(args.seed)
    if args.book_fields:
        rows, defaults = book_history(rng, args.obligors)
        write(args.output, rows, defaults)
        return
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
    write(args.output, rows, defaults)


def write(path, rows, defaults):
    with open(path, "w", newline="\n") as f:
        f.write("\n".join(rows) + "\n")
    n = len(rows) - 1
    print(f"{path}: {n} obligor-years, {defaults} defaults ({100.0 * defaults / n:.2f}%)", file=sys.stderr)


if __name__ == "__main__":
    main()
