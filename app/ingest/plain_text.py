"""A plain-text table: columns separated by spaces, in fixed-width columns, or by a tab, semicolon or comma under
titles that a plain CSV reader would stumble on; comment lines and notes around it.

Lines starting with ``#``, ``%`` or ``!`` are comments; free text above the header is skipped like a sheet's titles
(``app.ingest.grid``). When every data line splits on spaces into as many fields as the header, that is the table;
otherwise the columns are taken from the character positions that are blank on every data line (fixed width), so
that an empty cell reads as a missing value.
"""

from __future__ import annotations

import csv
import io
from collections import Counter

from app.errors import Location
from app.ingest.csv_table import DELIMITERS
from app.ingest.decode import decode_text
from app.ingest.grid import HEADER_SEARCH_ROWS, GridRow, locate_block, table_from_grid
from app.ingest.limits import ReadLimits, refuse_bytes, refuse_rows
from app.ingest.options import IngestOptions, check_options
from app.ingest.tabular import ParsedTable, parsed_from_table

COMMENT_MARKS = ("#", "%", "!")
MOST = 0.6  # the share of lines a delimiter must split alike; the rest are titles and notes. Our requirement.


def read_plain_text(data: str | bytes, options: IngestOptions = IngestOptions(),
                    limits: ReadLimits = ReadLimits()) -> ParsedTable:
    check_options(options)
    refuse_bytes(len(data), limits)
    lines = _lines(decode_text(data), limits)
    delimiter = _delimiter(lines)
    split = [GridRow(number, _split(line, delimiter)) for number, line in lines]
    block = locate_block(split, options.header_row)
    kind = delimiter or "whitespace"
    header_width = len(split[block.header].cells)
    widths = {len(row.cells) for row in split[block.first:block.end]}
    # Under spaces, fewer fields than the header on some line means empty cells, which only fixed columns can
    # place; more fields is a ragged line, refused at its row below.
    if delimiter is None and max(widths) <= header_width and min(widths) < header_width:
        kind = "fixed-width"
        block_lines = [lines[block.header]] + [pair for pair in lines[block.first:block.end] if pair[1].strip()]
        split = split[:block.header] + _fixed_width(block_lines) + split[block.end:]
    found = table_from_grid(split, kind=kind, header_row=split[block.header].number, limits=limits,
                            ragged="refuse")
    reading = found.reading + (("columns taken from fixed character positions",) if kind == "fixed-width" else ())
    return parsed_from_table(found.table, options, decimal_comma=options.decimal_comma or delimiter == ";",
                             reading=reading)


def _delimiter(lines: list[tuple[int, str]]) -> str | None:
    """A tab, semicolon or comma that splits most lines (titles and notes aside) into one width of two or more
    fields; None for columns separated by spaces."""
    content = [line for _, line in lines if line.strip()]
    for delimiter in DELIMITERS:
        widths = Counter(len(_split(line, delimiter)) for line in content)
        width, count = widths.most_common(1)[0] if widths else (0, 0)
        if width >= 2 and count >= MOST * len(content):
            return delimiter
    return None


def _split(line: str, delimiter: str | None) -> tuple[str, ...]:
    if delimiter is None:
        return tuple(line.split())
    try:
        fields = next(csv.reader([line], delimiter=delimiter))
    except (csv.Error, StopIteration):
        fields = line.split(delimiter)
    return tuple(field.strip() for field in fields)


def _lines(text: str, limits: ReadLimits) -> list[tuple[int, str]]:
    """(line number, line) of every line that is not a comment; blank lines kept, since they end a block."""
    out = []
    for number, line in enumerate(io.StringIO(text, newline=None), start=1):
        if line.lstrip().startswith(COMMENT_MARKS):
            continue
        out.append((number, line.rstrip("\r\n").expandtabs(8)))
        refuse_rows(len(out) - HEADER_SEARCH_ROWS, limits, Location(row=number))  # titles and notes come on top
    return out


def _fixed_width(block: list[tuple[int, str]]) -> list[GridRow]:
    """The header and data lines cut at the character positions that are blank on every data line."""
    (header_number, header_line), data = block[0], block[1:]
    width = max(len(line) for _, line in data)
    filled = [any(i < len(line) and line[i] != " " for _, line in data) for i in range(width)]
    spans, start = [], None
    for i, used in enumerate(filled + [False]):
        if used and start is None:
            start = i
        elif not used and start is not None:
            spans.append((start, i))
            start = None
    names = header_line.split()
    if len(names) != len(spans):
        # Header words may overhang their column: cut the header half-way between columns instead.
        cuts = [0] + [(a_end + b_start) // 2 for (_, a_end), (b_start, _) in zip(spans, spans[1:])] + [None]
        names = [header_line[a:b].strip() for a, b in zip(cuts, cuts[1:])]
    rows = [GridRow(header_number, tuple(names))]
    rows += [GridRow(number, tuple(line[a:b].strip() for a, b in spans)) for number, line in data]
    return rows
