"""A CSV text as a header and rows of cells, each row with its line number in the file.

Lines whose first visible character is ``#`` are comments and are skipped, as are blank lines; row
numbers still count them, so an error names the line a person sees in an editor.
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from typing import Iterator

from app.errors import LimitExceeded, Location, SeriesFormatError
from app.ingest.cells import shown
from app.ingest.numbers import is_missing, looks_numeric
from app.ingest.times import parses_as_time

DELIMITERS = ("\t", ";", ",")  # in order of preference when two fit equally well: a comma also appears in numbers
DELIMITER_NAMES = {",": "comma", ";": "semicolon", "\t": "tab"}
SNIFF_LINES = 30
ONE_COLUMN_FIX = "Separate the columns with a comma, semicolon or tab (spaces alone are not read as separators)"


@dataclass(frozen=True)
class RawTable:
    delimiter: str
    header_row: int
    names: tuple[str, ...]
    rows: tuple[int, ...]  # the file line of each data row
    cells: tuple[tuple[str, ...], ...]  # one tuple per data row, as long as the header


def read_table(text: str, *, max_rows: int) -> RawTable:
    lines = [line for _, line in _content_lines(text, SNIFF_LINES)]
    if not lines:
        raise SeriesFormatError("the file is empty", location=Location(row=1),
                                fix="Upload a CSV file with a header row (e.g. time,value) and one row per time")
    delimiter = sniff_delimiter(lines)
    records = _records(text, delimiter)
    header_row, header = next(records, (1, []))
    names = column_names(header, header_row)
    rows: list[int] = []
    cells: list[tuple[str, ...]] = []
    for row, fields in records:
        if not any(field.strip() for field in fields):
            continue  # spreadsheets export empty rows as a line of separators
        if len(rows) >= max_rows:
            raise LimitExceeded(f"the file has more than {max_rows:,} data rows, the most this service reads",
                                location=Location(row=row), fix="Send a shorter series, or monthly or annual means")
        rows.append(row)
        cells.append(_fit_to_header(fields, names, row, delimiter))
    return RawTable(delimiter=delimiter, header_row=header_row, names=names, rows=tuple(rows), cells=tuple(cells))


def sniff_delimiter(lines: list[str]) -> str:
    """The delimiter that splits every sampled line into the same number (more than one) of fields.

    When none does, the one that splits the header into most fields, so ragged rows are reported against it."""
    widths = {d: [len(fields) for fields in _lenient_reader(lines, d)] for d in DELIMITERS}
    consistent = [d for d in DELIMITERS if widths[d][0] > 1 and len(set(widths[d])) == 1]
    pool = consistent or list(DELIMITERS)
    return max(pool, key=lambda d: widths[d][0])  # max keeps the first of equals, so the preference order holds


def _lenient_reader(lines: list[str], delimiter: str) -> list[list[str]]:
    try:
        return [fields or [""] for fields in csv.reader(lines, delimiter=delimiter)]
    except csv.Error:
        return [[""]]


def _content_lines(text: str, most: int | None = None) -> Iterator[tuple[int, str]]:
    """(line number, line) of the lines that are neither blank nor comments."""
    found = 0
    for number, line in enumerate(io.StringIO(text, newline=""), start=1):
        visible = line.strip()
        if not visible or visible.startswith("#"):
            continue
        yield number, line
        found += 1
        if most is not None and found >= most:
            return


def _records(text: str, delimiter: str) -> Iterator[tuple[int, list[str]]]:
    numbers: list[int] = []

    def feed() -> Iterator[str]:
        for number, line in _content_lines(text):
            numbers.append(number)
            yield line

    reader = csv.reader(feed(), delimiter=delimiter, strict=True)
    consumed = 0
    while True:
        try:
            fields = next(reader)
        except StopIteration:
            return
        except csv.Error as error:
            row = numbers[min(consumed, len(numbers) - 1)] if numbers else 1
            raise SeriesFormatError(f"the quotes on this line do not pair up ({error})", location=Location(row=row),
                                    fix="Check the quotes: a quoted field must end with a quote before the next "
                                        "separator") from None
        start = numbers[consumed]
        if reader.line_num - consumed > 1:
            raise SeriesFormatError("a quoted field runs on over several lines (is a closing quote missing?)",
                                    location=Location(row=start), fix="Close the quote on the same line")
        consumed = reader.line_num
        yield start, fields


def column_names(header: list[str], row: int) -> tuple[str, ...]:
    names = [name.strip() for name in header]
    while names and not names[-1]:
        names.pop()  # a trailing separator on the header line adds no column
    if len(names) < 2:
        raise SeriesFormatError(f"the header has only one column ({shown(names[0] if names else '')}); a series needs "
                                "a time column and a value column", location=Location(row=row), fix=ONE_COLUMN_FIX)
    if all(not is_missing(n) and (parses_as_time(n) or looks_numeric(n, decimal_comma=True)) for n in names):
        raise SeriesFormatError(f"the first row holds data ({shown(','.join(names))}), not column names",
                                location=Location(row=row),
                                fix="Add a header line naming the columns, e.g. time,value")
    names = [name or f"column {index + 1}" for index, name in enumerate(names)]
    seen: set[str] = set()
    for name in names:  # a set, not a scan of the names before: a header may have thousands of columns
        if name in seen:
            raise SeriesFormatError(f"two columns are named {shown(name)}", location=Location(row=row, column=name),
                                    fix="Give every column its own name")
        seen.add(name)
    return tuple(names)


def _fit_to_header(fields: list[str], names: tuple[str, ...], row: int, delimiter: str) -> tuple[str, ...]:
    width = len(names)
    if len(fields) > width and not any(f.strip() for f in fields[width:]):
        fields = fields[:width]  # trailing separators add no values
    if len(fields) != width:
        fix = f"Give every row {width} fields, one per header column"
        if delimiter == "," and len(fields) > width:
            fix += "; if numbers are written with a decimal comma, separate the columns with ';' or quote the numbers"
        raise SeriesFormatError(f"the row has {len(fields)} fields but the header has {width} "
                                f"({DELIMITER_NAMES[delimiter]}-separated)", location=Location(row=row), fix=fix)
    return tuple(fields)
