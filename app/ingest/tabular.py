"""From a table of cells (CSV, plain text, a sheet) to what the preview shows and the series an audit uses.

Every reader ends here: the columns are chosen (``app.ingest.columns``), a year-by-month or year-by-quarter table is
read into one series (``app.ingest.wide_table``), and the other numeric columns come along on the same times.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

from app.errors import Location, SeriesFormatError
from app.ingest.build import BuiltSeries, build_series, parse_value_column, series_on_axis
from app.ingest.columns import ColumnChoice, choose_columns
from app.ingest.csv_table import RawTable
from app.ingest.locations import CsvPlaces
from app.ingest.numbers import is_missing
from app.ingest.options import IngestOptions
from app.ingest.series import Series
from app.ingest.transform import annual_means
from app.ingest.wide_table import find_wide_layout, read_wide

PREVIEW_ROWS = 5


@dataclass(frozen=True)
class ParsedTable:
    """What the browser preview shows: the columns as read, the choices made, and the series that came out."""

    columns: tuple[str, ...]
    time_column: str
    value_column: str
    numeric_columns: tuple[str, ...]  # every column of numbers except the time, the value column included
    head: tuple[tuple[str, ...], ...]  # the first data rows as written
    tail: tuple[tuple[str, ...], ...]  # the last data rows as written, never repeating a row of ``head``
    series: Series
    extra_columns: dict[str, Series]  # the other numeric columns on the same times (no anomalies applied)
    delimiter: str  # ",", ";", "\t"; "whitespace" or "fixed-width" for plain text; "spreadsheet"
    n_rows: int
    n_missing: int  # data rows (year-by-month: months) with no value
    month_column: str | None = None  # read together with ``time_column`` (a year) as year-months
    missing_rows: tuple[int, ...] = ()  # file lines of the rows with no value
    gaps: tuple[str, ...] = field(default=())  # grid periods with no row at all, e.g. "1999-03"
    layout: str = "long"  # "long": one row per time; "year-by-month" / "year-by-quarter": one row per year
    reading: tuple[str, ...] = ()  # what the reader did beyond the plain case: rows skipped, notes ignored, checks
    sheets: tuple[str, ...] = ()  # every sheet of a spreadsheet, in workbook order
    sheet: str | None = None  # the sheet read
    header_row: int = 1


def parsed_from_table(table: RawTable, options: IngestOptions, *, decimal_comma: bool,
                      reading: tuple[str, ...] = ()) -> ParsedTable:
    layout = find_wide_layout(table) if options.value_column is None else None
    if layout is not None:
        return _wide(table, layout, options, decimal_comma, reading)
    choice = choose_columns(table, options, decimal_comma=decimal_comma)
    names = table.names
    places = CsvPlaces(rows=table.rows, time_column=names[choice.time], value_column=names[choice.value])
    built = build_series(_time_cells(table, choice), [row[choice.value] for row in table.cells], places, options,
                         label=options.label or names[choice.value], units=options.units, decimal_comma=decimal_comma)
    series = _with_column_note(built.series, names[choice.value])
    extras = {names[i]: _extra_series(table, i, built, places, options, decimal_comma) for i in choice.numeric
              if i != choice.value}
    head, tail = _ends(table)
    return ParsedTable(
        columns=names, time_column=names[choice.time], value_column=names[choice.value],
        numeric_columns=tuple(names[i] for i in choice.numeric), head=head, tail=tail, series=series,
        extra_columns=extras, delimiter=table.delimiter, n_rows=len(table.cells), n_missing=len(built.missing_indices),
        month_column=names[choice.month] if choice.month is not None else None,
        missing_rows=tuple(table.rows[i] for i in built.missing_indices), gaps=built.gap_labels,
        reading=reading, header_row=table.header_row)


def _wide(table: RawTable, layout, options: IngestOptions, decimal_comma: bool,
          reading: tuple[str, ...]) -> ParsedTable:
    wide = read_wide(table, layout, options, decimal_comma=decimal_comma)
    head, tail = _ends(table)
    return ParsedTable(
        columns=table.names, time_column=table.names[layout.year], value_column=wide.value_column,
        numeric_columns=(wide.value_column,), head=head, tail=tail,
        series=_with_column_note(wide.built.series, wide.value_column), extra_columns={},
        delimiter=table.delimiter, n_rows=len(table.cells), n_missing=len(wide.missing_rows),
        missing_rows=wide.missing_rows, gaps=wide.built.gap_labels, layout=layout.name,
        reading=reading + wide.reading, header_row=table.header_row)


def _with_column_note(series: Series, column: str) -> Series:
    return replace(series, notes=(f"value column: {column}",) + series.notes)


def _ends(table: RawTable) -> tuple[tuple[tuple[str, ...], ...], tuple[tuple[str, ...], ...]]:
    head = table.cells[:PREVIEW_ROWS]
    tail = table.cells[max(PREVIEW_ROWS, len(table.cells) - PREVIEW_ROWS):]
    return head, tail


def _time_cells(table: RawTable, choice: ColumnChoice) -> list[str]:
    if choice.month is None:
        return [row[choice.time] for row in table.cells]
    return [_year_month(table, index, choice) for index in range(len(table.cells))]


def _year_month(table: RawTable, index: int, choice: ColumnChoice) -> str:
    """A year cell and a month cell as one year-month label, 1998-03."""
    row = table.cells[index]
    numbers = []
    for column, low, high, what in ((choice.time, 1, 9999, "year"), (choice.month, 1, 12, "month")):
        text = row[column].strip()
        where = Location(row=table.rows[index], column=table.names[column])
        if is_missing(text):
            raise SeriesFormatError(f"the {what} is missing", location=where, fix="Fill in the time, or delete the row")
        number = int(float(text))  # the column was chosen because every cell is a whole number
        if not low <= number <= high:
            raise SeriesFormatError(f"{what} {number} is out of range {low}-{high}", location=where,
                                    fix=f"Give the {what} as a number from {low} to {high}")
        numbers.append(number)
    return f"{numbers[0]:04d}-{numbers[1]:02d}"


def _extra_series(table: RawTable, column: int, built: BuiltSeries, places: CsvPlaces, options: IngestOptions,
                  decimal_comma: bool) -> Series:
    """Another column of numbers on the series' times: its own missing values, the same annual means."""
    name = table.names[column]
    values = parse_value_column([row[column] for row in table.cells], replace(places, value_column=name),
                                decimal_comma=decimal_comma, sentinels=options.missing_sentinels)
    series = series_on_axis(built.axis, values, built.sampling, label=name, units="")
    return annual_means(series, options.min_months_per_year) if options.annual_means else series
