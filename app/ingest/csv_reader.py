"""Reading a series from CSV text: the table a preview shows, and the Series an audit uses.

A semicolon-separated file reads ``1,5`` as 1.5 without being asked: with ';' between columns a comma can
only be a decimal comma. Comma- and tab-separated files need the decimal-comma option for that. With a decimal
comma, a point still reads as a decimal point; thousands separators are never read (``1.234,5`` is refused).
"""

from __future__ import annotations

from app.errors import Location
from app.ingest.csv_table import read_table
from app.ingest.decode import decode_text
from app.ingest.limits import ReadLimits, refuse_cells, refuse_columns
from app.ingest.options import IngestOptions, check_options
from app.ingest.tabular import PREVIEW_ROWS, ParsedTable, parsed_from_table

__all__ = ["PREVIEW_ROWS", "ParsedTable", "read_csv_text"]


def read_csv_text(text: str | bytes, options: IngestOptions = IngestOptions(),
                  limits: ReadLimits | None = None) -> ParsedTable:
    check_options(options)
    table = read_table(decode_text(text), max_rows=options.max_points)
    limits = limits or ReadLimits()  # every caller is bounded: a 100,000-column header is refused here
    refuse_columns(len(table.names), limits, Location(row=table.header_row))
    refuse_cells(len(table.names) * len(table.cells), limits, Location(row=table.header_row))
    return parsed_from_table(table, options, decimal_comma=options.decimal_comma or table.delimiter == ";")
