"""firmcall for Python: score obligors with the Merton (1974) structural model.

    import firmcall
    scores = firmcall.score({"id": ["A", "B"], "market_cap": [2450.0, 8120.0],
                             "equity_vol": [0.31, 0.19], "short_term_debt": [820.0, 2100.0],
                             "long_term_debt": [1900.0, 9400.0], "rate": [0.0265, 0.0405]})
    scores["distance_to_default"], scores["pd"], scores["status"]

The figures are those of `firmcall score --format csv` for the same rows (the same resolver,
batch solver and measures, compiled into this module). They are model estimates under stated
assumptions, not a credit decision on their own; use them within your institution's model-risk
policy and the regulation that applies to you. See docs/python.md.
"""

import math
import numbers as _numbers

import numpy as np

from . import _native

__all__ = ["score", "score_columns", "obligor_fields", "__version__"]
__version__ = "@FIRMCALL_VERSION@"

#: The input fields (the CSV column names of a book); "equity_value" is also read as market_cap.
obligor_fields = tuple(_native.obligor_fields)
#: The output columns, in the order of the CLI's CSV.
score_columns = tuple(_native.score_columns)

_TEXT_FIELDS = ("id", "name", "sector", "country", "currency")
_NUMERIC_FIELDS = tuple(f for f in obligor_fields if f not in _TEXT_FIELDS)
_MAX_HORIZON_YEARS = 100.0  # as the command line's --horizon


def _is_dataframe(x):
    return type(x).__name__ == "DataFrame" and type(x).__module__.startswith("pandas")


def _number_column(name, values, n):
    """float64 array of a numeric field; NaN (or None) stands for an absent value."""
    a = np.asarray(values)
    if a.dtype.kind in "fiu" and a.ndim == 1:
        return np.ascontiguousarray(a, dtype=np.float64)
    if a.ndim != 1:
        raise ValueError(f"field '{name}': expected a one-dimensional column, got shape {a.shape}")
    out = np.empty(n, dtype=np.float64)
    seq = values.tolist() if isinstance(values, np.ndarray) else list(values)  # the values as given
    for row, v in enumerate(seq):
        if v is None:
            out[row] = math.nan
        elif isinstance(v, _numbers.Real) and not isinstance(v, bool):
            out[row] = float(v)
        else:
            raise ValueError(f"row {row}: field '{name}': expected a number, got {v!r}")
    return out


def _text_column(name, values, n):
    """list of str of a text field; None or NaN stand for an empty cell."""
    if isinstance(values, np.ndarray) and values.dtype.kind == "U":
        return values.tolist()  # every value is text already: no check per value
    out = []
    for row, v in enumerate(values.tolist() if isinstance(values, np.ndarray) else values):
        if isinstance(v, str):
            out.append(v)
        elif v is None or (isinstance(v, float) and math.isnan(v)):
            out.append("")
        else:
            raise ValueError(f"row {row}: field '{name}': expected text, got {v!r}")
    return out


def _check_setting(name, value, low, high, low_open):
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, _numbers.Real) or not math.isfinite(value):
        raise ValueError(f"{name}: expected a finite number, got {value!r}")
    value = float(value)
    if value > high or value < low or (low_open and value == low):
        bracket = "(" if low_open else "["
        raise ValueError(f"{name}: expected a number in {bracket}{low:g}, {high:g}], got {value!r}")
    return value


def score(columns, *, rate=None, horizon=None, default_point_weight=None, measure=None, config=None,
          pd_calibration=None, sensitivities=False, threads=None):
    """Scores every obligor of `columns` with the Merton model.

    columns: a dict of equal-length sequences or numpy arrays, or a pandas DataFrame, keyed by the
      book's field names (id, name, sector, market_cap or equity_value, share_price,
      shares_outstanding, equity_vol, short_term_debt, long_term_debt, default_point, rate,
      horizon, drift, ead, lgd, ...). NaN or None is an absent value, as an empty CSV cell.
    rate, horizon, default_point_weight, measure ("physical" or "risk-neutral"): as the score
      command's --rate, --horizon, --default-point-weight, --measure (they win over the columns).
    config: a settings file (as --config); pd_calibration: a calibration file (as
      --pd-calibration) adds pd_calibrated, pd_calibrated_lower, pd_calibrated_upper,
      pd_calibrated_extrapolated; sensitivities=True adds the sensitivity columns.
    threads: worker threads (default: every core); the results do not depend on it.

    Returns the score columns (id, name, status, equity_value, default_point, asset_value,
    asset_vol, leverage, distance_to_default, pd, horizon, pd_one_year, pd_risk_neutral,
    debt_value, spread_bp, iterations, residual, message) as a dict of numpy arrays, or a
    DataFrame when given one. A row that cannot be scored has status invalid_input or
    not_converged, NaN measures and a message naming the row and the field. ValueError for
    columns of unequal length, an unknown column, a value of the wrong type, a missing required
    column, or an unusable setting or file.
    """
    frame = _is_dataframe(columns)
    if frame:
        names = [str(c) for c in columns.columns]
        if len(set(names)) != len(names):
            raise ValueError("a column name appears twice")
        data = {name: columns[name].to_numpy() for name in names}
    elif hasattr(columns, "keys") and hasattr(columns, "__getitem__"):
        data = {}
        for key in columns.keys():
            if not isinstance(key, str):
                raise ValueError(f"column names must be text, got {key!r}")
            data[key] = columns[key]
    else:
        raise ValueError(f"expected a dict of columns or a pandas DataFrame, got {type(columns).__name__}")

    if "equity_value" in data:
        if "market_cap" in data:
            raise ValueError("give market_cap or equity_value, not both (they are the same field)")
        data["market_cap"] = data.pop("equity_value")
    for name in data:
        if name not in obligor_fields:
            raise ValueError(f"unknown column '{name}' (known: {', '.join(obligor_fields)}, equity_value)")
    lengths = {}
    for name, values in data.items():
        if isinstance(values, (str, bytes)) or not hasattr(values, "__len__"):
            raise ValueError(f"field '{name}': expected a sequence of values, got {type(values).__name__}")
        lengths[name] = len(values)
    n = lengths[next(iter(lengths))] if lengths else 0
    for name, length in lengths.items():
        if length != n:
            first = next(iter(lengths))
            raise ValueError(f"field '{name}': {length} values, but field '{first}' has {n}; "
                             f"row {min(length, n)} is missing in one of them")
    # The required columns of a book (as the CSV header check).
    if "id" not in data:
        raise ValueError("required column 'id' is missing")
    if "market_cap" not in data and not ("share_price" in data and "shares_outstanding" in data):
        raise ValueError("required column 'market_cap' (or 'equity_value', or 'share_price' with "
                         "'shares_outstanding') is missing")
    if "equity_vol" not in data:
        raise ValueError("required column 'equity_vol' is missing")

    numbers, texts = {}, {}
    for name, values in data.items():
        if name in _TEXT_FIELDS:
            texts[name] = _text_column(name, values, n)
        else:
            numbers[name] = _number_column(name, values, n)

    if measure is not None and measure not in ("physical", "risk-neutral"):
        raise ValueError(f"measure: expected 'physical' or 'risk-neutral', got {measure!r}")
    if threads is None:
        import os
        threads = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)
    if isinstance(threads, bool) or not isinstance(threads, _numbers.Integral) or not 1 <= threads <= 1024:
        raise ValueError(f"threads: expected a whole number in [1, 1024], got {threads!r}")
    options = {
        "rate": _check_setting("rate", rate, -1.0, 1.0, False),
        "horizon": _check_setting("horizon", horizon, 0.0, _MAX_HORIZON_YEARS, True),
        "default_point_weight": _check_setting("default_point_weight", default_point_weight, 0.0, 1.0, False),
        "measure": measure,
        "config": None if config is None else str(config),
        "pd_calibration": None if pd_calibration is None else str(pd_calibration),
        "sensitivities": bool(sensitivities),
        "threads": int(threads),
    }
    raw = _native._score_arrays(n, numbers, texts, options)
    return _assemble(raw, texts, n, frame, columns.index if frame else None, sensitivities, pd_calibration)


def _assemble(raw, texts, n, frame, index, sensitivities, pd_calibration):
    out = {}
    out["id"] = np.array(texts.get("id", [""] * n), dtype=object)
    out["name"] = np.array(texts.get("name", [""] * n), dtype=object)
    out["status"] = np.array(_native.status_names, dtype=object)[raw["status_code"]]
    for name in score_columns:
        if name in raw:
            out[name] = raw[name]
    message = np.full(n, "", dtype=object)
    if raw["message_rows"]:
        message[np.asarray(raw["message_rows"], dtype=np.intp)] = raw["message_texts"]
    out["message"] = message
    out["currency"] = np.array(texts.get("currency", [""] * n), dtype=object)  # the obligor's own
    if sensitivities:
        names = np.array(_native.sensitivity_status_names + [""], dtype=object)
        out["sensitivity_status"] = names[raw["sensitivity_status_code"].astype(np.intp)]  # -1: ""
        for name in _native.sensitivity_columns[1:]:
            out[name] = raw[name]
    if pd_calibration is not None:
        for name in ("pd_calibrated", "pd_calibrated_lower", "pd_calibrated_upper"):
            out[name] = raw[name]
        code = raw["pd_calibrated_extrapolated_code"]
        extrapolated = np.full(n, None, dtype=object)
        extrapolated[code == 0] = False
        extrapolated[code == 1] = True
        out["pd_calibrated_extrapolated"] = extrapolated
    # The CLI's column order: score columns, sensitivities, calibration.
    order = [c for c in score_columns] + [c for c in out if c not in score_columns]
    out = {c: out[c] for c in order}
    if frame:
        import pandas as pd
        return pd.DataFrame(out, index=index)
    return out
