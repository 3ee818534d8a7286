"""Spreadsheet cells as the text the table readers take, and a sheet's rows gathered within the limits."""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass
from typing import Callable, Iterable, Sequence

from app.errors import InputError, Location
from app.ingest.cells import shown
from app.ingest.grid import HEADER_SEARCH_ROWS, GridRow
from app.ingest.limits import ReadLimits, refuse_cells, refuse_columns, refuse_rows


@dataclass(frozen=True)
class Workbook:
    """The sheets of a workbook in order; ``rows(name)`` reads one sheet when it is asked for."""

    sheets: tuple[str, ...]
    tables: tuple[str, ...]  # the sheets that hold cells (worksheets), in order; chart sheets are left out
    rows: Callable[[str], list[GridRow]]


def cell_text(value: object) -> str:
    """A cell value as the text a CSV cell would hold: dates as ISO dates, whole numbers without '.0'."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "TRUE" if value else "FALSE"
    if isinstance(value, dt.datetime):
        return value.date().isoformat() if value.time() == dt.time(0) else value.isoformat()
    if isinstance(value, (dt.date, dt.time)):
        return value.isoformat()
    if isinstance(value, float):
        if math.isfinite(value) and value.is_integer() and abs(value) < 1e15:
            return str(int(value))
        return repr(value)
    return str(value).strip()


def gather_rows(numbered: Iterable[tuple[int, Sequence[str]]], sheet: str, limits: ReadLimits) -> list[GridRow]:
    """The sheet's rows with trailing blank cells dropped, refused at the first row or cell past the limits.

    Rows above the table (titles, notes) are allowed on top of ``max_rows``, up to the header search depth."""
    rows: list[GridRow] = []
    cells = 0
    for number, values in numbered:
        values = list(values)
        while values and not values[-1]:
            values.pop()
        if not values:
            continue
        refuse_columns(len(values), limits, Location(row=number, column=sheet_column(len(values))))
        cells += len(values)
        refuse_cells(cells, limits, Location(row=number))
        rows.append(GridRow(number, tuple(values)))
        refuse_rows(len(rows) - HEADER_SEARCH_ROWS, limits, Location(row=number))
    return rows


def sheet_column(number: int) -> str:
    """A 1-based column number as spreadsheet letters: 1 -> A, 28 -> AB."""
    letters = ""
    while number > 0:
        number, rest = divmod(number - 1, 26)
        letters = chr(65 + rest) + letters
    return letters


def in_sheet(error: InputError, sheet: str) -> InputError:
    """The error with the sheet named in its message and in ``extra`` (a Location holds rows and columns only)."""
    error.message = f"in sheet {shown(sheet)}, {error.message}"
    error.extra.setdefault("sheet", sheet)
    error.args = (error.detail,)
    return error
