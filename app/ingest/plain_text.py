"""A plain-text table: columns separated by spaces, or in fixed-width columns, under comment lines or a title.

Lines starting with ``#``, ``%`` or ``!`` are comments; free text above the header is skipped like a sheet's titles
(``app.ingest.grid``). When every data line splits on spaces into as many fields as the header, that is the table;
otherwise the columns are taken from the character positions that are blank on every data line (fixed width), so
that an empty cell reads as a missing value.
"""

from __future__ import annotations

import io

from app.errors import Location
from app.ingest.decode import decode_text
from app.ingest.grid import GridRow, block_end, find_header, table_from_grid
from app.ingest.limits import ReadLimits, refuse_bytes, refuse_rows
from app.ingest.options import IngestOptions, check_options
from app.ingest.tabular import ParsedTable, parsed_from_table

COMMENT_MARKS = ("#", "%", "!")


def read_plain_text(data: str | bytes, options: IngestOptions = IngestOptions(),
                    limits: ReadLimits = ReadLimits()) -> ParsedTable:
    check_options(options)
    refuse_bytes(len(data), limits)
    lines = _lines(decode_text(data), limits)
    split = [GridRow(number, tuple(line.split())) for number, line in lines]
    header = find_header(split, options.header_row)
    end = block_end(split, header)
    kind = "whitespace"
    widths = {len(row.cells) for row in split[header + 1:end]}
    # Fewer fields than the header on some line means empty cells, which only fixed columns can place; more
    # fields is a ragged line, refused at its row below.
    if widths and max(widths) <= len(split[header].cells) and min(widths) < len(split[header].cells):
        kind = "fixed-width"
        split = split[:header] + _fixed_width(lines[header:end]) + split[end:]
    found = table_from_grid(split, kind=kind, header_row=split[header].number, limits=limits, ragged="refuse")
    reading = found.reading + (("columns taken from fixed character positions",) if kind == "fixed-width" else ())
    return parsed_from_table(found.table, options, decimal_comma=options.decimal_comma, reading=reading)


def _lines(text: str, limits: ReadLimits) -> list[tuple[int, str]]:
    """(line number, line) of every line that is not a comment; blank lines kept, since they end a block."""
    out = []
    for number, line in enumerate(io.StringIO(text, newline=None), start=1):
        if line.lstrip().startswith(COMMENT_MARKS):
            continue
        out.append((number, line.rstrip("\r\n").expandtabs(8)))
        refuse_rows(len(out), limits, Location(row=number))
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
