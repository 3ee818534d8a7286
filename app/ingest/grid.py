"""A table found in a grid of cells (a sheet, a plain-text file): its header row, its data block, what lies around.

Titles, merged title rows and notes above the table are skipped: the header is the first row with at least two
filled cells, not all numbers, followed by a row holding at least two numbers or times (a row or two of units or
sources may sit between them). The data block runs from there to the first blank row or row of text alone. Notes
after it are ignored and said so; a second block of data after it is refused, since which of the two is the series
would be a guess.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

from app.errors import Location, SeriesFormatError
from app.ingest.cells import shown
from app.ingest.csv_table import RawTable, column_names
from app.ingest.limits import ReadLimits, refuse_cells, refuse_columns, refuse_rows
from app.ingest.numbers import is_missing, looks_numeric
from app.ingest.times import parses_as_time

HEADER_SEARCH_ROWS = 200  # a header further down than this is not a title block; our requirement
UNITS_ROWS = 2  # rows of text (units, sources) allowed between the header and the data; our requirement


@dataclass(frozen=True)
class GridRow:
    number: int  # 1-based, as a person sees it in a spreadsheet or editor
    cells: tuple[str, ...]


@dataclass(frozen=True)
class FoundTable:
    table: RawTable
    reading: tuple[str, ...]  # what was skipped or ignored, for the preview


def is_blank(row: GridRow) -> bool:
    return not any(cell.strip() for cell in row.cells)


def _holds_data(row: GridRow) -> bool:
    """At least two cells read as numbers or times (a missing marker does not count)."""
    return sum(1 for c in row.cells if c.strip() and not is_missing(c) and _datum(c)) >= 2


def _datum(cell: str) -> bool:
    return looks_numeric(cell, decimal_comma=False) or parses_as_time(cell)


def _is_text_only(row: GridRow) -> bool:
    return not any(c.strip() and not is_missing(c) and _datum(c) for c in row.cells)


@dataclass(frozen=True)
class Block:
    """Indices into the rows: the header, the first data row (a units row may sit between) and one past the last."""

    header: int
    first: int
    end: int


def locate_block(rows: Sequence[GridRow], header_row: int | None) -> Block:
    """The header (the row asked for, else the first that fits; see the module) and the data block under it."""
    if header_row is not None:
        header = _asked_header(rows, header_row)
        first = _first_data(rows, header, UNITS_ROWS)
        if first is None:
            raise SeriesFormatError(f"no rows of numbers follow row {header_row}, chosen as the header",
                                    location=Location(row=header_row), fix="Choose the row naming the columns")
        return Block(header, first, _block_end(rows, first))
    # First a header right above its data; only then one with a units row or two between, as wide as the data
    # (so a title line of several words above the header is not taken for it).
    # Of several such rows above the same data, the nearest is the header.
    for between in (0, UNITS_ROWS):
        fits = [(index, _header_fit(rows, index, between)) for index in range(min(len(rows), HEADER_SEARCH_ROWS))]
        fits = [(index, first) for index, first in fits if first is not None]
        if fits:
            first = fits[0][1]
            header = max(index for index, start in fits if start == first)
            return Block(header, first, _block_end(rows, first))
    first_row = next((r.number for r in rows if not is_blank(r)), 1)
    raise SeriesFormatError("no header row followed by rows of numbers was found", location=Location(row=first_row),
                            fix="Put a row naming the columns (e.g. year, value) right above the data, "
                                "or choose the header row by number")


def _header_fit(rows: Sequence[GridRow], index: int, between: int) -> int | None:
    """The first data row under ``rows[index]`` if that row can be the header, else None."""
    filled = [c for c in rows[index].cells if c.strip()]
    if len(filled) < 2 or all(_datum(c) for c in filled):
        return None
    first = _first_data(rows, index, between)
    if first is None or (first != _next_filled(rows, index) and _width(rows[first]) != _width(rows[index])):
        return None
    return first


def _asked_header(rows: Sequence[GridRow], header_row: int) -> int:
    for index, row in enumerate(rows):
        if row.number == header_row and not is_blank(row):
            return index
    raise SeriesFormatError(f"row {header_row}, chosen as the header, is empty or outside the table",
                            location=Location(row=header_row), fix="Choose the row naming the columns")


def _first_data(rows: Sequence[GridRow], header: int, between: int) -> int | None:
    """The first row of data under the header, past at most ``between`` rows of text (units, sources)."""
    text_rows = 0
    for index in range(header + 1, len(rows)):
        if is_blank(rows[index]):
            continue
        if _holds_data(rows[index]):
            return index
        text_rows += 1
        if text_rows > between:
            return None
    return None


def _next_filled(rows: Sequence[GridRow], index: int) -> int | None:
    return next((i for i in range(index + 1, len(rows)) if not is_blank(rows[i])), None)


def _width(row: GridRow) -> int:
    cells = list(row.cells)
    while cells and not cells[-1].strip():
        cells.pop()
    return len(cells)


def _block_end(rows: Sequence[GridRow], first: int) -> int:
    """The index after the last data row of the block starting at ``first``."""
    end = first + 1
    while end < len(rows) and not is_blank(rows[end]) and not _is_text_only(rows[end]):
        end += 1
    return end


def table_from_grid(rows: Sequence[GridRow], *, kind: str, header_row: int | None, limits: ReadLimits,
                    ragged: str) -> FoundTable:
    """The table in ``rows``. ``ragged`` says what a data row longer or shorter than the header gets: "pad" (a
    sheet: short rows are padded with blanks, cells right of the header are ignored) or "refuse" (plain text)."""
    if not any(not is_blank(r) for r in rows):
        raise SeriesFormatError("the file is empty", location=Location(row=1),
                                fix="Upload a table with a header row (e.g. year, value) and one row per time")
    block = locate_block(rows, header_row)
    header = rows[block.header]
    last = Location(row=rows[block.end - 1].number)
    refuse_rows(block.end - block.first, limits, last)
    header_cells = header.cells[:_width(header)]
    refuse_columns(len(header_cells), limits, Location(row=header.number))
    refuse_cells(len(header_cells) * (block.end - block.first), limits, last)
    names = column_names(list(header_cells), header.number)
    data = [r for r in rows[block.first:block.end] if not is_blank(r)]
    cells, cut_right = _fit_rows(data, len(names), ragged)
    reading = _skipped(rows, block)
    if cut_right:
        reading.append(f"ignored cells right of the table's last column ({names[-1]}) on {cut_right} rows")
    reading.extend(_after_block(rows, block.end))
    table = RawTable(delimiter=kind, header_row=header.number, names=names, rows=tuple(r.number for r in data),
                     cells=cells)
    return FoundTable(table=table, reading=tuple(reading))


def _fit_rows(data: list[GridRow], width: int, ragged: str) -> tuple[tuple[tuple[str, ...], ...], int]:
    """Every data row as wide as the header, and how many rows had cells right of it cut off."""
    cut_right = 0
    fitted = []
    for row in data:
        cells = row.cells
        if len(cells) != width:
            if ragged == "refuse" and (len(cells) < width or any(c.strip() for c in cells[width:])):
                raise SeriesFormatError(f"the row has {len(cells)} fields but the header has {width}",
                                        location=Location(row=row.number),
                                        fix=f"Give every row {width} fields, one per header column, or mark a "
                                            "missing value with NA")
            cut_right += any(c.strip() for c in cells[width:])
            cells = tuple(cells[:width]) + ("",) * (width - len(cells))
        fitted.append(tuple(cells))
    return tuple(fitted), cut_right


def _skipped(rows: Sequence[GridRow], block: Block) -> list[str]:
    """What the preview says about the rows above the data that are not the header."""
    reading = []
    above = sum(1 for r in rows[:block.header] if not is_blank(r))
    if above:
        reading.append(f"skipped {above} row{'s' * (above != 1)} of titles or notes above the header "
                       f"(row {rows[block.header].number})")
    between = [r.number for r in rows[block.header + 1:block.first] if not is_blank(r)]
    if between:
        reading.append(f"skipped row{'s' * (len(between) != 1)} {', '.join(map(str, between))} of text between the "
                       "header and the data (units or sources)")
    return reading


def _after_block(rows: Sequence[GridRow], end: int) -> list[str]:
    rest = [r for r in rows[end:] if not is_blank(r)]
    second = next((r for r in rest if _holds_data(r)), None)
    if second is not None:
        raise SeriesFormatError(f"a second block of data starts at row {second.number}, after the table that "
                                f"ends at row {rows[end - 1].number}", location=Location(row=second.number),
                                fix="Keep one table per file or sheet (delete or move the other block), or remove "
                                    "the blank line if the two blocks are one table")
    if not rest:
        return []
    return [f"ignored {len(rest)} row{'s' * (len(rest) != 1)} of notes after the data (from row {rest[0].number}: "
            f"{shown(' '.join(c for c in rest[0].cells if c.strip()))})"]
