"""Which CSV column holds the times and which the values: by the name the caller gives, else by looking.

The time column is, in this order: the column the caller names; a year column with a month column beside it
(read together as year-months); a column with a time-like name (time, date, year, month, decimal year, ...);
a column whose name has a time word in it and whose cells all read as times; the first column whose cells all
read as times. The value column is the one the caller names, else the first other column of numbers.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Sequence

from app.errors import Location, SeriesContentError, SeriesFormatError
from app.ingest.cells import shown, short_list
from app.ingest.csv_table import RawTable
from app.ingest.numbers import is_missing, looks_numeric
from app.ingest.options import IngestOptions
from app.ingest.times import parses_as_time

TIME_NAMES = frozenset({"time", "date", "year", "month", "decimal year", "decimal date", "year decimal",
                        "fractional year", "datetime", "date time", "yr", "yyyy", "period", "year month", "t"})
YEAR_NAMES = frozenset({"year", "yr", "yyyy"})
MONTH_NAMES = frozenset({"month", "mon", "mm"})
TIME_WORDS = frozenset({"time", "date", "year", "yr", "month", "period"})
_WHOLE_NUMBER = re.compile(r"\s*[+-]?\d+\s*")


@dataclass(frozen=True)
class ColumnChoice:
    time: int
    month: int | None  # a separate month column read together with a year column
    value: int
    numeric: tuple[int, ...]  # every other column that holds only numbers, the value column included


def normal_name(name: str) -> str:
    return re.sub(r"[^0-9a-z]+", " ", name.lower()).strip()


def choose_columns(table: RawTable, options: IngestOptions, *, decimal_comma: bool) -> ColumnChoice:
    if not table.cells:
        raise SeriesContentError("the file has a header but no data rows", location=Location(row=table.header_row),
                                 fix="Add one row per time below the header")
    columns = list(zip(*table.cells))
    value = _named(table, options.value_column, "value")
    time = _named(table, options.time_column, "time")
    month = None
    if time is None:
        time, month = _find_time(table.names, columns, exclude=value, decimal_comma=decimal_comma)
    if time is None:
        raise SeriesFormatError(f"no column holds times (columns: {short_list(list(table.names))})",
                                location=Location(row=table.header_row),
                                fix="Name the time column 'time', 'date' or 'year', or choose it by name")
    if value == time:
        raise SeriesFormatError(f"the column {shown(table.names[time])} cannot be both the time and the value",
                                location=Location(row=table.header_row, column=table.names[time]),
                                fix="Choose two different columns")
    taken = {time, month}
    numeric = tuple(i for i, cells in enumerate(columns) if i not in taken and _all_numbers(cells, decimal_comma))
    if value is None:
        value = _find_value(columns, numeric, taken)
    if value is None:
        raise SeriesFormatError(f"no column besides {shown(table.names[time])} holds numbers",
                                location=Location(row=table.header_row),
                                fix="Add a column of values, or choose the value column by name")
    return ColumnChoice(time=time, month=month, value=value, numeric=numeric)


def _named(table: RawTable, name: str | None, role: str) -> int | None:
    if name is None:
        return None
    for match in (lambda n: n == name.strip(), lambda n: normal_name(n) == normal_name(name)):
        found = [i for i, n in enumerate(table.names) if match(n)]
        if found:
            return found[0]
    raise SeriesFormatError(f"there is no column named {shown(name)} for the {role}; the columns are "
                            f"{short_list([repr(n) for n in table.names])}",
                            location=Location(row=table.header_row, column=name),
                            fix="Give the column name exactly as it is written in the header")


def _find_time(names: Sequence[str], columns: list[tuple[str, ...]], *, exclude: int | None,
               decimal_comma: bool) -> tuple[int | None, int | None]:
    normal = [normal_name(n) if i != exclude else "" for i, n in enumerate(names)]
    years = [i for i, n in enumerate(normal) if n in YEAR_NAMES]
    months = [i for i, n in enumerate(normal) if n in MONTH_NAMES]
    if years and months and _all_whole(columns[years[0]]) and _all_whole(columns[months[0]]):
        return years[0], months[0]
    for i, n in enumerate(normal):
        if n in TIME_NAMES:
            return i, None
    candidates = [i for i, n in enumerate(normal) if TIME_WORDS & set(n.split())]
    candidates += [i for i in range(len(names)) if i != exclude and i not in candidates]
    for i in candidates:
        # A column of plain numbers reads as decimal years too; it is the time only if numbers remain for the value.
        leaves_values = exclude is not None or any(_all_numbers(columns[j], decimal_comma)
                                                   for j in range(len(columns)) if j != i)
        if leaves_values and _all_times(columns[i], decimal_comma):
            return i, None
    return None, None


def _find_value(columns: list[tuple[str, ...]], numeric: tuple[int, ...], taken: set) -> int | None:
    if numeric:
        return numeric[0]
    # No column is all numbers: take the first that mostly is (counting decimal commas), so that reading it
    # stops at the cell that is not a number and says so.
    for i, cells in enumerate(columns):
        present = [c for c in cells if not is_missing(c)]
        if i not in taken and present and sum(looks_numeric(c, decimal_comma=True) for c in present) * 2 >= len(present):
            return i
    return None


def _all_numbers(cells: Sequence[str], decimal_comma: bool) -> bool:
    present = [c for c in cells if not is_missing(c)]
    return bool(present) and all(looks_numeric(c, decimal_comma=decimal_comma) for c in present)


def _all_times(cells: Sequence[str], decimal_comma: bool) -> bool:
    present = [c for c in cells if not is_missing(c)]
    return bool(present) and all(parses_as_time(c, decimal_comma=decimal_comma) for c in present)


def _all_whole(cells: Sequence[str]) -> bool:
    present = [c for c in cells if not is_missing(c)]
    return bool(present) and all(_WHOLE_NUMBER.fullmatch(c) for c in present)
