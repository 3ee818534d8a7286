"""What the desk shows after reading a table and before auditing it: enough to catch a wrong column or a bad file."""

from __future__ import annotations

from dataclasses import dataclass

from markupsafe import Markup

from app.errors import InputError
from app.ingest import ParsedTable, seasonal_cycle
from app.ingest.csv_table import DELIMITER_NAMES
from app.ingest.sampling import period_label
from app.report.charts import preview_chart
from app.report.figures import inline_svg

SHOWN_PROBLEMS = 12
SAMPLING_WORDS = {"annual": "once a year", "quarterly": "once a quarter", "monthly": "once a month",
                  "irregular": "at irregular times"}


@dataclass(frozen=True)
class PreviewView:
    columns: tuple[str, ...]
    time_column: str
    value_column: str
    month_column: str | None
    value_choices: tuple[str, ...]
    head: tuple[tuple[str, ...], ...]
    tail: tuple[tuple[str, ...], ...]
    skipped_rows: int
    n_rows: int
    n_values: int
    n_missing: int
    missing_rows: tuple[int, ...]
    gaps: tuple[str, ...]
    n_gaps: int
    sampling: str
    sampling_words: str
    first: str
    last: str
    delimiter: str
    extra_columns: tuple[str, ...]
    notes: tuple[str, ...]
    chart: Markup
    layout: str = "long"
    layout_words: str = ""  # "read as a year-by-month table, 1990-01 to 2001-12"
    reading: tuple[str, ...] = ()  # what the reader did beyond the plain case
    sheets: tuple[str, ...] = ()
    sheet: str | None = None
    header_row: int = 1
    numeric_columns: tuple[str, ...] = ()
    seasonal: str = ""  # the seasonal test's finding, with the cycle's size against the noise


def how_columns_were_read(table: ParsedTable) -> str:
    """The caption's sentence on the file's columns: 'Columns separated by commas', 'Read from sheet ...'."""
    if table.delimiter == "spreadsheet":
        return f"Read from the sheet “{table.sheet}” of a spreadsheet" if table.sheet else "Read from a spreadsheet"
    if table.delimiter == "whitespace":
        return "Columns separated by spaces"
    if table.delimiter == "fixed-width":
        return "Columns read by their fixed positions"
    return f"Columns separated by {DELIMITER_NAMES.get(table.delimiter, table.delimiter)}s"  # "commas"


LAYOUT_WORDS = {"year-by-month": "a year-by-month table", "year-by-quarter": "a year-by-quarter table"}


def seasonal_words(table: ParsedTable) -> str:
    """What the seasonal test finds in a monthly or quarterly series, and what the audit will do by default."""
    series = table.series
    if series.sampling not in ("monthly", "quarterly"):
        return ""
    try:
        cycle = seasonal_cycle(series)
    except InputError:
        return ""
    then = ("by default the audit takes it out (anomalies from each calendar month's mean)" if cycle.present
            else "by default the series is audited as given")
    return f"{cycle.describe()[0].upper()}{cycle.describe()[1:]}; {then}."


def preview_view(table: ParsedTable) -> PreviewView:
    series = table.series
    label = series.label or table.value_column
    chart = inline_svg(preview_chart(series.time, series.value, label, series.units), "preview",
                       f"What was read: {label}",
                       f"Line chart of the {series.n} values read from column “{table.value_column}”, "
                       f"from {_label(series.start, series.sampling)} to {_label(series.end, series.sampling)}.")
    value_choices = table.numeric_columns if table.value_column in table.numeric_columns else (
        table.value_column, *table.numeric_columns)
    return PreviewView(
        columns=table.columns, time_column=table.time_column, value_column=table.value_column,
        month_column=table.month_column, value_choices=tuple(value_choices), head=table.head, tail=table.tail,
        skipped_rows=max(0, table.n_rows - len(table.head) - len(table.tail)), n_rows=table.n_rows,
        n_values=series.n, n_missing=table.n_missing, missing_rows=table.missing_rows[:SHOWN_PROBLEMS],
        gaps=table.gaps[:SHOWN_PROBLEMS], n_gaps=len(table.gaps), sampling=series.sampling,
        sampling_words=SAMPLING_WORDS.get(series.sampling, series.sampling),
        first=_label(series.start, series.sampling), last=_label(series.end, series.sampling),
        delimiter=how_columns_were_read(table),
        extra_columns=tuple(table.extra_columns), notes=tuple(series.notes), chart=Markup(chart),
        layout=table.layout, reading=tuple(table.reading), sheets=tuple(table.sheets), sheet=table.sheet,
        header_row=table.header_row, numeric_columns=tuple(table.numeric_columns), seasonal=seasonal_words(table),
        layout_words=(f"Read as {LAYOUT_WORDS[table.layout]}, {_label(series.start, series.sampling)} to "
                      f"{_label(series.end, series.sampling)}" if table.layout in LAYOUT_WORDS else ""))


def _label(time: float, sampling: str) -> str:
    return period_label(time, sampling)
