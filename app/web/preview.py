"""What the desk shows after reading a table and before auditing it: enough to catch a wrong column or a bad file."""

from __future__ import annotations

from dataclasses import dataclass

from markupsafe import Markup

from app.ingest import ParsedTable
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
        delimiter=f"{DELIMITER_NAMES[table.delimiter]}s",  # "commas"
        extra_columns=tuple(table.extra_columns), notes=tuple(series.notes), chart=Markup(chart))


def _label(time: float, sampling: str) -> str:
    return period_label(time, sampling)
