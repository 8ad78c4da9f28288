"""The Python module against the score command's CSV (exact doubles) and against scipy.

Run by CTest with Debian's python3 and PYTHONPATH at the build's python/ directory; the
environment names the CLI (FIRMCALL_BINARY) and the source tree (FIRMCALL_SOURCE_DIR).
"""

import csv
import io
import math
import os
import pathlib
import re
import subprocess
import sys

import numpy as np
import pytest
from scipy.stats import norm

import firmcall

BINARY = os.environ["FIRMCALL_BINARY"]
SOURCE = pathlib.Path(os.environ["FIRMCALL_SOURCE_DIR"])
SAMPLES = SOURCE / "samples"
TEXT = ("id", "name", "sector", "country", "currency")


def cli_csv(book, *options):
    """The score command's CSV rows for `book`, as dicts of cell text."""
    run = subprocess.run([BINARY, "-q", "score", str(book), "--format", "csv", *options],
                         capture_output=True, text=True, check=False)
    assert run.returncode in (0, 1), run.stderr  # 1: some rows were not scored
    return list(csv.DictReader(io.StringIO(run.stdout)))


def book_columns(path, drop=()):
    """A CSV book as a dict of columns: text as str, numbers as float (NaN for an empty cell)."""
    with open(path, newline="", encoding="utf-8") as f:
        rows = [r for r in csv.DictReader(f)]
    cols = {}
    for name in rows[0].keys():
        if name in drop:
            continue
        cells = [(r[name] or "").strip() for r in rows]
        cols[name] = cells if name in TEXT else [number_or_text(c) for c in cells]
    return cols


def number_or_text(cell):
    """float of a number cell, NaN for an empty one, the text itself otherwise (such rows are
    left out where they are not meant as type errors)."""
    if not cell:
        return math.nan
    try:
        return float(cell)
    except ValueError:
        return cell


def without_location(message):
    """'line 7: field ...' or 'row 5: field ...' -> 'field ...'."""
    return re.sub(r"^(line|row) \d+: ", "", message)


def assert_equal_to_cli(result, rows, columns):
    """Every named column equals the CLI's cells: exact doubles, empty cell = NaN."""
    assert len(result["status"]) == len(rows)
    for name in columns:
        for i, row in enumerate(rows):
            cell = row[name]
            got = result[name][i]
            if name in ("status", "sensitivity_status"):
                assert got == cell, (name, i)
            elif name == "pd_calibrated_extrapolated":
                assert got == {"": None, "true": True, "false": False}[cell], (name, i)
            elif name == "iterations":
                assert got == (int(cell) if cell else -1), (name, i)
            elif cell == "":
                assert math.isnan(got), (name, i, got)
            else:
                # The CLI writes the shortest decimal that reads back to the same double.
                assert float(cell) == got, (name, i, cell, repr(got))


NUMERIC_OUT = ["equity_value", "default_point", "asset_value", "asset_vol", "leverage", "distance_to_default",
               "pd", "horizon", "pd_one_year", "pd_risk_neutral", "debt_value", "spread_bp", "iterations",
               "residual"]


def test_demo_book_equals_cli():
    # Reference: the score command's CSV of the same book (the number writer round-trips exactly).
    result = firmcall.score(book_columns(SAMPLES / "demo_book.csv"))
    rows = cli_csv(SAMPLES / "demo_book.csv")
    assert_equal_to_cli(result, rows, ["status"] + NUMERIC_OUT)
    assert list(result["id"]) == [r["id"] for r in rows]
    assert list(result["name"]) == [r["name"] for r in rows]
    assert list(result.keys())[:len(firmcall.score_columns)] == list(firmcall.score_columns)


def test_demo_book_against_scipy():
    # Reference: scipy.stats.norm. The solved (V, sV) prices the equity back as a Black-Scholes call
    # (Merton 1974), and DD, PD and the one-year PD follow from their formulas.
    cols = book_columns(SAMPLES / "demo_book.csv")
    r = firmcall.score(cols)
    ok = r["status"] == "ok"
    assert ok.sum() >= 30
    V, s, DP, T = r["asset_value"][ok], r["asset_vol"][ok], r["default_point"][ok], r["horizon"][ok]
    rate = np.asarray(cols["rate"])[ok]
    drift = np.where(np.isnan(np.asarray(cols["drift"])[ok]), rate, np.asarray(cols["drift"])[ok])
    d1 = (np.log(V / DP) + (rate + 0.5 * s * s) * T) / (s * np.sqrt(T))
    d2 = d1 - s * np.sqrt(T)
    equity = V * norm.cdf(d1) - DP * np.exp(-rate * T) * norm.cdf(d2)
    np.testing.assert_allclose(equity, r["equity_value"][ok], rtol=1e-9)
    dd = (np.log(V / DP) + (drift - 0.5 * s * s) * T) / (s * np.sqrt(T))
    np.testing.assert_allclose(r["distance_to_default"][ok], dd, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(r["pd"][ok], norm.sf(dd), rtol=1e-9, atol=1e-300)
    one_year = -np.expm1(np.log1p(-norm.sf(dd)) / T)  # constant hazard over the horizon
    np.testing.assert_allclose(r["pd_one_year"][ok], one_year, rtol=1e-9, atol=1e-300)


def generated_book(tmp_path):
    """1,000 invented obligors: the shared generator when it is beside the source tree, else the
    same columns drawn here with numpy (fixed seed)."""
    generator = SOURCE.parent / "shared" / "tools" / "gen_obligors.py"
    path = tmp_path / "generated_1000.csv"
    if generator.exists():
        subprocess.run([sys.executable, str(generator), "--rows", "1000", "--seed", "5", "--out", str(path)],
                       check=True)
        return path
    rng = np.random.default_rng(5)
    n = 1000
    cap = np.round(np.exp(rng.normal(np.log(1000), 1.6, n)) + 1, 2)
    vol = np.round(np.clip(0.3 * np.exp(rng.normal(0, 0.35, n)), 0.08, 1.5), 4)
    dp = cap * np.clip(0.8 * np.exp(rng.normal(0, 1.0, n)), 0.005, 25)
    share = rng.uniform(0.1, 0.9, n)
    std = np.round(dp * share, 2)
    ltd = np.round(2 * dp * (1 - share), 2)
    rate = np.round(np.clip(0.03 + rng.normal(0, 0.004, n), -0.01, 0.15), 5)
    horizon = np.where(rng.uniform(size=n) < 0.8, 1.0, rng.choice([0.25, 0.5, 2, 3, 5], n))
    with open(path, "w", encoding="utf-8") as f:
        f.write("id,name,market_cap,equity_vol,short_term_debt,long_term_debt,rate,horizon\n")
        for i in range(n):
            f.write(f"OBL-{i + 1:06d},Obligor {i + 1},{cap[i]},{vol[i]},{std[i]},{ltd[i]},{rate[i]},{horizon[i]}\n")
    return path


def test_generated_obligors_equal_cli(tmp_path):
    # Reference: the score command's CSV of the same 1,000 rows.
    path = generated_book(tmp_path)
    result = firmcall.score(book_columns(path))
    rows = cli_csv(path)
    assert len(rows) == 1000
    assert_equal_to_cli(result, rows, ["status"] + NUMERIC_OUT)
    # The result does not depend on the number of threads.
    one = firmcall.score(book_columns(path), threads=1)
    for name in NUMERIC_OUT:
        np.testing.assert_array_equal(one[name], result[name])


def test_settings_equal_cli_options():
    # Reference: the score command with the same options.
    cols = book_columns(SAMPLES / "demo_book.csv")
    result = firmcall.score(cols, rate=0.03, horizon=2, default_point_weight=0.75, measure="risk-neutral")
    rows = cli_csv(SAMPLES / "demo_book.csv", "--rate", "0.03", "--horizon", "2", "--default-point-weight", "0.75",
                   "--measure", "risk-neutral")
    assert_equal_to_cli(result, rows, ["status"] + NUMERIC_OUT)
    np.testing.assert_array_equal(result["pd"], result["pd_risk_neutral"])  # risk-neutral: mu = r


def test_sensitivities_and_calibration_equal_cli():
    # Reference: the score command with --sensitivities and --pd-calibration.
    cols = book_columns(SAMPLES / "demo_book.csv")
    cal = SAMPLES / "calibration.yaml"
    result = firmcall.score(cols, sensitivities=True, pd_calibration=cal)
    rows = cli_csv(SAMPLES / "demo_book.csv", "--sensitivities", "--pd-calibration", str(cal))
    extra = [c for c in rows[0].keys() if c.startswith(("sensitivity_", "dd_per", "pd_per", "spread_bp_per"))]
    assert len(extra) == 13
    calibrated = ["pd_calibrated", "pd_calibrated_lower", "pd_calibrated_upper", "pd_calibrated_extrapolated"]
    assert_equal_to_cli(result, rows, ["status"] + NUMERIC_OUT + extra + calibrated)


def test_bad_rows_status_and_message_as_cli():
    # Reference: the CLI's status and message of samples/bad_rows.csv. Rows whose cells are not
    # numbers at all (35%, nan, a short row) are type errors in Python, so they are left out.
    path = SAMPLES / "bad_rows.csv"
    rows = cli_csv(path)
    keep = [i for i, r in enumerate(rows) if r["id"] not in ("BAD-05", "BAD-09", "BAD-13")]
    cols = book_columns(path, drop=("analyst_note",))
    cols = {k: [v[i] for i in keep] for k, v in cols.items() if k in firmcall.obligor_fields}
    result = firmcall.score(cols)
    rows = [rows[i] for i in keep]
    assert_equal_to_cli(result, rows, ["status"] + NUMERIC_OUT)
    for i, row in enumerate(rows):
        assert result["message"][i].startswith(f"row {i}: ") or row["message"] == ""
        if "duplicate" in row["message"]:
            assert result["message"][i] == f"row {i}: field 'id': duplicate of the obligor at row 0"
        else:
            assert without_location(result["message"][i]) == without_location(row["message"]), i
    assert (result["status"] == "invalid_input").sum() >= 8


def test_dataframe_in_and_out():
    pd = pytest.importorskip("pandas")
    frame = pd.read_csv(SAMPLES / "demo_book.csv")
    frame.index = [f"r{i}" for i in range(len(frame))]
    result = firmcall.score(frame)
    assert isinstance(result, pd.DataFrame)
    assert list(result.index) == list(frame.index)
    assert list(result.columns) == list(firmcall.score_columns)
    # Reference: the dict form (itself equal to the CLI above) gives the same numbers.
    plain = firmcall.score(book_columns(SAMPLES / "demo_book.csv"))
    for name in NUMERIC_OUT:
        np.testing.assert_array_equal(result[name].to_numpy(), plain[name])
    assert list(result["status"]) == list(plain["status"])


def test_numpy_arrays_and_equity_value_alias():
    cols = {k: np.asarray(v) for k, v in book_columns(SAMPLES / "demo_book.csv").items()}
    cols["equity_value"] = cols.pop("market_cap")
    result = firmcall.score(cols)
    rows = cli_csv(SAMPLES / "demo_book.csv")
    assert_equal_to_cli(result, rows, ["status"] + NUMERIC_OUT)


def small():
    return {"id": ["A", "B"], "market_cap": [1000.0, 500.0], "equity_vol": [0.3, 0.4],
            "short_term_debt": [400.0, 300.0], "long_term_debt": [800.0, 100.0], "rate": [0.03, 0.03]}


def test_structural_errors_raise_value_error():
    cols = small()
    cols["rate"] = [0.03]
    with pytest.raises(ValueError, match=r"field 'rate': 1 values, but field 'id' has 2; row 1"):
        firmcall.score(cols)
    cols = small()
    cols["equity_volatility"] = [0.3, 0.3]
    with pytest.raises(ValueError, match=r"unknown column 'equity_volatility'"):
        firmcall.score(cols)
    cols = small()
    cols["equity_vol"] = [0.3, "35%"]
    with pytest.raises(ValueError, match=r"row 1: field 'equity_vol': expected a number, got '35%'"):
        firmcall.score(cols)
    cols = small()
    cols["id"] = ["A", 7]
    with pytest.raises(ValueError, match=r"row 1: field 'id': expected text"):
        firmcall.score(cols)
    cols = small()
    del cols["equity_vol"]
    with pytest.raises(ValueError, match=r"required column 'equity_vol' is missing"):
        firmcall.score(cols)
    with pytest.raises(ValueError, match=r"expected a dict of columns"):
        firmcall.score([1, 2, 3])
    with pytest.raises(ValueError, match=r"rate: expected a number in \[-1, 1\]"):
        firmcall.score(small(), rate=3)
    with pytest.raises(ValueError, match=r"horizon: expected a number in \(0, 100\]"):
        firmcall.score(small(), horizon=0)
    with pytest.raises(ValueError, match=r"measure"):
        firmcall.score(small(), measure="real-world")
    with pytest.raises(ValueError, match=r"no-such-file.yaml"):
        firmcall.score(small(), pd_calibration="no-such-file.yaml")


def test_bad_values_are_rows_not_exceptions():
    cols = small()
    cols["equity_vol"] = [0.3, -0.4]
    cols["id"] = ["A", "A"]
    r = firmcall.score(cols)
    assert list(r["status"]) == ["ok", "invalid_input"]
    assert r["message"][0] == ""
    assert r["message"][1] == "row 1: field 'id': duplicate of the obligor at row 0"
    assert math.isnan(r["pd"][1]) and r["iterations"][1] == -1
    cols = small()
    cols["equity_vol"] = [0.3, -0.4]
    r = firmcall.score(cols)
    assert r["message"][1].startswith("row 1: field 'equity_vol': ")
