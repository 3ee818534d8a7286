"""A year-by-month (or year-by-quarter) table read into one series: a row per year, a column per month.

Month columns are recognised by English month names or abbreviations (Jan, January, Sept), by number (1..12, 01..12)
or as M01..M12; quarter columns as Q1..Q4, Qtr1 or Quarter 1. An annual column (Annual, Ann, Mean, J-D, Total...)
and quarter columns beside month columns are cross-checked against the months and never used as values; other
columns (seasons such as DJF) are ignored and listed. Blank months before the first value and after the last
(the months of the current year not yet measured) are not counted as missing.
"""

from __future__ import annotations

import calendar
import math
import re
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from app.errors import Location, SeriesFormatError
from app.ingest.build import BuiltSeries, build_series
from app.ingest.cells import CellError, shown, short_list
from app.ingest.columns import YEAR_NAMES, normal_name
from app.ingest.csv_table import RawTable
from app.ingest.locations import GridPlaces
from app.ingest.numbers import is_missing, parse_number
from app.ingest.options import IngestOptions

_MONTH_WORDS = {name.lower(): i for i, name in enumerate(calendar.month_name) if name}
_MONTH_WORDS.update({name.lower(): i for i, name in enumerate(calendar.month_abbr) if name})
_MONTH_WORDS["sept"] = 9
_MONTH_CODE = re.compile(r"m?0?([1-9]|1[0-2])")
_QUARTER_CODE = re.compile(r"(?:q|qtr|quarter) ?([1-4])")
ANNUAL_NAMES = frozenset({"annual", "ann", "annual mean", "annual average", "year mean", "yearly", "mean", "average",
                          "avg", "j d", "jan dec", "total", "annual total", "sum"})


@dataclass(frozen=True)
class WideLayout:
    name: str  # "year-by-month" | "year-by-quarter"
    year: int  # column of the year
    periods: tuple[int, ...]  # column of each month (or quarter), in calendar order
    checks: tuple[tuple[int, tuple[int, ...]], ...]  # (annual or quarter column, the periods it should summarise)
    ignored: tuple[int, ...]  # every other column


@dataclass(frozen=True)
class WideRead:
    built: BuiltSeries
    value_column: str  # "Jan ... Dec"
    missing_rows: tuple[int, ...]  # rows holding a missing month
    reading: tuple[str, ...]


def month_number(name: str) -> int | None:
    key = normal_name(name)
    if key in _MONTH_WORDS:
        return _MONTH_WORDS[key]
    match = _MONTH_CODE.fullmatch(key.replace(" ", ""))
    return int(match.group(1)) if match else None


def quarter_number(name: str) -> int | None:
    match = _QUARTER_CODE.fullmatch(normal_name(name))
    return int(match.group(1)) if match else None


def find_wide_layout(table: RawTable) -> WideLayout | None:
    """The table's year-by-month (else year-by-quarter) layout, or None when it is not one."""
    year = _year_column(table)
    if year is None:
        return None
    others = [i for i in range(len(table.names)) if i != year]
    months = _each_once(others, table.names, month_number, 12)
    quarters = _each_once(others, table.names, quarter_number, 4)
    annual = next((i for i in others if normal_name(table.names[i]) in ANNUAL_NAMES), None)
    if months is not None:
        checks = [(q, tuple(months[3 * k:3 * k + 3])) for k, q in enumerate(quarters or ())]
        name, periods = "year-by-month", months
    elif quarters is not None:
        checks, name, periods = [], "year-by-quarter", quarters
    else:
        return None
    if annual is not None:
        checks.append((annual, tuple(periods)))
    used = {year, *periods, *(c for c, _ in checks)}
    return WideLayout(name=name, year=year, periods=tuple(periods), checks=tuple(checks),
                      ignored=tuple(i for i in range(len(table.names)) if i not in used))


def _year_column(table: RawTable) -> int | None:
    for i, name in enumerate(table.names):
        if normal_name(name) in YEAR_NAMES:
            return i
    return None


def _each_once(columns: Sequence[int], names: Sequence[str], number, count: int) -> list[int] | None:
    found: dict[int, list[int]] = {}
    for i in columns:
        n = number(names[i])
        if n is not None:
            found.setdefault(n, []).append(i)
    if sorted(found) != list(range(1, count + 1)) or any(len(v) != 1 for v in found.values()):
        return None
    return [found[n][0] for n in range(1, count + 1)]


def read_wide(table: RawTable, layout: WideLayout, options: IngestOptions, *, decimal_comma: bool) -> WideRead:
    names = table.names
    years = [_year(table, r, layout.year) for r in range(len(table.cells))]
    per = len(layout.periods)
    label = "{:04d}-{:02d}" if per == 12 else "{:04d}-Q{}"
    times = [label.format(y, k + 1) for y in years for k in range(per)]
    cells = [row[c] for row in table.cells for c in layout.periods]
    rows = [table.rows[r] for r in range(len(table.cells)) for _ in range(per)]
    columns = [names[c] for _ in table.cells for c in layout.periods]
    value_column = f"{names[layout.periods[0]]} ... {names[layout.periods[-1]]}"
    present = [not _missing(c, decimal_comma, options.missing_sentinels) for c in cells]
    first = present.index(True) if any(present) else 0
    last = len(present) - present[::-1].index(True) if any(present) else len(present)
    places = GridPlaces(rows=rows[first:last], columns=columns[first:last], time_column=names[layout.year],
                        value_columns=value_column)
    built = build_series(times[first:last], cells[first:last], places, options, label=options.label or value_column,
                         units=options.units, decimal_comma=decimal_comma)
    labels = built.series.time_labels
    reading = [f"read as a year-by-month table ({value_column}, one row per year): first month {labels[0]}, "
               f"last month {labels[-1]}" if per == 12 else
               f"read as a year-by-quarter table ({value_column}, one row per year): first quarter {labels[0]}, "
               f"last quarter {labels[-1]}"]
    if first or last < len(cells):
        reading.append(f"blank {'months' if per == 12 else 'quarters'} before the first value and after the last "
                       "were not counted as missing")
    values = _numbers(table, layout.periods, decimal_comma, options.missing_sentinels)
    reading += [_cross_check(table, column, group, values, layout, decimal_comma) for column, group in layout.checks]
    if layout.ignored:
        reading.append(f"ignored columns: {short_list([names[i] for i in layout.ignored])}")
    missing_rows = tuple(sorted({places.rows[i] for i in built.missing_indices}))
    return WideRead(built=built, value_column=value_column, missing_rows=missing_rows, reading=tuple(reading))


def _year(table: RawTable, index: int, column: int) -> int:
    text = table.cells[index][column]
    where = Location(row=table.rows[index], column=table.names[column])
    try:
        number = parse_number(text, decimal_comma=False)
    except CellError as error:
        raise SeriesFormatError(error.message, location=where, fix="Write the year as a whole number, e.g. 1998")
    if math.isnan(number) or number != int(number) or not 1 <= number <= 9999:
        raise SeriesFormatError(f"{shown(text)} is not a year", location=where,
                                fix="Write the year as a whole number from 1 to 9999, one row per year")
    return int(number)


def _missing(text: str, decimal_comma: bool, sentinels: tuple[float, ...]) -> bool:
    try:
        return math.isnan(parse_number(text, decimal_comma=decimal_comma, sentinels=sentinels))
    except CellError:
        return is_missing(text)


def _numbers(table: RawTable, columns: Sequence[int], decimal_comma: bool, sentinels) -> np.ndarray:
    """The cells of ``columns`` as numbers, NaN where missing or unreadable (for cross-checks only)."""
    out = np.full((len(table.cells), len(columns)), np.nan)
    for r, row in enumerate(table.cells):
        for k, c in enumerate(columns):
            try:
                out[r, k] = parse_number(row[c], decimal_comma=decimal_comma, sentinels=sentinels)
            except CellError:
                pass
    return out


def _decimals(text: str) -> int:
    digits = text.strip().replace(",", ".").split(".")
    return len(re.match(r"\d*", digits[1]).group()) if len(digits) > 1 else 0


def _cross_check(table: RawTable, column: int, group: tuple[int, ...], values: np.ndarray, layout: WideLayout,
                 decimal_comma: bool) -> str:
    """Whether the column holds the mean (or the sum) of its months in every year where all of them are present.

    Both sides were rounded when written: they may differ by half a unit in the last place of each. Common
    practice, no source."""
    name = table.names[column]
    parts = values[:, [layout.periods.index(c) for c in group]]
    written = _numbers(table, (column,), decimal_comma, ())[:, 0]
    complete = ~np.isnan(parts).any(axis=1) & ~np.isnan(written)
    if not complete.any():
        return f"column {shown(name)} not checked: no year has it and all its {len(group)} periods"
    part_places = max((_decimals(row[c]) for row in table.cells for c in group), default=0)
    slack = np.array([0.5 * 10.0 ** -_decimals(row[column]) for row in table.cells]) + 0.5 * 10.0 ** -part_places
    slack = slack + 1e-9 * np.abs(np.nan_to_num(written))
    mean_fits = np.abs(parts.mean(axis=1) - written) <= slack
    sum_fits = np.abs(parts.sum(axis=1) - written) <= slack * len(group)
    n = int(complete.sum())
    for fits, what in ((mean_fits, "mean"), (sum_fits, "sum")):
        if fits[complete].all():
            return f"column {shown(name)} matches the {what} of its {len(group)} periods in all {n} complete years " \
                   "(cross-checked, not used)"
    bad = np.flatnonzero(complete & ~mean_fits)
    return (f"column {shown(name)} differs from the mean of its {len(group)} periods in {bad.size} of {n} complete "
            f"years (first at row {table.rows[bad[0]]}); it was not used: check the table")
