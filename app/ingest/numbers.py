"""Reading one number out of a cell: decimal point or comma, missing-value markers, sentinels."""

from __future__ import annotations

import math
import re

from app.ingest.cells import CellError, shown

# Spreadsheet and statistics exports write a missing value as one of these (compared case-insensitively).
MISSING_TOKENS = frozenset({"", "na", "n/a", "nan", "null", "none", "-", "#n/a"})
INFINITY_TOKENS = frozenset({"inf", "+inf", "-inf", "infinity", "+infinity", "-infinity"})

_NUMBER = re.compile(r"[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?")
_DECIMAL_COMMA = re.compile(r"[+-]?\d*,\d+")


def normalise(text: str) -> str:
    # A typographic minus (U+2212) arrives when numbers are copied from web pages or documents.
    return text.strip().replace("\u2212", "-")


def is_missing(text: str) -> bool:
    return normalise(text).lower() in MISSING_TOKENS


def parse_number(text: str, *, decimal_comma: bool, sentinels: tuple[float, ...] = ()) -> float:
    """The cell's value, NaN when it marks a missing value; CellError when it is not a finite number."""
    try:
        # Fast path for the plain numbers that fill almost every file; float() alone would also take
        # "1_000", "nan" and "inf", which the checks below treat on their own terms.
        value = float(text)
    except ValueError:
        pass
    else:
        if math.isfinite(value) and "_" not in text:
            return math.nan if value in sentinels else value
    cell = normalise(text)
    if cell.lower() in MISSING_TOKENS:
        return math.nan
    if cell.lower() in INFINITY_TOKENS:
        raise CellError(f"{shown(text)} is infinite", "Replace it with a finite number, or leave the cell blank "
                                                      "if the value is missing")
    if not _NUMBER.fullmatch(cell):
        raise CellError(*_why_not_a_number(text, cell, decimal_comma))
    if "," in cell:
        if not decimal_comma:
            raise CellError(*_why_not_a_number(text, cell, decimal_comma))
        cell = cell.replace(",", ".")
    value = float(cell)
    if not math.isfinite(value):
        raise CellError(f"{shown(text)} is too large to hold as a number", "Check the cell; rescale the column "
                                                                           "if the values really are this large")
    if value in sentinels:
        return math.nan
    return value


def looks_numeric(text: str, *, decimal_comma: bool) -> bool:
    """Whether the cell would read as a number or a missing value, without raising."""
    try:
        parse_number(text, decimal_comma=decimal_comma)
    except CellError:
        return False
    return True


def has_decimal_comma(cell: str) -> bool:
    """Whether the cell is a number written with a decimal comma, such as 1,5."""
    return bool(_DECIMAL_COMMA.fullmatch(cell))


def _why_not_a_number(text: str, cell: str, decimal_comma: bool) -> tuple[str, str]:
    if not decimal_comma and has_decimal_comma(cell):
        return (f"{shown(text)} is not a number with a decimal point",
                "If the comma is a decimal comma, turn on the decimal-comma option; "
                "if it separates thousands, remove it")
    if "," in cell and "." in cell:
        return (f"{shown(text)} mixes '.' and ',' (thousands separators are not read)",
                "Write the number without thousands separators, e.g. 1234.5")
    return (f"{shown(text)} is not a number",
            "Put a number in this cell, or leave it blank (or write NA) if the value is missing")
