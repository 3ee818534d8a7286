"""Choosing extra numeric columns of an uploaded table by name: covariates, or a driver beside the response."""

from __future__ import annotations

from app.errors import Location, SeriesFormatError
from app.ingest import ParsedTable, Series
from app.ingest.columns import normal_name


def extra_column(table: ParsedTable, name: str) -> tuple[str, Series] | None:
    """The numeric column called ``name`` (exactly, else ignoring case and punctuation, as the time and value
    columns are chosen), other than the time and value columns; None when there is none."""
    for match in (lambda n: n == name.strip(), lambda n: normal_name(n) == normal_name(name)):
        for column, series in table.extra_columns.items():
            if match(column):
                return column, series
    return None


def unusable_column(table: ParsedTable, name: str, role: str, field: str) -> SeriesFormatError:
    """Why ``name`` cannot serve as ``role``, listing the columns that could."""
    offered = ", ".join(f"'{c}'" for c in table.extra_columns) or "none"
    if name == table.value_column:
        why = f"'{name}' is the column being audited"
    elif name in (table.time_column, table.month_column):
        why = f"'{name}' is the time column"
    elif name in table.columns:
        why = f"the column '{name}' does not hold numbers throughout"
    else:
        why = f"there is no column '{name}'"
    return SeriesFormatError(f"{why}, so it cannot be the {role} (other numeric columns: {offered})",
                             location=Location(field=field), fix="Name another numeric column of the file")
