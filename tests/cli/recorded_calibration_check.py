"""score --record --pd-calibration, and what the monitoring commands make of it:

- runs lists each run's driving PD and calibration;
- movers and watchlist compare runs recorded with a calibrated driving PD on the calibrated
  one-year PD, which equals the logistic formula of the recorded DD (computed here with scipy);
- a run on the model PD against a calibrated one is compared on the model PD, with a note;
- an older (schema 2) store still opens read-only, untouched, and is upgraded by recording;
- validate --db --migration FROM,TO counts the grade migration as collections.Counter does over
  the two runs' grades (graded here from the formula), with the PSI of its definition;
- validate --db --defaults --pd-column pd_calibrated tests the recorded calibrated PD (AUC from
  scikit-learn on the same observations read from the store with Python's sqlite3);
- bad --migration inputs are refused naming the store and the run.

Usage: recorded_calibration_check.py FIRMCALL ROOT
"""
import collections
import csv
import io
import json
import math
import os
import shutil
import sqlite3
import subprocess
import sys
import re
import tempfile

from scipy.special import expit
from sklearn.metrics import roc_auc_score

# The master scale of config/firmcall.yaml (the first grade whose max_pd reaches the PD; common
# practice for a master scale).
SCALE = [("FC1", 0.0001), ("FC2", 0.00025), ("FC3", 0.0005), ("FC4", 0.001), ("FC5", 0.0025),
         ("FC6", 0.005), ("FC7", 0.01), ("FC8", 0.025), ("FC9", 0.1), ("FC10", 1.0)]
LABELS = [label for label, _ in SCALE]


def grade_of(pd):
    return next(label for label, top in SCALE if pd <= top)


def close(a, b, rel=1e-12):
    return abs(a - b) <= rel * max(abs(a), abs(b), 1e-300)


def main():
    exe, root = sys.argv[1], sys.argv[2]
    s = lambda *p: os.path.join(root, "samples", *p)
    cfg = os.path.join(root, "config", "firmcall.yaml")
    # The calibration's own numbers, read from its text (keys as docs/calibration.md gives them).
    text = open(s("calibration.yaml")).read()
    a = float(re.search(r"^  intercept: (\S+)$", text, re.M).group(1))
    b = float(re.search(r"^  slope: (\S+)$", text, re.M).group(1))
    cal = {"sample": {"data_sha256": re.search(r"data_sha256: ([0-9a-f]{64})", text).group(1)}}
    # The logistic calibration PD(DD) = 1 / (1 + exp(-(a + b DD))) (docs/calibration.md); expit from scipy.
    pd_of = lambda dd: float(expit(a + b * dd))

    def run(*args, code=0):
        p = subprocess.run([exe, "-q", "--config", cfg, *args], capture_output=True, text=True)
        assert p.returncode == code, (args, p.returncode, p.stdout, p.stderr)
        return p

    tmp = tempfile.mkdtemp()
    try:
        db = os.path.join(tmp, "cal.sqlite")
        for w in (1, 2, 3, 4):
            run("score", s("weekly", "week%d.yaml" % w), "--record", "--db", db, "--pd-calibration",
                s("calibration.yaml"), "-o", os.path.join(tmp, "out.csv"), "-f", "csv")
        con = sqlite3.connect(db)
        assert con.execute("SELECT max(version) FROM firmcall_schema").fetchone()[0] == 3
        runs = con.execute("SELECT driving_pd, calibration_method, calibration_sha256 FROM runs").fetchall()
        assert runs == [("calibrated", "logistic", cal["sample"]["data_sha256"])] * 4, runs
        con.close()

        listed = list(csv.DictReader(io.StringIO(run("runs", "--db", db, "-f", "csv").stdout)))
        assert [(r["driving_pd"], r["calibration_method"], r["calibration_sha256"]) for r in listed] == [
            ("calibrated", "logistic", cal["sample"]["data_sha256"])] * 4, listed

        # movers on the calibrated PD: the formula of the recorded DD, grades and alerts on it.
        rows = list(csv.DictReader(io.StringIO(run("movers", "--db", db, "-f", "csv").stdout)))
        assert rows and "pd_calibrated_now" in rows[0] and "pd_now" not in rows[0], rows[0].keys()
        checked = 0
        for r in rows:
            for side in ("before", "now"):
                if not r["dd_" + side]:
                    continue
                want = pd_of(float(r["dd_" + side]))
                got = float(r["pd_calibrated_" + side])
                assert close(got, want), (r["id"], side, got, want)
                assert r["grade_" + side] == grade_of(want), (r["id"], side, r["grade_" + side], want)
                checked += 1
            # pd_ceiling (settings: 5%) fires on the calibrated PD.
            if r["pd_calibrated_now"]:
                assert ("pd_ceiling" in r["alerts"]) == (float(r["pd_calibrated_now"]) > 0.05), r
        assert checked >= 20, checked
        table = run("watchlist", "--db", db).stdout
        assert "\nPD: calibrated one-year (method logistic, data sha256 %s...)\n" % cal["sample"][
            "data_sha256"][:12] in table, table
        js = json.loads(run("movers", "--db", db, "-f", "json").stdout)
        assert js["pd_basis"]["pd"] == "calibrated_one_year", js["pd_basis"]
        assert js["pd_basis"]["calibration_data_sha256"] == cal["sample"]["data_sha256"]

        # track: the calibrated PD of each run beside the model PD, the grade on the driving PD.
        track = list(csv.DictReader(io.StringIO(run("track", "ZEP-26", "--db", db, "-f", "csv").stdout)))
        assert len(track) == 4
        for t in track:
            want = pd_of(float(t["distance_to_default"]))
            assert close(float(t["pd_calibrated"]), want) and t["grade"] == grade_of(want), t
            assert t["driving_pd"] == "calibrated"

        # Task B: the grade migration of runs 1 and 4 against a Counter over the two runs' grades.
        pair = list(csv.DictReader(io.StringIO(run("movers", "--db", db, "--run", "4", "--against", "1",
                                                   "-f", "csv").stdout)))
        count = collections.Counter()
        from_n, to_n = collections.Counter(), collections.Counter()
        for r in pair:
            g_from = grade_of(pd_of(float(r["dd_before"]))) if r["dd_before"] else None
            g_to = grade_of(pd_of(float(r["dd_now"]))) if r["dd_now"] else None
            from_n[g_from] += g_from is not None
            to_n[g_to] += g_to is not None
            row = g_from or ("new" if r["change"] == "new" else "ungraded")
            col = g_to or ("gone" if r["change"] == "dropped" else "ungraded")
            count[(row, col)] += 1
        mig = json.loads(run("validate", "--db", db, "--migration", "1,4", "-f", "json").stdout)
        assert (mig["from_run"], mig["to_run"]) == (1, 4)
        got = {(c["from_grade"], c["to_grade"]): c["obligors"] for c in mig["migration"]}
        assert got == dict(count), (got, count)
        # PSI = sum over grades of (a - e) ln(a / e), shares of the later (a) and earlier (e) run;
        # grades empty in both left out, 0.5 added to every other grade's count when one is empty
        # (common practice; docs/validation.md).
        used = [g for g in LABELS if from_n[g] or to_n[g]]
        add = 0.5 if any(from_n[g] == 0 or to_n[g] == 0 for g in used) else 0.0
        at = sum(to_n[g] for g in used) + add * len(used)
        et = sum(from_n[g] for g in used) + add * len(used)
        psi = sum(((to_n[g] + add) / at - (from_n[g] + add) / et) *
                  math.log(((to_n[g] + add) / at) / ((from_n[g] + add) / et)) for g in used)
        assert close(mig["psi"], psi, 1e-12), (mig["psi"], psi)
        mcsv = list(csv.DictReader(io.StringIO(run("validate", "--db", db, "--migration", "1,4",
                                                   "-f", "csv").stdout)))
        assert mcsv[0]["statistic"] == "psi" and close(float(mcsv[0]["value"]), psi, 1e-12)

        # Bad --migration inputs: exit 2, the store and the run named.
        for arg, msg in (("1,9", "history store '%s': no run with id 9" % db),
                         ("2,2", "history store '%s': run 2 is named as both runs" % db),
                         ("1", "--migration: expected two runs FROM,TO")):
            p = run("validate", "--db", db, "--migration", arg, code=2)
            assert msg in p.stderr, (arg, p.stderr)
        p = run("validate", s("outcomes.csv"), "--db", db, "--migration", "1,2", code=2)
        assert "give no OUTCOMES file" in p.stderr, p.stderr

        # Outcomes from the store on the recorded calibrated PD (ZEP-26 defaults on 2026-12-15).
        defaults = os.path.join(tmp, "defaults.csv")
        open(defaults, "w").write("id,default_date\nZEP-26,2026-12-15\n")
        v = json.loads(run("validate", "--db", db, "--defaults", defaults, "--pd-column", "pd_calibrated",
                           "-f", "json").stdout)
        con = sqlite3.connect(db)
        obs = con.execute("SELECT obligor_id, distance_to_default FROM run_obligors WHERE status = 'ok' "
                          "AND obligor_id != ''").fetchall()
        con.close()
        y = [1 if oid == "ZEP-26" else 0 for oid, _ in obs]
        x = [pd_of(dd) for _, dd in obs]
        auc = roc_auc_score(y, x)
        assert v["pd_column"] == "pd_calibrated", v.get("pd_column")
        assert v["observations"] == len(obs) and close(v["auc"], auc, 1e-12), (v["auc"], auc)

        # A run on the model PD against a calibrated one: compared on the model PD, with a note.
        run("score", s("weekly", "week4.yaml"), "--record", "--db", db, "--as-of", "2026-12-04", "-o",
            os.path.join(tmp, "out.csv"))
        mixed = run("movers", "--db", db).stdout
        assert "PD: model (run 5 drives the model PD" not in mixed
        assert ("PD: model (run 4 drives the calibrated PD and run 5 the model PD; both are compared on "
                "the model PD)") in mixed, mixed
        mrows = list(csv.DictReader(io.StringIO(run("movers", "--db", db, "-f", "csv").stdout)))
        assert "pd_now" in mrows[0] and "pd_calibrated_now" not in mrows[0]
        mig = json.loads(run("validate", "--db", db, "--migration", "4,5", "-f", "json").stdout)
        assert "graded on its calibrated PD and run 5 on its model PD" in mig["note"], mig["note"]

        # An older store (schema 2) opens read-only untouched, and recording upgrades it.
        old = os.path.join(tmp, "old.sqlite")
        shutil.copy(os.path.join(root, "tests", "bad_inputs", "stores", "valid_store.db"), old)
        before = open(old, "rb").read()
        con = sqlite3.connect(old)
        assert con.execute("SELECT max(version) FROM firmcall_schema").fetchone()[0] == 2
        con.close()
        rows = list(csv.DictReader(io.StringIO(run("movers", "--db", old, "-f", "csv").stdout)))
        assert rows and "pd_now" in rows[0]
        run("track", "ALD-01", "--db", old)
        assert open(old, "rb").read() == before
        run("score", s("weekly", "week1.yaml"), "--record", "--db", old, "--pd-calibration",
            s("calibration.yaml"), "-o", os.path.join(tmp, "out.csv"))
        con = sqlite3.connect(old)
        assert con.execute("SELECT max(version) FROM firmcall_schema").fetchone()[0] == 3
        nulls = con.execute("SELECT count(*) FROM run_obligors WHERE run_id < 3 AND pd_calibrated IS NOT NULL")
        assert nulls.fetchone()[0] == 0
        assert con.execute("SELECT count(*) FROM run_obligors WHERE run_id = 3 AND pd_calibrated IS NOT NULL"
                           ).fetchone()[0] > 0
        con.close()
    finally:
        shutil.rmtree(tmp)
    print("recorded calibration: ok")


if __name__ == "__main__":
    main()
