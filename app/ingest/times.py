"""Reading times onto one decimal-year axis.

One convention, mid-period, everywhere:
- an integer year ``1998`` sits at mid-year, 1998.5;
- a year-month ``1998-03`` sits at mid-month, 1998 + (3 - 0.5) / 12;
- a quarter ``1998-Q2`` sits at mid-quarter, 1998 + (2 - 0.5) / 4;
- a date ``1998-03-15`` sits at mid-day, 1998 + (day_of_year - 0.5) / days_in_year; a time of day
  (``1998-03-15T06:00:00Z``) is read but not used, so dates are read to the day, as written, in their own
  time zone;
- a decimal year ``1998.54`` is taken as written. When a column of numbers has any decimal year in it,
  the whole column is taken as written, integers included (``1999`` is then 1999.0, not 1999.5).
"""

from __future__ import annotations

import calendar
import datetime as dt
import re
from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np

from app.errors import Location, SeriesFormatError
from app.ingest.cells import CellError, shown
from app.ingest.numbers import has_decimal_comma, is_missing, normalise, parse_number

# Decimal years beyond this are not calendar times a trend audit could mean; the bound also keeps
# grid arithmetic far from float overflow.
MAX_ABS_YEAR = 10_000_000

TIME_FORMATS_FIX = ("Write times as years (1998), decimal years (1998.54), year-months (1998-03), quarters "
                    "(1998-Q2) or dates (1998-03-15)")
FAMILY_NAMES = {"number": "years or decimal years", "month": "year-months", "quarter": "quarters",
                "date": "dates"}

_YEAR = re.compile(r"[+-]?\d+")
_MONTH = re.compile(r"(\d{4})[-/](\d{1,2})")
_QUARTER = re.compile(r"(\d{4})-?[Qq](\d+)")
_DATE = re.compile(r"(\d{4})-(\d{1,2})-(\d{1,2})(?:[T ](.*))?")


@dataclass(frozen=True)
class ParsedTime:
    decimal_year: float
    family: str  # "number" | "month" | "quarter" | "date"
    integer_year: bool  # written as a whole year: moved to mid-year unless the column has decimal years


@dataclass(frozen=True)
class TimeAxis:
    times: np.ndarray
    labels: tuple[str, ...]
    family: str
    convention: str  # how the labels were placed on the axis, for the series notes


def parse_time(text: str, *, decimal_comma: bool = False) -> ParsedTime:
    """One time cell on the decimal-year axis; CellError when it is not a time."""
    cell = normalise(text)
    if is_missing(cell):
        raise CellError("the time is missing", "Fill in the time, or delete the row")
    if any(mark in cell[1:] for mark in "-/Qq"):
        for pattern, reader in ((_DATE, _date), (_MONTH, _month), (_QUARTER, _quarter)):
            match = pattern.fullmatch(cell)
            if match:
                return reader(text, match)
    try:
        value = parse_number(cell, decimal_comma=decimal_comma)
    except CellError:
        if not decimal_comma and has_decimal_comma(cell):
            raise
        raise CellError(f"{shown(text)} is not a time this service reads", TIME_FORMATS_FIX) from None
    if abs(value) > MAX_ABS_YEAR:
        raise CellError(f"{shown(text)} is outside the years this service reads (within +-{MAX_ABS_YEAR:,})",
                        "Give times as calendar years, e.g. 1998 or 1998.54")
    if _YEAR.fullmatch(cell):
        return ParsedTime(value + 0.5, "number", integer_year=True)
    return ParsedTime(value, "number", integer_year=False)


def parses_as_time(text: str, *, decimal_comma: bool = False) -> bool:
    try:
        parse_time(text, decimal_comma=decimal_comma)
    except CellError:
        return False
    return True


def parse_time_column(cells: Sequence[str], locate: Callable[[int], Location], *,
                      decimal_comma: bool = False) -> TimeAxis:
    """Every cell as a time, all in one format; SeriesFormatError at the first cell that is not."""
    parsed: list[ParsedTime] = []
    for index, text in enumerate(cells):
        try:
            time = parse_time(text, decimal_comma=decimal_comma)
        except CellError as error:
            raise SeriesFormatError(error.message, location=locate(index), fix=error.fix) from None
        if parsed and time.family != parsed[0].family:
            raise SeriesFormatError(
                f"{shown(text)} is written as {FAMILY_NAMES[time.family]} but the first time, {shown(cells[0])}, "
                f"is written as {FAMILY_NAMES[parsed[0].family]}; one column cannot mix time formats",
                location=locate(index), fix="Write every time in the column the same way")
        parsed.append(time)
    family = parsed[0].family if parsed else "number"
    times = np.array([p.decimal_year for p in parsed], dtype=float)
    labels = tuple(normalise(text) for text in cells)
    convention = _convention(family, parsed)
    if family == "number" and not all(p.integer_year for p in parsed):
        # Undo the mid-year shift: in a column of decimal years an integer is an exact time.
        times = times - np.array([0.5 if p.integer_year else 0.0 for p in parsed])
    return TimeAxis(times=times, labels=labels, family=family, convention=convention)


def _convention(family: str, parsed: list[ParsedTime]) -> str:
    if family == "number":
        if parsed and all(p.integer_year for p in parsed):
            return "integer years placed at mid-year (year + 0.5)"
        return "decimal years taken as written"
    return {"month": "months placed at mid-month (year + (month - 0.5)/12)",
            "quarter": "quarters placed at mid-quarter (year + (quarter - 0.5)/4)",
            "date": "dates placed at mid-day (year + (day of year - 0.5)/days in year); time of day not used"}[family]


def _month(text: str, match: re.Match[str]) -> ParsedTime:
    year, month = int(match.group(1)), int(match.group(2))
    _check_month(text, month)
    return ParsedTime(year + (month - 0.5) / 12.0, "month", integer_year=False)


def _quarter(text: str, match: re.Match[str]) -> ParsedTime:
    year, quarter = int(match.group(1)), int(match.group(2))
    if not 1 <= quarter <= 4:
        raise CellError(f"{shown(text)} has quarter {quarter}, out of range 1-4", "Use Q1 to Q4")
    return ParsedTime(year + (quarter - 0.5) / 4.0, "quarter", integer_year=False)


def _date(text: str, match: re.Match[str]) -> ParsedTime:
    year, month, day = (int(match.group(i)) for i in (1, 2, 3))
    _check_month(text, month)
    if year < dt.MINYEAR:
        raise CellError(f"{shown(text)} has year {year}, before year 1", "Dates must fall in years 1 to 9999")
    try:
        date = dt.date(year, month, day)
    except ValueError:
        raise CellError(f"{shown(text)} has day {day}, which month {month} of {year} does not have",
                        "Check the day of the month") from None
    if match.group(4) is not None:
        _check_time_of_day(text, date, match.group(4))
    days_in_year = 366 if calendar.isleap(year) else 365
    return ParsedTime(year + (date.timetuple().tm_yday - 0.5) / days_in_year, "date", integer_year=False)


def _check_time_of_day(text: str, date: dt.date, time_of_day: str) -> None:
    try:
        dt.datetime.fromisoformat(f"{date.isoformat()}T{time_of_day.upper()}")
    except ValueError:
        raise CellError(f"{shown(text)} has a time of day that cannot be read",
                        "Write ISO dates such as 2001-03-15 or 2001-03-15T00:00:00Z") from None


def _check_month(text: str, month: int) -> None:
    if not 1 <= month <= 12:
        raise CellError(f"{shown(text)} has month {month}, out of range 1-12",
                        "Months run from 01 to 12; check the order is year-month(-day)")
