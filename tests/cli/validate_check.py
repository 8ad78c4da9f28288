#!/usr/bin/env python3
"""`firmcall validate --format json` against independent references (docs/validation.md).

Usage: validate_check.py FIRMCALL SOURCE_DIR

References, each beside its check:
  AUC               sklearn.metrics.roc_auc_score (ties count one half), to 1e-12
  AUC se, DeLong    numpy, the DeLong et al. (1988) structural components pair by pair
  KS, Brier,        numpy, from their definitions
  Spiegelhalter
  binomial p        scipy.stats.binom.sf(d - 1, n, mean PD), to 1e-10
  Jeffreys p        scipy.stats.beta.cdf(mean PD, d + 1/2, n - d + 1/2), to 1e-10
  Hosmer-Lemeshow   scipy.stats.chi2.sf with G degrees of freedom on a small worked example
  PSI               a worked example by hand (in the comment)
  --curves          ROC points vs sklearn.metrics.roc_curve (drop_intermediate=False), to 1e-12;
                    CAP population fraction vs numpy (share of PDs >= threshold)
  segments          per segment: AUC vs sklearn.metrics.roc_auc_score on the segment's rows
                    (1e-12), its DeLong interval pair by pair (numpy), binomial and Jeffreys p
                    (scipy, 1e-10); a segment without defaults has no AUC and says why
  periods           per calendar year of as_of: counts and mean PD (numpy), binomial p vs
                    scipy.stats.binom.sf(d - 1, n, mean PD) (1e-10); the date range (datetime)
Also bad input on the command line: exit code 2, file, line and field named, no output file.
Needs /usr/bin/python3 with numpy, scipy and scikit-learn (python3-sklearn python3-scipy).
"""
import datetime
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
from scipy import stats
from sklearn.metrics import roc_auc_score, roc_curve

# The default master scale of config/firmcall.yaml.
SCALE = [("FC1", 0.0001), ("FC2", 0.00025), ("FC3", 0.0005), ("FC4", 0.001), ("FC5", 0.0025),
         ("FC6", 0.005), ("FC7", 0.01), ("FC8", 0.025), ("FC9", 0.1), ("FC10", 1.0)]

failures = []
worst = {}


def close(name, got, want, tol):
    diff = abs(got - want)
    worst[name] = max(worst.get(name, 0.0), diff)
    if not diff <= tol:
        failures.append(f"{name}: got {got!r}, reference {want!r}, difference {diff:.3g} > {tol}")


def run(firmcall, args, expect=0):
    p = subprocess.run([firmcall, "-q"] + args, capture_output=True, text=True)
    if p.returncode != expect:
        failures.append(f"{' '.join(args)}: exit {p.returncode}, expected {expect}: {p.stderr.strip()}")
    return p


def write_csv(path, header, rows):
    with open(path, "w") as f:
        f.write(",".join(header) + "\n")
        for r in rows:
            f.write(",".join(str(x) for x in r) + "\n")


def grade_of(pd):
    for k, (_, top) in enumerate(SCALE):
        if pd <= top:
            return k
    return len(SCALE) - 1


def delong_pairwise(x, y):
    """Structural components of DeLong, DeLong & Clarke-Pearson (1988): x defaulters' PDs, y others'."""
    psi = (x[:, None] > y[None, :]) + 0.5 * (x[:, None] == y[None, :])
    v10 = psi.mean(axis=1)
    v01 = psi.mean(axis=0)
    return v10, v01


def check_generated(firmcall, work):
    rng = np.random.default_rng(20260417)
    n = 4000
    score = rng.normal(size=n)
    pd = np.round(1.0 / (1.0 + np.exp(4.2 - 0.9 * score)), 4)  # four decimals: many ties
    pd_alt = np.round(np.clip(pd * np.exp(rng.normal(scale=0.8, size=n)), 0.0, 1.0), 4)
    y = (rng.random(n) < 1.0 / (1.0 + np.exp(4.0 - 1.0 * score))).astype(int)
    path = os.path.join(work, "generated.csv")
    write_csv(path, ["id", "pd", "pd_alt", "defaulted"],
              [(f"G{k:05d}", repr(float(pd[k])), repr(float(pd_alt[k])), y[k]) for k in range(n)])
    p = run(firmcall, ["validate", path, "--format", "json", "--compare-column", "pd_alt"])
    out = json.loads(p.stdout)
    if out["pd_column"] != "pd" or out["compare_column"] != "pd_alt":
        failures.append("JSON does not name the PD columns")
    if out["observations"] != n or out["defaults"] != int(y.sum()):
        failures.append(f"counts: {out['observations']}, {out['defaults']}")
    close("auc vs sklearn roc_auc_score", out["auc"], roc_auc_score(y, pd), 1e-12)
    close("compare_auc vs sklearn roc_auc_score", out["compare_auc"], roc_auc_score(y, pd_alt), 1e-12)
    close("accuracy_ratio = 2 AUC - 1 (Engelmann et al. 2003)", out["accuracy_ratio"],
          2.0 * roc_auc_score(y, pd) - 1.0, 1e-12)
    # DeLong variance from the components pair by pair (numpy), and the two-column test.
    x1, y1 = pd[y == 1], pd[y == 0]
    x2, y2 = pd_alt[y == 1], pd_alt[y == 0]
    v10a, v01a = delong_pairwise(x1, y1)
    v10b, v01b = delong_pairwise(x2, y2)
    m, k = len(x1), len(y1)
    var_a = np.var(v10a, ddof=1) / m + np.var(v01a, ddof=1) / k
    close("auc_se vs DeLong (1988) pair by pair", out["auc_se"], float(np.sqrt(var_a)), 1e-12)
    close("auc_lower vs AUC - 1.96 se (scipy.stats.norm.ppf)", out["auc_lower"],
          v10a.mean() - stats.norm.ppf(0.975) * np.sqrt(var_a), 1e-12)
    s10 = np.cov(v10a, v10b, ddof=1)
    s01 = np.cov(v01a, v01b, ddof=1)
    var_d = (s10[0, 0] + s10[1, 1] - 2 * s10[0, 1]) / m + (s01[0, 0] + s01[1, 1] - 2 * s01[0, 1]) / k
    close("auc_difference_se vs DeLong (1988) pair by pair", out["auc_difference_se"], float(np.sqrt(var_d)), 1e-12)
    z = (v10a.mean() - v10b.mean()) / np.sqrt(var_d)
    close("auc_difference_p vs 2 scipy.stats.norm.sf(|z|)", out["auc_difference_p"], 2 * stats.norm.sf(abs(z)), 1e-10)
    # KS: max over thresholds of |F_defaulters - F_others| (definition).
    t = np.unique(pd)
    fd = np.searchsorted(np.sort(x1), t, side="right") / m
    fo = np.searchsorted(np.sort(y1), t, side="right") / k
    close("ks vs definition (numpy)", out["ks"], float(np.max(np.abs(fd - fo))), 1e-12)
    close("ks vs scipy.stats.ks_2samp", out["ks"], stats.ks_2samp(x1, y1).statistic, 1e-12)
    close("brier vs definition (numpy)", out["brier"], float(np.mean((pd - y) ** 2)), 1e-12)
    sp = np.sum((y - pd) * (1 - 2 * pd)) / np.sqrt(np.sum((1 - 2 * pd) ** 2 * pd * (1 - pd)))
    close("spiegelhalter_z vs definition (numpy)", out["spiegelhalter_z"], float(sp), 1e-9)
    # Per grade (graded on the default scale from the PD): binomial and Jeffreys (scipy).
    grades = np.array([grade_of(v) for v in pd])
    hl = 0.0
    df = 0
    listed = {g["grade"]: g for g in out["grades"]}
    for gi, (label, _) in enumerate(SCALE):
        sel = grades == gi
        ng = int(sel.sum())
        if ng == 0:
            if label in listed:
                failures.append(f"grade {label} listed without obligors")
            continue
        dg = int(y[sel].sum())
        pg = float(pd[sel].mean())
        g = listed[label]
        if g["observations"] != ng or g["defaults"] != dg:
            failures.append(f"grade {label}: counts {g['observations']}, {g['defaults']} vs {ng}, {dg}")
        close("mean_pd per grade (numpy)", g["mean_pd"], pg, 1e-15)
        close("binomial_p vs scipy.stats.binom.sf", g["binomial_p"], stats.binom.sf(dg - 1, ng, pg), 1e-10)
        close("jeffreys_p vs scipy.stats.beta.cdf", g["jeffreys_p"], stats.beta.cdf(pg, dg + 0.5, ng - dg + 0.5), 1e-10)
        if 0 < pg < 1:
            hl += (dg - ng * pg) ** 2 / (ng * pg * (1 - pg))
            df += 1
    close("hosmer_lemeshow vs definition (numpy)", out["hosmer_lemeshow"], hl, 1e-9)
    close("hosmer_lemeshow_p vs scipy.stats.chi2.sf", out["hosmer_lemeshow_p"], stats.chi2.sf(hl, df), 1e-10)
    check_curves(firmcall, work, path, pd, y)
    nd = int(y.sum())
    close("binomial_p overall vs scipy.stats.binom.sf", out["binomial_p"], stats.binom.sf(nd - 1, n, pd.mean()), 1e-10)


def read_curves(path):
    with open(path) as f:
        header = f.readline().strip().split(",")
        rows = [line.rstrip("\n").split(",") for line in f]
    return header, rows


def check_curves(firmcall, work, path, pd, y):
    target = os.path.join(work, "curves.csv")
    run(firmcall, ["validate", path, "--format", "json", "-o", os.path.join(work, "v.json"), "--curves", target])
    header, rows = read_curves(target)
    if header != ["pd_threshold", "false_positive_rate", "true_positive_rate", "population_fraction",
                  "defaults_fraction"]:
        failures.append(f"curves header {header}")
        return
    fpr, tpr, thr = roc_curve(y, pd, drop_intermediate=False)  # sklearn: first point above every PD
    if len(rows) != len(fpr):
        failures.append(f"curves: {len(rows)} points, sklearn roc_curve {len(fpr)}")
        return
    if rows[0][0] != "":
        failures.append(f"curves: first threshold {rows[0][0]!r} (expected empty, above every PD)")
    got = np.array([[float(c) for c in r[1:]] for r in rows])
    got_thr = np.array([float(r[0]) for r in rows[1:]])
    close("curve thresholds vs sklearn roc_curve", float(np.max(np.abs(got_thr - thr[1:]))), 0.0, 0.0)
    close("curve false_positive_rate vs sklearn roc_curve", float(np.max(np.abs(got[:, 0] - fpr))), 0.0, 1e-12)
    close("curve true_positive_rate vs sklearn roc_curve", float(np.max(np.abs(got[:, 1] - tpr))), 0.0, 1e-12)
    share = np.array([0.0] + [float(np.mean(pd >= t)) for t in thr[1:]])  # CAP x by definition (numpy)
    close("curve population_fraction vs numpy share of PD >= threshold", float(np.max(np.abs(got[:, 2] - share))),
          0.0, 1e-12)
    close("curve defaults_fraction = true_positive_rate (CAP y, definition)",
          float(np.max(np.abs(got[:, 3] - tpr))), 0.0, 1e-12)


def check_worked_examples(firmcall, work):
    # Hosmer-Lemeshow on three grades of the file's own labels (worked example):
    #   A: 10 obligors at PD 0.1, 2 defaults:  (2 - 1)^2 / (10 * 0.1 * 0.9)  = 1.1111
    #   B: 10 obligors at PD 0.2, 1 default:   (1 - 2)^2 / (10 * 0.2 * 0.8)  = 0.625
    #   C: 5 obligors at PD 0.4, 4 defaults:   (4 - 2)^2 / (5 * 0.4 * 0.6)   = 3.3333
    #   HL = 5.0694, 3 degrees of freedom (out-of-sample test of fixed PDs: one per grade).
    rows = []
    for label, count, pdv, defaults in [("A", 10, 0.1, 2), ("B", 10, 0.2, 1), ("C", 5, 0.4, 4)]:
        for k in range(count):
            rows.append((f"{label}{k}", pdv, 1 if k < defaults else 0, label))
    path = os.path.join(work, "hl.csv")
    write_csv(path, ["id", "pd", "defaulted", "grade"], rows)
    out = json.loads(run(firmcall, ["validate", path, "--format", "json"]).stdout)
    hl = 1.0 / 0.9 + 1.0 / 1.6 + 4.0 / 1.2
    close("hosmer_lemeshow worked example (by hand)", out["hosmer_lemeshow"], hl, 1e-12)
    close("hosmer_lemeshow_p worked example vs scipy.stats.chi2.sf(x, 3)", out["hosmer_lemeshow_p"],
          stats.chi2.sf(hl, 3), 1e-12)
    if out["hosmer_lemeshow_df"] != 3 or [g["grade"] for g in out["grades"]] != ["A", "B", "C"]:
        failures.append(f"worked example grades: {out['hosmer_lemeshow_df']}, {out['grades']}")
    # PSI with --against: this sample's grades (A 10, B 10, C 5) against an earlier one with
    # A 5, B 10, C 10 (ids A0-A4, B0-B9, C0-C9; C5-C9 new there):
    #   a = (0.4, 0.4, 0.2), e = (0.2, 0.4, 0.4): PSI = 0.2 ln 2 + 0 - 0.2 ln 0.5 = 0.4 ln 2 = 0.277259 (by hand).
    earlier = []
    for label, count in [("A", 5), ("B", 10), ("C", 10)]:
        for k in range(count):
            earlier.append((f"{label}{k}", 0.1, 1 if k == 0 else 0, label))
    epath = os.path.join(work, "earlier.csv")
    write_csv(epath, ["id", "pd", "defaulted", "grade"], earlier)
    out = json.loads(run(firmcall, ["validate", path, "--against", epath, "--format", "json"]).stdout)
    close("psi worked example (by hand: 0.4 ln 2)", out["psi"], 0.4 * np.log(2.0), 1e-12)
    if out["matched"] != 20:  # A0-A4, B0-B9, C0-C4 (by hand)
        failures.append(f"matched {out['matched']}, expected 20")
    mig = {(c["from"], c["to"]): c["count"] for c in out["migration"]}
    if mig != {("A", "A"): 5, ("B", "B"): 10, ("C", "C"): 5}:
        failures.append(f"migration {mig}")


def check_segments_and_periods(firmcall, work):
    rng = np.random.default_rng(20261203)
    n = 3000
    score = rng.normal(size=n)
    pd = np.round(1.0 / (1.0 + np.exp(4.0 - 0.9 * score)), 4)  # four decimals: ties
    y = (rng.random(n) < 1.0 / (1.0 + np.exp(3.8 - 1.0 * score))).astype(int)
    seg = rng.choice(["corporate", "sme", "real estate"], size=n)
    # A fourth segment without defaults: its AUC does not exist.
    quiet = rng.random(n) < 0.05
    seg[quiet] = "public"
    y[quiet] = 0
    start = datetime.date(2022, 11, 30)
    days = rng.integers(0, 3 * 365 + 60, size=n)
    dates = [start + datetime.timedelta(days=int(d)) for d in days]
    path = os.path.join(work, "segments.csv")
    write_csv(path, ["id", "pd", "defaulted", "as_of", "segment"],
              [(f"S{k:05d}", repr(float(pd[k])), y[k], dates[k].isoformat(), f'"{seg[k]}"') for k in range(n)])
    out = json.loads(run(firmcall, ["validate", path, "--format", "json"]).stdout)
    if out.get("as_of_first") != min(dates).isoformat() or out.get("as_of_last") != max(dates).isoformat():
        failures.append(f"date range {out.get('as_of_first')} to {out.get('as_of_last')}, "
                        f"expected {min(dates)} to {max(dates)} (datetime)")
    listed = {s["segment"]: s for s in out.get("segments", [])}
    if sorted(listed) != sorted(set(seg)):
        failures.append(f"segments listed {sorted(listed)}, in the file {sorted(set(seg))}")
    for label in sorted(set(seg)):
        sel = seg == label
        got = listed.get(label)
        if got is None:
            continue
        ng, dg, pg = int(sel.sum()), int(y[sel].sum()), float(pd[sel].mean())
        if got["observations"] != ng or got["defaults"] != dg:
            failures.append(f"segment {label}: counts {got['observations']}, {got['defaults']} vs {ng}, {dg}")
        close("segment mean_pd (numpy)", got["mean_pd"], pg, 1e-15)
        close("segment binomial_p vs scipy.stats.binom.sf", got["binomial_p"], stats.binom.sf(dg - 1, ng, pg), 1e-10)
        close("segment jeffreys_p vs scipy.stats.beta.cdf", got["jeffreys_p"],
              stats.beta.cdf(pg, dg + 0.5, ng - dg + 0.5), 1e-10)
        if dg == 0:
            if got["auc"] is not None or got["accuracy_ratio"] is not None or "no defaults" not in got.get("auc_note", ""):
                failures.append(f"segment {label} without defaults: auc {got['auc']}, note {got.get('auc_note')!r}")
            continue
        auc = roc_auc_score(y[sel], pd[sel])
        close("segment auc vs sklearn roc_auc_score on the subset", got["auc"], auc, 1e-12)
        close("segment accuracy_ratio = 2 AUC - 1 (Engelmann et al. 2003)", got["accuracy_ratio"], 2 * auc - 1, 1e-12)
        v10, v01 = delong_pairwise(pd[sel][y[sel] == 1], pd[sel][y[sel] == 0])
        se = np.sqrt(np.var(v10, ddof=1) / len(v10) + np.var(v01, ddof=1) / len(v01))
        close("segment auc_lower vs DeLong (1988) pair by pair", got["auc_lower"],
              max(0.0, auc - stats.norm.ppf(0.975) * se), 1e-12)
        close("segment auc_upper vs DeLong (1988) pair by pair", got["auc_upper"],
              min(1.0, auc + stats.norm.ppf(0.975) * se), 1e-12)
    years = np.array([d.year for d in dates])
    periods = {p["period"]: p for p in out.get("periods", [])}
    if sorted(periods) != [str(v) for v in sorted(set(years))]:
        failures.append(f"periods listed {sorted(periods)}, years in the file {sorted(set(years))}")
    for year in sorted(set(years)):
        sel = years == year
        got = periods.get(str(year))
        if got is None:
            continue
        ng, dg, pg = int(sel.sum()), int(y[sel].sum()), float(pd[sel].mean())
        if got["observations"] != ng or got["defaults"] != dg:
            failures.append(f"period {year}: counts {got['observations']}, {got['defaults']} vs {ng}, {dg}")
        close("period mean_pd (numpy)", got["mean_pd"], pg, 1e-15)
        close("period default_rate (numpy)", got["default_rate"], dg / ng, 1e-15)
        close("period binomial_p vs scipy.stats.binom.sf(d - 1, n, p)", got["binomial_p"],
              stats.binom.sf(dg - 1, ng, pg), 1e-10)
    # The CSV names the segment and the period of each row; the table prints no NaN.
    csv_out = run(firmcall, ["validate", path, "--format", "csv"]).stdout.splitlines()
    if csv_out[0] != "pd_column,segment,period,grade,statistic,value":
        failures.append(f"CSV header with segments and dates: {csv_out[0]!r}")
    if not any(line.startswith('pd,real estate,,all,auc,') for line in csv_out):
        failures.append("CSV has no AUC row for segment 'real estate'")
    if not any(line.startswith(f"pd,,{years.min()},all,binomial_p,") for line in csv_out):
        failures.append(f"CSV has no binomial_p row for period {years.min()}")
    table = run(firmcall, ["validate", path]).stdout
    if "nan" in table.lower() or "Segment 'public'" not in table or "no defaults in the segment" not in table:
        failures.append("table: segment without defaults not explained, or NaN printed")


def check_many_segments(firmcall, work):
    # Twelve segments (more than the reader compares one by one) and runs of repeated dates: the
    # segments in the order they first appear, each counted (by hand in Python).
    rows, order, counts, dates = [], [], {}, []
    for k in range(240):
        label = f"seg{(k * 7) % 12:02d}"
        if label not in counts:
            order.append(label)
        counts[label] = counts.get(label, 0) + 1
        date = datetime.date(2020 + (k // 50), 1 + (k // 10) % 12, 28).isoformat()
        dates.append(date)
        rows.append((f"M{k}", 0.01 + 0.001 * (k % 17), 1 if k % 9 == 0 else 0, date, label))
    path = os.path.join(work, "many_segments.csv")
    write_csv(path, ["id", "pd", "defaulted", "as_of", "segment"], rows)
    out = json.loads(run(firmcall, ["validate", path, "--format", "json"]).stdout)
    got = [(s["segment"], s["observations"]) for s in out.get("segments", [])]
    if got != [(label, counts[label]) for label in order]:
        failures.append(f"many segments: {got}")
    years = sorted({d[:4] for d in dates})
    if [p["period"] for p in out.get("periods", [])] != years or (out.get("as_of_first"), out.get("as_of_last")) != (
            min(dates), max(dates)):
        failures.append(f"many segments: periods {out.get('periods')}, range {out.get('as_of_first')}")


def check_bad_input(firmcall, work):
    cases = [
        ("no_defaults.csv", "id,pd,defaulted\nA,0.1,0\nB,0.2,0\n", "no_defaults.csv: field 'defaulted': no defaults"),
        ("all_defaults.csv", "id,pd,defaulted\nA,0.1,1\nB,0.2,1\n", "all_defaults.csv: field 'defaulted': every row"),
        ("pd_range.csv", "id,pd,defaulted\nA,0.1,1\nB,12,0\n", "pd_range.csv:3: field 'pd': expected a probability"),
        ("pd_nan.csv", "id,pd,defaulted\nA,nan,1\nB,0.2,0\n", "pd_nan.csv:2: field 'pd'"),
        ("flag.csv", "id,pd,defaulted\nA,0.1,1\nB,0.2,2\n", "flag.csv:3: field 'defaulted': expected 0 or 1, got '2'"),
        ("missing.csv", "id,probability,defaulted\nA,0.1,1\n", "missing.csv:1: header: required column 'pd' is missing"),
        ("bad_date.csv", "id,pd,defaulted,as_of\nA,0.1,1,2025-01-31\nB,0.2,0,2025-02-29\n",
         "bad_date.csv:3: field 'as_of': expected a calendar date YYYY-MM-DD, got '2025-02-29'"),
        ("slash_date.csv", "id,pd,defaulted,as_of\nA,0.1,1,2025/01/31\nB,0.2,0,2025-02-28\n",
         "slash_date.csv:2: field 'as_of': expected a calendar date YYYY-MM-DD, got '2025/01/31'"),
        ("empty_date.csv", "id,pd,defaulted,as_of\nA,0.1,1,2025-01-31\nB,0.2,0,\n",
         "empty_date.csv:3: field 'as_of': expected a calendar date YYYY-MM-DD, got ''"),
        ("empty_segment.csv", "id,pd,defaulted,segment\nA,0.1,1,sme\nB,0.2,0,\n",
         "empty_segment.csv:3: field 'segment': missing"),
    ]
    for name, text, message in cases:
        path = os.path.join(work, name)
        with open(path, "w") as f:
            f.write(text)
        target = os.path.join(work, name + ".json")
        p = run(firmcall, ["validate", path, "--format", "json", "-o", target], expect=2)
        if message not in p.stderr:
            failures.append(f"{name}: message {p.stderr.strip()!r} lacks {message!r}")
        if os.path.exists(target):
            failures.append(f"{name}: an output file was left behind")


def main():
    if len(sys.argv) != 3:
        print(__doc__, file=sys.stderr)
        return 2
    firmcall = sys.argv[1]
    with tempfile.TemporaryDirectory(prefix="firmcall_validate_") as work:
        check_generated(firmcall, work)
        check_worked_examples(firmcall, work)
        check_segments_and_periods(firmcall, work)
        check_many_segments(firmcall, work)
        check_bad_input(firmcall, work)
    for name, diff in sorted(worst.items()):
        print(f"validate_check: {name}: max abs difference {diff:.3g}")
    for f in failures:
        print(f"validate_check: FAIL: {f}", file=sys.stderr)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
