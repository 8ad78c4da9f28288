#!/usr/bin/env python3
"""Checks a firmcall HTML report with a real XML parser (the expat parser of Python's standard
library): the whole page, and each inline SVG chart on its own, must be well-formed XML.

    python3 tests/cli/report_xml_check.py FIRMCALL SOURCE_DIR

Records the weekly samples into a temporary store, writes the README's full sample report, then
parses it. Exit code 0 when every check passes, 1 otherwise (CTest test report_xml_well_formed).
"""
import os
import re
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET


def main():
    firmcall, source = sys.argv[1], sys.argv[2]
    failures = []
    with tempfile.TemporaryDirectory() as tmp:
        db = os.path.join(tmp, "weekly.sqlite")
        for week in range(1, 5):
            subprocess.run([firmcall, "-q", "score", f"samples/weekly/week{week}.yaml", "--record", "--db", db],
                           cwd=source, check=True, stdout=subprocess.DEVNULL)
        page = os.path.join(tmp, "report.html")
        subprocess.run([firmcall, "-q", "report", "samples/demo_book.yaml", "--scenarios",
                        "samples/stress_scenarios.yaml", "--names", "GOR-33,BEL-28,CIN-03,ALD-01", "--portfolio",
                        "--sheet", "GOR-33", "--sheet", "ALD-01",
                        "--reporting-currency", "EUR", "--fx", "samples/demo_fx.csv",
                        "--validate", "samples/outcomes.csv",
                        "--db", db, "--html", page], cwd=source, check=True)
        with open(page, encoding="utf-8") as f:
            text = f.read()
    # An XML parser does not know the HTML5 doctype; it is the only non-XML line of the page.
    doctype = "<!DOCTYPE html>\n"
    if not text.startswith(doctype):
        failures.append("page does not start with the HTML5 doctype")
    try:
        root = ET.fromstring(text[len(doctype):])
    except ET.ParseError as e:
        failures.append(f"page is not well-formed XML: {e}")
        root = None
    svgs = re.findall(r"<svg\b.*?</svg>", text, flags=re.S)
    # nine, the ROC, CAP and per-grade charts of the validation section, and the DD history of the
    # tear sheet of ALD-01 (in the weekly store; GOR-33 is not)
    if len(svgs) != 13:
        failures.append(f"expected 13 charts in the full sample run, found {len(svgs)}")
    for i, svg in enumerate(svgs):
        try:
            chart = ET.fromstring(svg)
        except ET.ParseError as e:
            failures.append(f"chart {i + 1} is not well-formed XML: {e}")
            continue
        if chart.find("title") is None or not (chart.find("title").text or "").strip():
            failures.append(f"chart {i + 1} has no title")
        axis_titles = [t for t in chart.iter("text") if "fc-axis-title" in t.get("class", "")]
        if not axis_titles:
            failures.append(f"chart {i + 1} has no axis title")
    if root is not None:
        sections = [s.get("id") for s in root.iter("section")]
        expected = ["summary", "dd-leverage", "names", "stress", "term", "portfolio", "monitoring", "validation",
                    "sheet-1", "sheet-2"]
        if sections != expected:
            failures.append(f"sections {sections}, expected {expected}")
        if any(True for _ in root.iter("script")):
            failures.append("the page has a script element")
        for element in root.iter():
            for name, value in element.attrib.items():
                if name in ("href", "src", "xlink:href") and not value.startswith("#"):
                    failures.append(f"link out of the page: {name}={value}")
    failures += check_hostile_text(firmcall, source)
    for f in failures:
        print("FAIL:", f)
    if not failures:
        print(f"ok: page and {len(svgs)} charts are well-formed XML; sections complete; no links out")
    return 1 if failures else 0


def check_hostile_text(firmcall, source):
    """A book whose ids and names hold bytes that are not UTF-8, C0/C1 controls and bidirectional
    overrides (U+202E) and isolates (U+2066): the page must still decode as UTF-8, parse with expat,
    and hold none of the controls."""
    failures = []
    header = b"id,name,sector,country,market_cap,equity_vol,short_term_debt,long_term_debt,rate,ead,lgd\n"
    rows = [
        b"BAD\xff\xfe,Not scored \xe2\x80\xae gnp.exe,Retail\x1b[31m,NL,,0.31,820,1900,0.03,10,0.4\n",
        b"OK-\xe2\x81\xa6 2,Fine \xc2\x9b name\x7f,Retail,NL,2450,0.31,820,1900,0.03,10,0.4\n",
        b"OK-3,Plain,Retail,NL,3100,0.25,600,1500,0.03,20,0.4\n",
    ]
    with tempfile.TemporaryDirectory() as tmp:
        book = os.path.join(tmp, "hostile.csv")
        with open(book, "wb") as f:
            f.write(header + b"".join(rows))
        page = os.path.join(tmp, "hostile.html")
        r = subprocess.run([firmcall, "-q", "report", book, "--portfolio", "--html", page], cwd=source,
                           stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        if r.returncode != 1:
            return [f"hostile book: exit code {r.returncode}, expected 1 (one obligor not scored)"]
        with open(page, "rb") as f:
            raw = f.read()
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as e:
        return [f"hostile book: page is not UTF-8: {e}"]
    try:
        ET.fromstring(text[len("<!DOCTYPE html>\n"):])
    except ET.ParseError as e:
        failures.append(f"hostile book: page is not well-formed XML: {e}")
    for ch in ["\u202e", "\u2066", "\u009b", "\x7f", "\x1b"]:
        if ch in text:
            failures.append(f"hostile book: page holds the control U+{ord(ch):04X}")
    if "BAD\ufffd\ufffd" not in text:
        failures.append("hostile book: the unscored id is not shown with U+FFFD for its stray bytes")
    return failures


if __name__ == "__main__":
    sys.exit(main())
