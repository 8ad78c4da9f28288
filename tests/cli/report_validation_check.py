#!/usr/bin/env python3
"""The report's validation section and calibrated PDs against independent computations.

    /usr/bin/python3 tests/cli/report_validation_check.py FIRMCALL SOURCE_DIR

- CAP curve: the polyline's points (written in the chart's own units) against numpy: obligors
  sorted by PD from the highest down, cumulative share of obligors and of defaulters at the end of
  each group of equal PDs (Engelmann, Hayden and Tasche 2003), to 1e-12.
- Observed default rate per grade: counts and mean PD against numpy on the master scale of
  config/firmcall.yaml; the Jeffreys 95% interval against scipy.stats.beta.ppf(0.025 / 0.975,
  d + 1/2, n - d + 1/2) (Brown, Cai and DasGupta 2001), to 1e-10.
- Grade migration against an earlier sample: counts of (earlier grade, grade now) over the ids in
  both, counted here with collections.Counter.
- --pd-calibration: the page's calibrated PD of each obligor equals score --pd-calibration's
  (shortest round-trip text, so exactly) and the logistic function of the calibration file at the
  obligor's DD (scipy.special.expit) to 1e-12; the grades follow the calibrated one-year PD; the
  header names the driving PD, the calibration's method, sample and dates, and the SHA-256 of its
  data (hashlib of samples/default_history.csv).
- The stress section with --pd-calibration: each name's PD under each scenario is the logistic
  function of the calibration file (scipy.special.expit) at the stressed DD that
  `stress --pd-calibration` prints for it, shown to 4 decimals in percent; the scenario table's
  mean stressed PD is the numpy mean of those PDs.
- A bad calibration file: exit code 2, the file named, no page written.
Exit code 0 when every check passes, 1 otherwise.
"""
import collections
import csv
import hashlib
import html
import io
import os
import re
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET

import numpy as np
from scipy import special, stats

# The master scale of config/firmcall.yaml (a PD belongs to the first grade whose max_pd reaches it;
# common practice for a master scale).
SCALE = [("FC1", 0.0001), ("FC2", 0.00025), ("FC3", 0.0005), ("FC4", 0.001), ("FC5", 0.0025),
         ("FC6", 0.005), ("FC7", 0.01), ("FC8", 0.025), ("FC9", 0.1), ("FC10", 1.0)]

failures = []


def check(ok, what):
    if not ok:
        failures.append(what)


def grade_of(pd):
    return next(label for label, top in SCALE if pd <= top)


def read_outcomes(path):
    with open(path, newline="") as f:
        rows = list(csv.DictReader(f))
    return rows


def cap_reference(pd, defaulted):
    """CAP points (x, y) after each group of equal PDs, from the highest PD down, with (0, 0) first."""
    order = np.argsort(-pd, kind="stable")
    p, y = pd[order], defaulted[order]
    ends = np.flatnonzero(np.append(p[1:] != p[:-1], True))  # last index of each tie group
    cum_defaults = np.cumsum(y)
    xs = np.concatenate([[0.0], (ends + 1) / len(p)])
    ys = np.concatenate([[0.0], cum_defaults[ends] / cum_defaults[-1]])
    return xs, ys


def check_xml(page, what):
    """The page, less its HTML5 doctype, parses as XML (Python's expat parser)."""
    try:
        ET.fromstring(page[len("<!DOCTYPE html>\n"):])
    except ET.ParseError as e:
        failures.append(f"{what}: not well-formed XML: {e}")


def check_cap(page, pd, defaulted):
    m = re.search(r'<polyline class="fc-s1 fc-line" vector-effect="non-scaling-stroke" '
                  r'transform="matrix\(([^)]*)\)" points="([^"]*)"><title>CAP curve', page)
    check(m is not None, "no CAP polyline in the page")
    if m is None:
        return
    pts = np.array([[float(v) for v in p.split(",")] for p in m.group(2).split()])
    xs, ys = cap_reference(pd, defaulted)
    check(len(pts) >= min(len(xs), 300), f"CAP polyline has only {len(pts)} points")
    check(pts[0][0] == 0.0 and pts[0][1] == 0.0, "CAP does not start at (0, 0)")
    check(abs(pts[-1][0] - 1.0) <= 1e-12 and abs(pts[-1][1] - 1.0) <= 1e-12, "CAP does not end at (1, 1)")
    for x, y in pts:
        k = int(np.argmin(np.abs(xs - x)))
        check(abs(xs[k] - x) <= 1e-12, f"CAP x {x!r} is not a group end of the sorted sample")
        check(abs(ys[k] - y) <= 1e-12, f"CAP at x {x!r}: page {y!r}, numpy {ys[k]!r}")
    check(np.all(np.diff(pts[:, 0]) > 0), "CAP x not increasing")
    # The transform puts x = 0 and x = 1 at the plot's edges: a 560-unit chart, 78 left and 24 right.
    a, _, _, d, e, f = (float(v) for v in m.group(1).split())
    check(abs(e - 78.0) < 1e-9 and abs(a + e - (560.0 - 24.0)) < 1e-9, f"CAP transform x {a} {e}")
    check(abs(f - (420.0 - 56.0)) < 1e-9 and abs(d + f - 40.0) < 1e-9, f"CAP transform y {d} {f}")


def check_grade_intervals(page, pd, defaulted):
    marks = re.findall(r'<g class="fc-interval-mark" data-category="([^"]*)" data-predicted="([^"]*)" '
                       r'data-observed="([^"]*)" data-lower="([^"]*)" data-upper="([^"]*)">', page)
    grades = np.array([grade_of(p) for p in pd])
    expected = [label for label, _ in SCALE if np.any(grades == label)]
    check([m[0] for m in marks] == expected, f"grades in the chart {[m[0] for m in marks]}, expected {expected}")
    for label, mean_pd, observed, lower, upper in marks:
        sel = grades == label
        n, d = int(sel.sum()), int(defaulted[sel].sum())
        check(abs(float(mean_pd) - pd[sel].mean()) <= 1e-12 * max(1.0, pd[sel].mean()), f"{label}: mean PD")
        check(float(observed) == d / n, f"{label}: default rate {observed} != {d}/{n}")
        lo = 0.0 if d == 0 else stats.beta.ppf(0.025, d + 0.5, n - d + 0.5)
        hi = 1.0 if d == n else stats.beta.ppf(0.975, d + 0.5, n - d + 0.5)
        check(abs(float(lower) - lo) <= 1e-10, f"{label}: Jeffreys lower {lower}, scipy {lo!r}")
        check(abs(float(upper) - hi) <= 1e-10, f"{label}: Jeffreys upper {upper}, scipy {hi!r}")
    check("Jeffreys interval" in page, "the chart's caption does not name the Jeffreys interval")


def check_migration(page, now_rows, earlier_rows):
    before = {r["id"]: grade_of(float(r["pd"])) for r in earlier_rows}
    pairs = collections.Counter((before[r["id"]], grade_of(float(r["pd"]))) for r in now_rows if r["id"] in before)
    start = page.find('<table class="fc-table fc-migration">')
    check(start >= 0, "no migration table")
    if start < 0:
        return
    table = page[start:page.find("</table>", start)]
    heads = [html.unescape(h) for h in re.findall(r"<th[^>]*>([^<]*)</th>", table)]
    columns = heads[1:-1]
    seen = 0
    for row in re.findall(r"<tr>(.*?)</tr>", table, flags=re.S):
        cells = [html.unescape(c) for c in re.findall(r"<td[^>]*>([^<]*)</td>", row)]
        for col, cell in zip(columns, cells[1:-1]):
            want = pairs.get((cells[0], col), 0)
            check(int(cell.replace(",", "")) == want, f"migration {cells[0]} -> {col}: page {cell}, counted {want}")
            seen += want
    check(seen == sum(pairs.values()) and seen > 0, f"migration covers {seen} of {sum(pairs.values())} pairs")


def name_cells(page):
    """(id -> (grade, calibrated PD cell attributes, its text)) over the name tables."""
    out = {}
    for row in re.findall(r"<tr>(<td>.*?)</tr>", page):
        m = re.search(r'<td class="fc-num" data-value="([^"]*)" data-lower="([^"]*)" data-upper="([^"]*)">'
                      r'([^<]*)</td>', row)
        if m is None:
            continue
        cells = re.findall(r"<td[^>]*>([^<]*)</td>", row)
        out[html.unescape(cells[0])] = (cells[3], m.groups())
    return out


def table_pd(pd):
    """The score table's PD text: percent with four decimals, scientific below 0.001% (docs/report.md)."""
    p = 100.0 * pd
    if p == 0.0:
        return "0%"
    return f"{p:.4f}%" if abs(p) >= 1e-3 else f"{p:.2e}%"


def check_calibrated(exe, root, tmp, cfg):
    cal = os.path.join(root, "samples", "calibration.yaml")
    page_path = os.path.join(tmp, "cal.html")
    run = subprocess.run([exe, "-q", "--config", cfg, "report", "samples/demo_book.yaml", "--pd-calibration", cal,
                          "--portfolio", "--reporting-currency", "EUR", "--fx", "samples/demo_fx.csv", "--top",
                          "1000", "--html", page_path], cwd=root, capture_output=True,
                         text=True)
    check(run.returncode in (0, 1), f"report --pd-calibration exit {run.returncode}: {run.stderr}")
    with open(page_path, encoding="utf-8") as f:
        page = f.read()
    score = subprocess.run([exe, "-q", "--config", cfg, "score", "samples/demo_book.yaml", "--pd-calibration", cal,
                            "-f", "csv"], cwd=root, capture_output=True, text=True)
    rows = list(csv.DictReader(io.StringIO(score.stdout)))
    with open(cal) as f:
        text = f.read()
    a = float(re.search(r"intercept: (\S+)", text).group(1))
    b = float(re.search(r"slope: (\S+)", text).group(1))
    check_xml(page, "page with --pd-calibration")
    cells = name_cells(page)
    compared = 0
    for r in rows:
        if not r["pd_calibrated"]:
            continue
        check(r["id"] in cells, f"{r['id']}: no calibrated PD in the page")
        if r["id"] not in cells:
            continue
        grade, (value, lower, upper, shown) = cells[r["id"]]
        check(value == r["pd_calibrated"], f"{r['id']}: page {value}, score {r['pd_calibrated']}")
        check(lower == r["pd_calibrated_lower"] and upper == r["pd_calibrated_upper"], f"{r['id']}: interval")
        check(shown == table_pd(float(value)), f"{r['id']}: shown {shown}")
        want = special.expit(a + b * float(r["distance_to_default"]))
        check(abs(float(value) - want) <= 1e-12 * want, f"{r['id']}: calibrated PD {value}, expit {want!r}")
        check(grade == grade_of(float(value)), f"{r['id']}: grade {grade} on calibrated PD {value}")
        compared += 1
    check(compared > 10, f"only {compared} calibrated PDs compared")
    with open(os.path.join(root, "samples", "default_history.csv"), "rb") as f:
        sha = hashlib.sha256(f.read()).hexdigest()
    header = page[page.find('<p class="fc-driving">'):page.find("</p>", page.find('<p class="fc-driving">'))]
    for needed in ["Driving PD: calibrated one-year PD", cal, "logistic", "7,621 obligor-years", "186 defaults",
                   "2019-12-31 to 2023-12-31", sha, "over one year", "each obligor's own horizon"]:
        check(needed in header, f"header lacks {needed!r}")
    check("Basel IRB capital on the calibrated one-year PDs" in page, "IRB capital not on the calibrated PD")
    # --driving-pd model: the header says so and the grades are those of the model PD.
    run = subprocess.run([exe, "-q", "--config", cfg, "report", "samples/demo_book.yaml", "--pd-calibration", cal,
                          "--driving-pd", "model", "--html", page_path], cwd=root, capture_output=True, text=True)
    with open(page_path, encoding="utf-8") as f:
        model_page = f.read()
    check("Driving PD: model PD (Merton)" in model_page, "header does not name the model PD as driving")
    # Without --pd-calibration nothing of it is in the page.
    plain = os.path.join(tmp, "plain.html")
    subprocess.run([exe, "-q", "--config", cfg, "report", "samples/demo_book.yaml", "--html", plain], cwd=root)
    with open(plain, encoding="utf-8") as f:
        check("fc-driving" not in f.read(), "a page without a calibration states a driving PD")


def stress_table_rows(page):
    """Rows of the 'names hit hardest' table: (id, [cells])."""
    i = page.find('fc-stress-names')
    body = page[i:page.find('</table>', i)]
    rows = []
    for tr in re.findall(r'<tr>(.*?)</tr>', body, re.S):
        cells = [html.unescape(re.sub(r'<[^>]+>', '', c)).strip() for c in re.findall(r'<t[dh][^>]*>(.*?)</t[dh]>', tr, re.S)]
        rows.append(cells)
    return rows


def check_stress_calibrated(exe, root, tmp, cfg):
    with open(os.path.join(root, "samples", "calibration.yaml")) as f:
        text = f.read()
    a = float(re.search(r"intercept: (\S+)", text).group(1))
    b = float(re.search(r"slope: (\S+)", text).group(1))
    page_path = os.path.join(tmp, "stress.html")
    run = subprocess.run([exe, "-q", "--config", cfg, "report", "samples/demo_book.yaml", "-s",
                          "samples/stress_scenarios.yaml", "--pd-calibration", "samples/calibration.yaml",
                          "--top", "40", "--html", page_path], cwd=root, capture_output=True, text=True)
    check(run.returncode in (0, 1), f"report -s --pd-calibration exit {run.returncode}: {run.stderr}")
    stress = subprocess.run([exe, "-q", "--config", cfg, "stress", "samples/demo_book.yaml", "-s",
                             "samples/stress_scenarios.yaml", "--format", "csv"], cwd=root,
                            capture_output=True, text=True)
    rows = list(csv.DictReader(io.StringIO(stress.stdout)))
    with open(page_path, encoding="utf-8") as f:
        page = f.read()
    table = stress_table_rows(page)
    head = table[0]
    check(head[2] == "calibrated one-year PD as it stands", f"stress names table heading {head[2]!r}")
    scenarios = [h[3:] for h in head[3:-1]]
    dd = {(r["scenario"], r["id"]): float(r["distance_to_default_stressed"]) for r in rows
          if r["status"] == "ok"}
    checked = 0
    for cells in table[1:]:
        for k, sc in enumerate(scenarios):
            key = (sc, cells[0])
            if key not in dd:
                continue
            want = f"{100.0 * special.expit(a + b * dd[key]):.4f}%"
            check(cells[3 + k] == want, f"stress {key}: page {cells[3 + k]} against expit {want}")
            checked += 1
    check(checked >= 30, f"stress names checked: {checked}")
    means = {}
    for sc in scenarios:
        v = [special.expit(a + b * dd[(sc, i)]) for (s2, i) in dd if s2 == sc]
        means[sc] = f"{100.0 * np.mean(v):.4f}%"
    i = page.find('fc-stress-summary')
    body = page[i:page.find('</table>', i)]
    for tr in re.findall(r'<tr>(.*?)</tr>', body, re.S)[1:]:
        cells = [html.unescape(re.sub(r'<[^>]+>', '', c)).strip() for c in re.findall(r'<t[dh][^>]*>(.*?)</t[dh]>', tr, re.S)]
        check(cells[3] == means.get(cells[0]), f"scenario {cells[0]}: mean stressed PD {cells[3]} against {means.get(cells[0])}")


def check_bad_calibration(exe, root, tmp):
    bad = os.path.join(tmp, "bad_calibration.yaml")
    with open(bad, "w") as f:
        f.write("firmcall_calibration: 1\nmethod: logistic\npd_horizon_years: 1\n")
    page = os.path.join(tmp, "never.html")
    run = subprocess.run([exe, "report", "samples/demo_book.yaml", "--pd-calibration", bad, "--html", page],
                         cwd=root, capture_output=True, text=True)
    check(run.returncode == 2, f"bad calibration: exit {run.returncode}")
    check(bad in run.stderr, f"bad calibration: message does not name the file: {run.stderr}")
    check(not os.path.exists(page), "bad calibration: a page was written")
    check(os.listdir(tmp).count("never.html") == 0, "bad calibration: a file was left behind")


def main():
    exe, root = sys.argv[1], sys.argv[2]
    cfg = os.path.join(root, "config", "firmcall.yaml")
    now_rows = read_outcomes(os.path.join(root, "samples", "outcomes.csv"))
    pd = np.array([float(r["pd"]) for r in now_rows])
    defaulted = np.array([int(r["defaulted"]) for r in now_rows])
    with tempfile.TemporaryDirectory() as tmp:
        # An earlier sample: the same ids a year before, every third PD doubled and one in seven left out.
        earlier_rows = []
        for k, r in enumerate(now_rows):
            if k % 7 == 3:
                continue
            p = float(r["pd"]) * (2.0 if k % 3 == 0 else 1.0)
            earlier_rows.append({"id": r["id"], "pd": repr(min(p, 1.0)), "defaulted": r["defaulted"]})
        earlier = os.path.join(tmp, "earlier.csv")
        with open(earlier, "w", newline="") as f:
            w = csv.DictWriter(f, fieldnames=["id", "pd", "defaulted"])
            w.writeheader()
            w.writerows(earlier_rows)
        page_path = os.path.join(tmp, "validation.html")
        run = subprocess.run([exe, "-q", "--config", cfg, "report", "samples/demo_book.yaml", "--validate",
                              "samples/outcomes.csv", "--validate-against", earlier, "--html", page_path],
                             cwd=root, capture_output=True, text=True)
        check(run.returncode in (0, 1), f"report --validate exit {run.returncode}: {run.stderr}")
        with open(page_path, encoding="utf-8") as f:
            page = f.read()
        check_xml(page, "page with --validate-against")
        check_cap(page, pd, defaulted)
        check_grade_intervals(page, pd, defaulted)
        check_migration(page, now_rows, earlier_rows)
        check_calibrated(exe, root, tmp, cfg)
        check_stress_calibrated(exe, root, tmp, cfg)
        check_bad_calibration(exe, root, tmp)
    for f in failures:
        print("FAIL:", f)
    print(f"{0 if failures else 1} passed, {1 if failures else 0} failed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
