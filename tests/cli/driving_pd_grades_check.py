"""score --grades --pd-calibration: with the calibrated PD driving, each grade is the master-scale
grade of the obligor's calibrated one-year PD, so equal calibrated PDs get equal grades.

Usage: driving_pd_grades_check.py FIRMCALL ROOT
"""
import csv
import io
import math
import os
import subprocess
import sys

# The master scale of config/firmcall.yaml (grades: the first grade whose max_pd reaches the PD;
# common practice for a master scale).
SCALE = [("FC1", 0.0001), ("FC2", 0.00025), ("FC3", 0.0005), ("FC4", 0.001), ("FC5", 0.0025),
         ("FC6", 0.005), ("FC7", 0.01), ("FC8", 0.025), ("FC9", 0.1), ("FC10", 1.0)]


def grade_of(pd):
    return next(label for label, top in SCALE if pd <= top)


def main():
    exe, root = sys.argv[1], sys.argv[2]
    s = lambda name: os.path.join(root, "samples", name)
    cfg = os.path.join(root, "config", "firmcall.yaml")
    base = [exe, "-q", "--config", cfg, "score", s("demo_book.yaml"), "--grades", "--pd-calibration",
            s("calibration.yaml"), "-f", "csv"]
    rows = list(csv.DictReader(io.StringIO(subprocess.run(base, capture_output=True, text=True).stdout)))
    assert len(rows) > 10, rows
    seen = {}
    for r in rows:
        if not r["pd_calibrated"]:
            continue
        pd = float(r["pd_calibrated"])
        assert math.isfinite(pd)
        assert r["grade"] == grade_of(pd), (r["id"], r["grade"], pd)
        assert seen.setdefault(r["pd_calibrated"], r["grade"]) == r["grade"]
    # With the model PD driving, the grades are those of a run without a calibration.
    model = subprocess.run(base + ["--driving-pd", "model"], capture_output=True, text=True).stdout
    plain = subprocess.run(base[:6] + ["--grades", "-f", "csv"], capture_output=True, text=True).stdout
    assert [r["grade"] for r in csv.DictReader(io.StringIO(model))] == \
        [r["grade"] for r in csv.DictReader(io.StringIO(plain))]
    # A calibrated driving PD without a calibration is a command-line error (exit code 2).
    bad = subprocess.run(base[:6] + ["--driving-pd", "calibrated"], capture_output=True, text=True)
    assert bad.returncode == 2 and "--pd-calibration" in bad.stderr, bad.stderr
    print("driving_pd_grades: ok")
    return 0


if __name__ == "__main__":
    sys.exit(main())
