#!/usr/bin/env python3
"""Checks the report's tear sheets, run migration, lead sentence, amounts, tooltips, generation
time and palette with an outside parser (the expat parser of Python's standard library) against
the CSV outputs of the other commands and counts made here.

    python3 tests/cli/report_parts_check.py FIRMCALL SOURCE_DIR

References: the tear sheet's figures (data-value, shortest round-trip form) equal the CSV cells of
score --sensitivities, score --horizons, stress and track for the same obligor, text for text;
expected loss is PD x LGD x EAD computed here in Python floats (same operations, same order);
the migration counts are counted here from two score CSV runs graded on the default master scale
(config/firmcall.yaml); the generation time is SOURCE_DATE_EPOCH as Python's datetime writes it in
UTC; the palette is Okabe and Ito (2008), "Color Universal Design" (from memory). Exit code 0 when
every check passes, 1 otherwise (CTest test report_parts_against_csv).
"""
import collections
import csv
import datetime
import io
import math
import os
import re
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET

DOCTYPE = "<!DOCTYPE html>\n"
# The default master scale (config/firmcall.yaml, grades): label and upper PD bound (one year).
SCALE = [("FC1", 0.0001), ("FC2", 0.00025), ("FC3", 0.0005), ("FC4", 0.001), ("FC5", 0.0025),
         ("FC6", 0.005), ("FC7", 0.01), ("FC8", 0.025), ("FC9", 0.1), ("FC10", 1.0)]
# Okabe and Ito (2008): blue, orange, vermillion, sky blue, bluish green, reddish purple, yellow.
OKABE_ITO = {"#0072b2", "#e69f00", "#d55e00", "#56b4e9", "#009e73", "#cc79a7", "#f0e442"}
HORIZONS = "0.5,1,2,3,5,7,10"

failures = []


def check(ok, what):
    if not ok:
        failures.append(what)
    return ok


def grade_of(pd_one_year):
    return next(label for label, top in SCALE if pd_one_year <= top)


def table_pd(pd):
    """The score table's PD text (docs/report.md, "Numbers for people")."""
    p = 100.0 * pd
    if p == 0.0:
        return "0%"
    return f"{p:.4f}%" if abs(p) >= 1e-3 else f"{p:.2e}%"


def run(exe, root, args, env=None, expect=(0,)):
    r = subprocess.run([exe] + args, cwd=root, capture_output=True, text=True, env=env)
    if r.returncode not in expect:
        raise SystemExit(f"firmcall {' '.join(args)}: exit code {r.returncode}\n{r.stderr}")
    return r


def csv_rows(text):
    return list(csv.DictReader(io.StringIO(text)))


def parse_page(path):
    with open(path, encoding="utf-8") as f:
        text = f.read()
    return text, ET.fromstring(text[len(DOCTYPE):])


def text_of(element):
    return "".join(element.itertext())


def by_class(root, tag, cls):
    return [e for e in root.iter(tag) if cls in (e.get("class") or "").split()]


def sheet_of(root, obligor):
    for s in root.iter("section"):
        if s.get("data-obligor") == obligor:
            return s
    return None


def fields(element):
    """data-field -> data-value ('' when the page gives no value) of every cell under element."""
    return {td.get("data-field"): td.get("data-value", "") for td in element.iter("td") if td.get("data-field")}


def table_rows(section, cls):
    tables = by_class(section, "table", cls)
    if not check(len(tables) == 1, f"expected one table {cls}, found {len(tables)}"):
        return []
    return [fields(tr) for tr in tables[0].iter("tr") if tr.find("td") is not None]


def check_sheet(root, obligor, score, sens, term, stress, track, book):
    s = sheet_of(root, obligor)
    if not check(s is not None, f"no tear sheet of {obligor}"):
        return
    row = next(r for r in score if r["id"] == obligor)
    # Inputs and results: score --sensitivities --format csv, same column names.
    got = {}
    for cls in ("fc-sheet-inputs", "fc-sheet-results"):
        for r in table_rows(s, cls):
            got.update(r)
    for col in ("equity_value", "default_point", "horizon", "asset_value", "asset_vol", "leverage",
                "distance_to_default", "pd", "pd_one_year", "pd_risk_neutral", "spread_bp"):
        check(got.get(col) == row[col], f"{obligor} tear sheet {col}: {got.get(col)!r}, score CSV {row[col]!r}")
    b = next(r for r in book if r["id"] == obligor)
    check(got.get("equity_vol") == repr(float(b["equity_vol"])), f"{obligor} equity_vol against the book")
    check(got.get("lgd") == repr(float(b["lgd"])), f"{obligor} lgd against the book")
    el = float(row["pd"]) * float(b["lgd"]) * float(b["ead"])
    check(got.get("expected_loss") == repr(el), f"{obligor} expected loss {got.get('expected_loss')!r}, "
                                                f"PD x LGD x EAD {el!r}")
    # Sensitivities: the twelve columns of score --sensitivities.
    srow = next(r for r in sens if r["id"] == obligor)
    cells = {}
    for r in table_rows(s, "fc-sheet-sensitivities"):
        cells.update(r)
    names = [c for c in srow if c.startswith(("dd_per_", "pd_per_", "spread_bp_per_"))]
    check(len(names) == 12 and len(cells) == 12, f"{obligor}: {len(cells)} sensitivities, expected 12")
    for c in names:
        check(cells.get(c) == srow[c], f"{obligor} sensitivity {c}: {cells.get(c)!r}, CSV {srow[c]!r}")
    # Term structure: score --horizons, one row per horizon.
    trows = [r for r in term if r["id"] == obligor]
    page = table_rows(s, "fc-sheet-term")
    check(len(page) == len(trows) == 7, f"{obligor}: {len(page)} term rows, CSV {len(trows)}")
    for p, c in zip(page, trows):
        for col in ("horizon", "pd", "pd_annualised", "pd_forward", "distance_to_default", "spread_bp"):
            check(p.get(col) == c[col], f"{obligor} term {c['horizon']} {col}: {p.get(col)!r}, CSV {c[col]!r}")
    # Stress: the stress command's rows of this obligor, one per scenario in file order.
    strows = [r for r in stress if r["id"] == obligor]
    page = table_rows(s, "fc-sheet-stress")
    check(len(page) == len(strows) == 3, f"{obligor}: {len(page)} stress rows, CSV {len(strows)}")
    scenarios = [text_of(td) for td in s.iter("td") if td.get("data-field") == "scenario"]
    check(scenarios == [r["scenario"] for r in strows], f"{obligor} stress scenarios {scenarios}")
    for p, c in zip(page, strows):
        for col in ("distance_to_default_stressed", "distance_to_default_change", "pd_stressed", "pd_change",
                    "spread_bp_stressed", "asset_value_stressed"):
            check(p.get(col) == c[col], f"{obligor} stress {c['scenario']} {col}: {p.get(col)!r}, CSV {c[col]!r}")
    # History: track ID --db --format csv.
    hist = [tr for tr in by_class(s, "table", "fc-sheet-history")[0].iter("tr") if tr.find("td") is not None] \
        if by_class(s, "table", "fc-sheet-history") else []
    check(len(hist) == len(track) == 4, f"{obligor}: {len(hist)} history rows, track {len(track)}")
    for tr, c in zip(hist, track):
        f = fields(tr)
        text = {td.get("data-field"): text_of(td) for td in tr.iter("td") if td.get("data-field")}
        check(text.get("as_of") == c["as_of"] and text.get("run_id") == c["run_id"],
              f"{obligor} history run {text.get('run_id')} as of {text.get('as_of')}, track {c['run_id']}")
        for col in ("distance_to_default", "pd", "spread_bp"):
            check(f.get(col) == c[col], f"{obligor} history run {c['run_id']} {col}: {f.get(col)!r}, track {c[col]!r}")
        check(text.get("grade_recorded") == c["grade_recorded"], f"{obligor} history grade")
    # The DD history chart: a dot per recorded run, its tooltip in the table's rounding of track's figures.
    titles = [text_of(t) for t in s.iter("title") if text_of(t).startswith("run ")]
    want = [f"run {c['run_id']}, as of {c['as_of']}: DD {float(c['distance_to_default']):.3f}, "
            f"PD {table_pd(float(c['pd']))}" for c in track]
    check(titles == want, f"{obligor} history chart points {titles}, track {want}")
    # The line in the chart's own units: days since the first as-of date (Python's date arithmetic)
    # and DD exactly as track writes it.
    lines = [p for p in s.iter("polyline") if "fc-sheet-dd" in (p.get("class") or "").split()]
    if check(len(lines) == 1, f"{obligor}: {len(lines)} DD history lines"):
        first = datetime.date.fromisoformat(track[0]["as_of"])
        want = " ".join(f"{(datetime.date.fromisoformat(c['as_of']) - first).days},{c['distance_to_default']}"
                        for c in track)
        check(lines[0].get("points") == want, f"{obligor} history line {lines[0].get('points')!r}, expected {want!r}")
    lead = text_of(s.find("p"))
    check("Driving PD: the model PD (Merton)" in lead and "Amounts in EUR" in lead,
          f"{obligor} tear sheet lead names the driving PD and the currency: {lead!r}")


def check_migration(root, week3, week4):
    """The movers section's migration: week 3 (rows) against week 4 (columns), each graded on its
    one-year model PD, counted here."""
    tables = by_class(root, "table", "fc-run-migration")
    if not check(len(tables) == 1, f"expected one run migration table, found {len(tables)}"):
        return
    page = collections.Counter()
    for td in tables[0].iter("td"):
        if td.get("data-from") is not None:
            page[(td.get("data-from"), td.get("data-to"))] = int(text_of(td).replace(",", ""))

    def grades(rows):
        return {r["id"]: (grade_of(float(r["pd_one_year"])) if r["status"] == "ok" else "ungraded") for r in rows}

    before, now = grades(week3), grades(week4)
    counted = collections.Counter()
    for i in before.keys() | now.keys():
        counted[(before.get(i, "new"), now.get(i, "gone"))] += 1
    nonzero = {k: v for k, v in page.items() if v}
    check(nonzero == dict(counted), f"migration counts {sorted(nonzero.items())}, counted {sorted(counted.items())}")
    # samples/weekly/README.md: 13 obligors in week 3, JAC-36 leaves the book in week 4.
    check(sum(counted.values()) == 13 and now.get("JAC-36") is None and before.get("JAC-36") is not None,
          f"the weekly books' migration {dict(counted)}")
    check(counted[(before["JAC-36"], "gone")] >= 1, "JAC-36 counted as gone")
    section = next(s for s in root.iter("section") if s.get("id") == "monitoring")
    notes = " ".join(text_of(p) for p in section.iter("p"))
    check("graded on its model PD converted to one year" in notes, "the migration names the PD behind its grades")


def check_generation(root, text, version, epoch):
    made = datetime.datetime.fromtimestamp(epoch, datetime.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
    header = " ".join(text_of(p) for p in root.iter("p") if "fc-made" in (p.get("class") or ""))
    check(header == f"Generated {made} (UTC) by firmcall {version}", f"header {header!r}, expected {made}, {version}")
    footer = text_of(root.find(".//footer"))
    check(f"firmcall {version} at {made} (UTC)" in footer, f"footer {footer!r}")


def check_palette(text, root):
    style = text_of(root.find(".//style"))
    colours = set(c.lower() for c in re.findall(r"--[a-z]+: (#[0-9a-fA-F]{6})", style))
    check(OKABE_ITO <= colours, f"palette {sorted(colours)} lacks Okabe-Ito colours {sorted(OKABE_ITO - colours)}")
    rules = dict(re.findall(r"\.(fc-bar-worse|fc-bar-better) \{([^}]*)\}", style))
    worse, better = rules.get("fc-bar-worse", ""), rules.get("fc-bar-better", "")
    check("stroke-dasharray" in better and "stroke-dasharray" not in worse,
          "worse and better bars differ in more than colour (dashed outline)")
    # Every signed-bar chart says in words which side is worse.
    for svg in root.iter("svg"):
        bars = [r for r in svg.iter("rect")
                if (r.get("class") or "").split()[:1] in (["fc-bar-worse"], ["fc-bar-better"])]
        if bars:
            words = " ".join(text_of(t) for t in svg.iter("text"))
            check("worse (bar to the" in words and "better (bar to the" in words,
                  f"signed bars without a key in words: {text_of(svg.find('title'))}")


def check_calibrated_sheet(exe, root, tmp):
    """With the calibrated PD driving: the sheet's calibrated PD equals score --pd-calibration, its
    stressed calibrated PD stress --pd-calibration, its expected loss PD_T x LGD x EAD with
    PD_T = 1 - (1 - PD1)^T (constant annual default intensity, from memory), and the lead names it."""
    book_path, cal = "samples/demo_book.csv", "samples/calibration.yaml"
    page = os.path.join(tmp, "calibrated.html")
    run(exe, root, ["-q", "report", book_path, "--pd-calibration", cal, "-s", "samples/stress_scenarios.yaml",
                    "--sheet", "GOR-33", "--html", page])
    _, doc = parse_page(page)
    s = sheet_of(doc, "GOR-33")
    if not check(s is not None, "no calibrated tear sheet"):
        return
    score = csv_rows(run(exe, root, ["score", book_path, "--pd-calibration", cal, "--format", "csv"]).stdout)
    row = next(r for r in score if r["id"] == "GOR-33")
    got = {}
    for r in table_rows(s, "fc-sheet-results"):
        got.update(r)
    check(got.get("pd_calibrated") == row["pd_calibrated"],
          f"calibrated sheet pd_calibrated {got.get('pd_calibrated')!r}, score {row['pd_calibrated']!r}")
    with open(os.path.join(root, book_path), newline="") as f:
        b = next(r for r in csv.DictReader(f) if r["id"] == "GOR-33")
    pd_t = -math.expm1(float(row["horizon"]) * math.log1p(-float(row["pd_calibrated"])))
    el = pd_t * float(b["lgd"]) * float(b["ead"])
    check(abs(float(got.get("expected_loss", "nan")) - el) <= 1e-14 * el,
          f"calibrated expected loss {got.get('expected_loss')!r}, PD_T x LGD x EAD {el!r}")
    stress = csv_rows(run(exe, root, ["stress", book_path, "-s", "samples/stress_scenarios.yaml", "--pd-calibration",
                                      cal, "--format", "csv"]).stdout)
    want = [r["pd_calibrated_stressed"] for r in stress if r["id"] == "GOR-33"]
    page_rows = [r.get("pd_calibrated_stressed") for r in table_rows(s, "fc-sheet-stress")]
    check(page_rows == want and len(want) == 3, f"calibrated stressed PDs {page_rows}, stress CSV {want}")
    check("Driving PD: the calibrated one-year PD" in text_of(s.find("p")), "calibrated sheet lead")


def check_many_failures(exe, root, tmp):
    """Seven bad rows of nine: the lead names the first five by id and counts the rest."""
    rows = [("id", "market_cap", "equity_vol", "short_term_debt", "long_term_debt", "rate")]
    rows += [(f"BAD-{k}", 1000, "-0.3", 200, 400, 0.03) for k in range(1, 8)]
    rows += [("OK-8", 1000, 0.3, 200, 400, 0.03), ("OK-9", 2000, 0.3, 200, 400, 0.03)]
    book = os.path.join(tmp, "many.csv")
    with open(book, "w", newline="") as f:
        csv.writer(f).writerows(rows)
    page = os.path.join(tmp, "many.html")
    run(exe, root, ["-q", "report", book, "--html", page], expect=(1,))
    _, doc = parse_page(page)
    lead = text_of(next(s for s in doc.iter("section") if s.get("id") == "summary").find("p"))
    want = ("2 of 9 obligors scored; 7 failed: BAD-1 (invalid_input), BAD-2 (invalid_input), BAD-3 (invalid_input), "
            "BAD-4 (invalid_input), BAD-5 (invalid_input) and 2 more")
    check(lead.startswith(want), f"lead {lead!r}, expected it to start {want!r}")


def check_failures_book(exe, root, tmp):
    """Lead sentence, not-scored list, small amounts with significant digits and whole names in
    tooltips, on an invented book with two bad rows."""
    long_name = "Quillmere Harbour Logistics and Cold Storage Cooperative of the Northern Estuary"
    rows = [("id", "name", "market_cap", "equity_vol", "short_term_debt", "long_term_debt", "rate", "ead", "lgd")]
    for k in range(1, 11):
        rows.append((f"OB-{k:02d}", f"Invented Obligor {k}", 4000 + 100 * k, 0.12 + 0.01 * k, 200, 300, 0.03,
                     0.5 + k / 100, 0.4))
    rows[4] = ("BAD-04", "Broken Volatility", 1000, "35%", 200, 400, 0.03, 1, 0.4)
    rows[9] = ("BAD-09", "No Equity", "", 0.3, 200, 400, 0.03, 1, 0.4)
    rows[1] = ("LONG-01", long_name, 600, 0.9, 900, 800, 0.03, 2, 0.45)
    book = os.path.join(tmp, "failures.csv")
    with open(book, "w", newline="") as f:
        csv.writer(f).writerows(rows)
    page = os.path.join(tmp, "failures.html")
    run(exe, root, ["-q", "report", book, "--names", "LONG-01", "--sheet", "BAD-04", "--html", page], expect=(1,))
    text, doc = parse_page(page)
    summary = next(s for s in doc.iter("section") if s.get("id") == "summary")
    lead = text_of(summary.find("p"))
    score = csv_rows(run(exe, root, ["score", book, "--format", "csv"], expect=(1,)).stdout)
    bad = [r["id"] for r in score if r["status"] != "ok"]
    check(bad == ["BAD-04", "BAD-09"], f"score CSV failures {bad}")
    expected = f"{len(score) - len(bad)} of {len(score)} obligors scored; {len(bad)} failed: " + ", ".join(
        f"{i} (invalid_input)" for i in bad)
    check(lead.startswith(expected), f"lead {lead!r}, expected it to start {expected!r}")
    failed = by_class(doc, "table", "fc-failed")
    check(len(failed) == 1 and [text_of(tr.find("td")) for tr in failed[0].iter("tr") if tr.find("td") is not None]
          == bad, "the not-scored table lists the failures")
    # Expected loss below 1: three significant digits (Python's %#.3g, %.2e below 0.001), never 0.00.
    book_rows = {r[0]: r for r in rows[1:]}
    shown = 0
    for table in by_class(doc, "table", "fc-names-weak") + by_class(doc, "table", "fc-names-strong"):
        for tr in table.iter("tr"):
            # Columns as in the page: ..., asset value, EAD, expected loss (index 10), currency.
            tds = [text_of(td) for td in tr.iter("td")]
            if not tds:
                continue
            r = next(x for x in score if x["id"] == tds[0])
            el = float(r["pd"]) * float(book_rows[tds[0]][8]) * float(book_rows[tds[0]][7])
            want = ("%#.3g" if abs(el) >= 1e-3 else "%.2e") % el if 0 < abs(el) < 1 else None
            if want is not None:
                check(tds[10] == want, f"{tds[0]} expected loss {tds[10]!r}, expected {want!r} (PD x LGD x EAD)")
                shown += 1
            check(tds[10] != "0.00", f"{tds[0]} expected loss printed as 0.00")
    check(shown >= 5, f"only {shown} small expected losses on the page")
    # A tear sheet of an obligor not scored: the reason, no figures, nothing non-finite printed.
    sheet = sheet_of(doc, "BAD-04")
    if check(sheet is not None, "no tear sheet of BAD-04"):
        words = text_of(sheet)
        check("Not scored (invalid_input)" in words and "equity_vol" in words, "BAD-04 sheet gives no reason")
        check(not by_class(sheet, "table", "fc-sheet-results") and not by_class(sheet, "table", "fc-sheet-term"),
              "BAD-04 sheet shows result or term tables")
    visible = re.sub(r"<[^>]+>", " ", text)
    check(re.search(r"\b(nan|inf)\b", visible, re.I) is None, "the page prints a non-finite number")
    # Tooltips: the long name in full in the DD chart and the term structure line.
    titles = [text_of(t) for t in doc.iter("title")]
    full = f"LONG-01 {long_name}"
    check(any(t.startswith(full + ": DD ") for t in titles), "the DD chart's tooltip cuts the long name")
    check(full in titles, "the term structure line's tooltip cuts the long name")


def main():
    exe, root = sys.argv[1], sys.argv[2]
    version = run(exe, root, ["--version"]).stdout.strip().removeprefix("firmcall ")
    with tempfile.TemporaryDirectory() as tmp:
        db = os.path.join(tmp, "weekly.sqlite")
        for week in range(1, 5):
            run(exe, root, ["-q", "score", f"samples/weekly/week{week}.yaml", "--record", "--db", db])
        page = os.path.join(tmp, "report.html")
        epoch = 1767225600 + 3723  # 2026-01-01T01:02:03Z
        env = dict(os.environ, SOURCE_DATE_EPOCH=str(epoch))
        book_path = "samples/demo_book.csv"
        run(exe, root, ["-q", "report", book_path, "--scenarios", "samples/stress_scenarios.yaml", "--db", db,
                        "--sheet", "ALD-01", "--sheet", "FEN-06", "--html", page], env=env)
        text, doc = parse_page(page)
        sections = [s.get("id") for s in doc.iter("section")]
        check(sections == ["summary", "dd-leverage", "names", "stress", "monitoring", "sheet-1", "sheet-2"],
              f"sections {sections}")
        with open(os.path.join(root, book_path), newline="") as f:
            book = list(csv.DictReader(f))
        score = csv_rows(run(exe, root, ["score", book_path, "--format", "csv"]).stdout)
        sens = csv_rows(run(exe, root, ["score", book_path, "--sensitivities", "--format", "csv"]).stdout)
        term = csv_rows(run(exe, root, ["score", book_path, "--horizons", HORIZONS, "--format", "csv"]).stdout)
        stress = csv_rows(run(exe, root, ["stress", book_path, "--scenarios", "samples/stress_scenarios.yaml",
                                          "--format", "csv"]).stdout)
        for obligor in ("ALD-01", "FEN-06"):
            track = csv_rows(run(exe, root, ["track", obligor, "--db", db, "--format", "csv"]).stdout)
            check_sheet(doc, obligor, score, sens, term, stress, track, book)
        week3 = csv_rows(run(exe, root, ["score", "samples/weekly/week3.yaml", "--format", "csv"]).stdout)
        week4 = csv_rows(run(exe, root, ["score", "samples/weekly/week4.yaml", "--format", "csv"]).stdout)
        check_migration(doc, week3, week4)
        check_generation(doc, text, version, epoch)
        check_palette(text, doc)
        # Without SOURCE_DATE_EPOCH: the time of the run, UTC.
        plain = os.path.join(tmp, "now.html")
        env = {k: v for k, v in os.environ.items() if k != "SOURCE_DATE_EPOCH"}
        before = datetime.datetime.now(datetime.timezone.utc).replace(microsecond=0)
        run(exe, root, ["-q", "report", book_path, "--html", plain], env=env)
        after = datetime.datetime.now(datetime.timezone.utc)
        _, now_doc = parse_page(plain)
        made = " ".join(text_of(p) for p in now_doc.iter("p") if "fc-made" in (p.get("class") or ""))
        m = re.fullmatch(r"Generated (\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ) \(UTC\) by firmcall (.+)", made)
        if check(m is not None, f"header without an ISO 8601 time: {made!r}"):
            at = datetime.datetime.strptime(m.group(1), "%Y-%m-%dT%H:%M:%SZ").replace(tzinfo=datetime.timezone.utc)
            check(before <= at <= after, f"generation time {at} not between {before} and {after}")
        # SOURCE_DATE_EPOCH past year 9999 or not whole seconds: the clock's time instead.
        for bad in ("253402300800", "12.5", "-1", "soon"):
            run(exe, root, ["-q", "report", book_path, "--html", plain], env=dict(env, SOURCE_DATE_EPOCH=bad))
            _, odd = parse_page(plain)
            made = " ".join(text_of(p) for p in odd.iter("p") if "fc-made" in (p.get("class") or ""))
            m = re.fullmatch(r"Generated (\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ) \(UTC\) by firmcall .+", made)
            check(m is not None and m.group(1)[:4] == str(after.year), f"SOURCE_DATE_EPOCH={bad}: {made!r}")
        # An id of --sheet not in the book: exit code 2, the id and the option named, nothing written.
        bad_page = os.path.join(tmp, "bad.html")
        r = run(exe, root, ["report", book_path, "--sheet", "ALD-01,NOPE-99", "--html", bad_page], expect=(2,))
        check("--sheet" in r.stderr and "NOPE-99" in r.stderr, f"unknown id message: {r.stderr!r}")
        check(not os.path.exists(bad_page), "a page was written for an unknown --sheet id")
        r = run(exe, root, ["report", book_path, "--sheet", "ALD-01", "--sheet", "ALD-01", "--html", bad_page],
                expect=(2,))
        check("ALD-01" in r.stderr and "twice" in r.stderr, f"repeated id message: {r.stderr!r}")
        check_failures_book(exe, root, tmp)
        check_many_failures(exe, root, tmp)
        check_calibrated_sheet(exe, root, tmp)
    for f in failures:
        print("FAIL:", f)
    if not failures:
        print("ok: tear sheets equal score, stress, term and track CSV; migration counts, lead sentence, "
              "amounts, tooltips, generation time and palette checked")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
