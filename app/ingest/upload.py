"""One entry for a file of any format this service reads, spreadsheet, CSV or plain text, told apart by content;
and one for a link to such a file.

A file's name can lie, so the bytes decide: a zip or old Office file goes to the spreadsheet reader; text whose
first lines split into the same number (more than one) of fields on a comma, semicolon or tab is CSV; any other
text is a plain-text table (spaces or fixed-width columns).
"""

from __future__ import annotations

import csv
from dataclasses import replace

from app.ingest.csv_reader import read_csv_text
from app.ingest.csv_table import SNIFF_LINES, sniff_delimiter
from app.ingest.decode import decode_text
from app.ingest.fetch import Fetched, FetchPolicy, Resolver, fetch, resolve_addresses
from app.ingest.limits import ReadLimits, refuse_bytes
from app.ingest.options import IngestOptions, check_options
from app.ingest.plain_text import COMMENT_MARKS, read_plain_text
from app.ingest.spreadsheet import OLE_SIGNATURE, ZIP_SIGNATURE, read_spreadsheet
from app.ingest.tabular import ParsedTable


def read_upload(data: bytes | str, options: IngestOptions = IngestOptions(),
                limits: ReadLimits = ReadLimits()) -> ParsedTable:
    """The table and series in a file, whatever its format; the format is in ``ParsedTable.delimiter``."""
    check_options(options)
    refuse_bytes(len(data), limits)
    if isinstance(data, (bytes, bytearray)) and bytes(data[:8]).startswith((ZIP_SIGNATURE, OLE_SIGNATURE)):
        return read_spreadsheet(bytes(data), options, limits)
    text = decode_text(data)
    if options.header_row is None and _is_csv(text):
        return read_csv_text(text, options, limits)
    return read_plain_text(text, options, limits)


def _is_csv(text: str) -> bool:
    lines = []
    for line in text.splitlines():
        if line.strip() and not line.lstrip().startswith(COMMENT_MARKS):
            lines.append(line)
        if len(lines) >= SNIFF_LINES:
            break
    if not lines:
        return True  # the CSV reader says the file is empty
    delimiter = sniff_delimiter(lines)
    try:
        widths = {len(fields) for fields in csv.reader(lines, delimiter=delimiter)}
    except csv.Error:
        return True  # the CSV reader names the line with the unpaired quote
    return min(widths) > 1 and len(widths) == 1


def read_link(url: str, options: IngestOptions = IngestOptions(), policy: FetchPolicy = FetchPolicy(),
              limits: ReadLimits = ReadLimits(), *,
              resolve: Resolver = resolve_addresses) -> tuple[ParsedTable, Fetched]:
    """The table at a link, with where it came from in the series' notes, and the fetch's full provenance."""
    fetched = fetch(url, replace(policy, max_bytes=min(policy.max_bytes, limits.max_bytes)), resolve=resolve)
    table = read_upload(fetched.content, options, limits)
    series = replace(table.series, notes=table.series.notes + (fetched.provenance_note(),))
    return replace(table, series=series), fetched
