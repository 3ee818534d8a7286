"""Stored results as CSV: an audit's every point with the long-term trend line over the reference period and
residuals; a correlation audit's response and driver with the fitted response.

Text cells that a spreadsheet would run as a formula (starting with =, +, -, @, tab or carriage return)
get a leading apostrophe, as the OWASP "CSV Injection" guidance advises; numbers stay numbers, so a
negative anomaly is still -0.25 and not the text '-0.25.
"""

from __future__ import annotations

import csv
import io
import re
from typing import Any

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
PLAIN_NUMBER = re.compile(r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?")
COLUMNS = ("time", "time_label", "value", "long_term_trend", "residual", "in_reference", "in_window")


def neutralise(text: str) -> str:
    """A text cell made safe to open in a spreadsheet (OWASP CSV Injection)."""
    if text.startswith(FORMULA_STARTS) and not PLAIN_NUMBER.fullmatch(text):
        return "'" + text
    return text


def _number(value: float | None) -> str:
    return "" if value is None else repr(float(value))


def audit_data_csv(input_document: dict[str, Any], result_document: dict[str, Any]) -> str:
    """Rows from the stored input and the trend line the result document holds; nothing is recomputed."""
    series = input_document["series"]
    times, values = series["time"], series["value"]
    labels = series.get("time_labels") or [""] * len(times)
    line = (result_document.get("curves") or {}).get("reference_line") or {}
    fitted = dict(zip(line.get("time") or [], line.get("value") or []))
    reference = result_document.get("reference") or {}
    claim = input_document.get("claim") or {}

    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\r\n")  # RFC 4180 line ends
    writer.writerow(COLUMNS)
    for time, label, value in zip(times, labels, values):
        trend = fitted.get(time)
        residual = value - trend if trend is not None else None
        writer.writerow([_number(time), neutralise(str(label)), _number(value), _number(trend), _number(residual),
                         _flag(reference.get("start"), reference.get("end"), time),
                         _flag(claim.get("start"), claim.get("end"), time)])
    return out.getvalue()


def _flag(start: float | None, end: float | None, time: float) -> str:
    if start is None or end is None:
        return ""
    return "1" if start <= time <= end else "0"


CORRELATION_COLUMNS = ("time", "time_label", "response", "driver", "driver_transformed", "fitted_response", "residual",
                       "shared")


def correlation_data_csv(input_document: dict[str, Any], result_document: dict[str, Any]) -> str:
    """One row per response time (the grid the driver was matched to): the response as given, the driver matched
    to it and transformed, the fitted response and the residual where both exist. Nothing is recomputed."""
    response = input_document["response"]
    times, values = response["time"], response["value"]
    labels = response.get("time_labels") or [""] * len(times)
    curves = result_document.get("curves") or {}
    shared = {time: (driver, transformed, fitted) for time, driver, transformed, fitted in zip(
        curves.get("time") or [], curves.get("driver") or [], curves.get("driver_transformed") or [],
        curves.get("fitted") or [])}

    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\r\n")  # RFC 4180 line ends
    writer.writerow(CORRELATION_COLUMNS)
    for time, label, value in zip(times, labels, values):
        driver, transformed, fitted = shared.get(time, (None, None, None))
        residual = value - fitted if fitted is not None else None
        writer.writerow([_number(time), neutralise(str(label)), _number(value), _number(driver), _number(transformed),
                         _number(fitted), _number(residual), "1" if time in shared else "0"])
    return out.getvalue()
