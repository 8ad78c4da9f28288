#!/usr/bin/env python3
"""Writes an obligor CSV (as made by the shared generator) as a firmcall YAML book, so that the
benchmark can time the YAML reader on the same obligors. Standard library only.

    csv_to_yaml.py IN.csv OUT.yaml
"""
import csv
import sys

NUMERIC = {"market_cap", "equity_vol", "short_term_debt", "long_term_debt", "rate", "horizon", "ead", "lgd"}


def main():
    src, dst = sys.argv[1], sys.argv[2]
    with open(src, newline="") as f, open(dst, "w") as out:
        out.write("book: generated benchmark book\nobligors:\n")
        for row in csv.DictReader(f):
            cells = []
            for key, value in row.items():
                if key in NUMERIC:
                    cells.append(f"{key}: {value}")
                else:
                    cells.append(f'{key}: "{value}"')
            out.write("  - {" + ", ".join(cells) + "}\n")


if __name__ == "__main__":
    main()
