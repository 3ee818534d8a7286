"""Where a time or value sits in the input: a CSV row and column, or a JSON field path."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

from app.errors import Location


@dataclass(frozen=True)
class CsvPlaces:
    """Cells of a CSV file: ``rows[i]`` is the file line (1-based) of the i-th data row."""

    rows: Sequence[int]
    time_column: str
    value_column: str

    def time(self, index: int) -> Location:
        return Location(row=self.rows[index], column=self.time_column)

    def value(self, index: int) -> Location:
        return Location(row=self.rows[index], column=self.value_column)

    def values(self) -> Location:
        return Location(column=self.value_column)

    def times(self) -> Location:
        return Location(column=self.time_column)


@dataclass(frozen=True)
class FieldPlaces:
    """Entries of two parallel JSON arrays under ``prefix``: ``series.time[3]``, ``series.value[3]``."""

    prefix: str = "series"

    def time(self, index: int) -> Location:
        return Location(field=f"{self.prefix}.time[{index}]")

    def value(self, index: int) -> Location:
        return Location(field=f"{self.prefix}.value[{index}]")

    def values(self) -> Location:
        return Location(field=f"{self.prefix}.value")

    def times(self) -> Location:
        return Location(field=f"{self.prefix}.time")


@dataclass(frozen=True)
class GridPlaces:
    """Cells of a year-by-month table: point i came from row ``rows[i]``, column ``columns[i]``."""

    rows: Sequence[int]
    columns: Sequence[str]
    time_column: str
    value_columns: str  # the month columns as one name, "Jan ... Dec"

    def time(self, index: int) -> Location:
        return Location(row=self.rows[index], column=self.time_column)

    def value(self, index: int) -> Location:
        return Location(row=self.rows[index], column=self.columns[index])

    def values(self) -> Location:
        return Location(column=self.value_columns)

    def times(self) -> Location:
        return Location(column=self.time_column)


Places = CsvPlaces | FieldPlaces | GridPlaces
