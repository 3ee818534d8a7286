"""What a caller may ask of ingestion, and the checks on those requests."""

from __future__ import annotations

import math
from dataclasses import dataclass

from app.errors import ClaimError, Location

DEFAULT_MIN_MONTHS_PER_YEAR = 10


@dataclass(frozen=True)
class IngestOptions:
    """How to read a series.

    ``anomaly_base`` is a half-open interval [start, end) on the decimal-year axis: the thirty years
    1961-1990 are ``(1961, 1991)``. ``min_months_per_year`` is the least number of valid months a
    calendar year needs to get an annual mean; a year with fewer is dropped and listed in the notes.
    """

    time_column: str | None = None
    value_column: str | None = None
    decimal_comma: bool = False
    missing_sentinels: tuple[float, ...] = ()
    anomaly_base: tuple[float, float] | None = None
    annual_means: bool = False
    min_months_per_year: int = DEFAULT_MIN_MONTHS_PER_YEAR
    label: str = ""
    units: str = ""
    max_points: int = 200_000
    sheet: str | None = None  # the spreadsheet sheet to read; by default the first that holds a table
    header_row: int | None = None  # the 1-based row naming the columns in a sheet or text file; found by default


def check_options(options: IngestOptions) -> None:
    """Reject option values that cannot mean anything, before any data is read."""
    if not isinstance(options.max_points, int) or options.max_points < 1:
        raise ClaimError(f"max_points must be a positive whole number, not {options.max_points!r}",
                         location=Location(field="options.max_points"), fix="Give a limit of at least 1.")
    if options.header_row is not None and (not isinstance(options.header_row, int) or options.header_row < 1):
        raise ClaimError(f"header_row must be a row number from 1, not {options.header_row!r}",
                         location=Location(field="options.header_row"), fix="Give the row that names the columns.")
    months = options.min_months_per_year
    if not isinstance(months, int) or isinstance(months, bool) or not 1 <= months <= 12:
        raise ClaimError(f"min_months_per_year must be a whole number from 1 to 12, not {months!r}",
                         location=Location(field="options.min_months_per_year"),
                         fix="Use 10 (the default) or another number of months between 1 and 12.")
    for index, sentinel in enumerate(options.missing_sentinels):
        if not _is_finite_number(sentinel):
            raise ClaimError(f"missing-value sentinel {sentinel!r} is not a finite number",
                             location=Location(field=f"options.missing_sentinels[{index}]"),
                             fix="List numbers such as -999 or -99.99 that stand for a missing value.")
    if options.anomaly_base is not None:
        _check_base(options.anomaly_base)


def _check_base(base: object) -> None:
    where = Location(field="options.anomaly_base")
    if not isinstance(base, (tuple, list)) or len(base) != 2 or not all(_is_finite_number(b) for b in base):
        raise ClaimError(f"the anomaly base period must be two years (start, end), not {base!r}", location=where,
                         fix="Give the base period as two decimal years, e.g. (1961, 1991) for 1961-1990.")
    start, end = float(base[0]), float(base[1])
    if start >= end:
        raise ClaimError(f"the anomaly base period starts at {start:g} but ends at {end:g}", location=where,
                         fix="Give the earlier year first; the end is exclusive, so 1961-1990 is (1961, 1991).")


def _is_finite_number(value: object) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)
