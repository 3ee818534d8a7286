"""A series from a spreadsheet (.xlsx or .ods): every sheet listed, one chosen, its table found and read.

The sheet is the one the caller names, else the first whose rows hold a table (a header over rows of numbers);
the header row is the one the caller gives, else found below any titles and notes (``app.ingest.grid``). Dates
stored as spreadsheet dates read as dates; formulas read as the values the spreadsheet stored with them.
"""

from __future__ import annotations

from dataclasses import replace

from app.errors import InputError, Location, SeriesFormatError, UnsupportedMediaType
from app.ingest.bounded_zip import check_every_member, open_bounded_zip, read_member
from app.ingest.cells import shown, short_list
from app.ingest.grid import GridRow, locate_block, table_from_grid
from app.ingest.limits import ReadLimits
from app.ingest.ods_book import ODS_MIMETYPE, ods_workbook
from app.ingest.options import IngestOptions, check_options
from app.ingest.sheet_cells import Workbook, in_sheet
from app.ingest.tabular import ParsedTable, parsed_from_table
from app.ingest.xlsx_book import xlsx_workbook

OLE_SIGNATURE = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
ZIP_SIGNATURE = b"PK\x03\x04"


def read_spreadsheet(data: bytes, options: IngestOptions = IngestOptions(),
                     limits: ReadLimits = ReadLimits()) -> ParsedTable:
    check_options(options)
    book = open_workbook(data, limits)
    name, rows = _chosen_sheet(book, options)
    try:
        found = table_from_grid(rows, kind="spreadsheet", header_row=options.header_row, limits=limits,
                                ragged="pad")
        parsed = parsed_from_table(found.table, options, decimal_comma=options.decimal_comma,
                                   reading=(f"read sheet {shown(name)} of {len(book.sheets)}",) + found.reading)
    except InputError as error:
        raise in_sheet(error, name) from None
    return replace(parsed, sheets=book.sheets, sheet=name)


def open_workbook(data: bytes, limits: ReadLimits) -> Workbook:
    if data.startswith(OLE_SIGNATURE):
        _refuse_ole(data)
    if not data.startswith(ZIP_SIGNATURE):
        raise UnsupportedMediaType("the file is not an .xlsx or .ods spreadsheet", location=Location(row=1),
                                   fix="Save the data as .xlsx, .ods or CSV and upload that")
    archive = open_bounded_zip(data, limits)
    names = set(archive.namelist())
    if "mimetype" in names and read_member(archive, "mimetype", limits).strip() == ODS_MIMETYPE:
        return ods_workbook(archive, limits)
    if "xl/workbook.bin" in names:
        raise UnsupportedMediaType("the file is a binary Excel workbook (.xlsb), which this service does not read",
                                   fix="Save it as .xlsx and upload that")
    if "xl/workbook.xml" in names:
        check_every_member(archive, limits)
        return xlsx_workbook(data, archive, limits)
    raise UnsupportedMediaType("the zip archive is not an .xlsx or .ods spreadsheet",
                               fix="Upload the spreadsheet itself, or the data as CSV")


def _refuse_ole(data: bytes) -> None:
    """An Office file in the old compound format: either an encrypted workbook or a legacy .xls."""
    if "EncryptedPackage".encode("utf-16-le") in data:
        raise SeriesFormatError("the workbook is encrypted (password-protected)",
                                fix="Save a copy without a password and upload that")
    raise UnsupportedMediaType("the file is an old-style Excel workbook (.xls), which this service does not read",
                               fix="Save it as .xlsx or CSV and upload that")


def _chosen_sheet(book: Workbook, options: IngestOptions) -> tuple[str, list[GridRow]]:
    if options.sheet is not None:
        for match in (lambda n: n == options.sheet, lambda n: n.strip().lower() == options.sheet.strip().lower()):
            found = [n for n in book.tables if match(n)]
            if found:
                return found[0], book.rows(found[0])
        raise SeriesFormatError(f"there is no sheet named {shown(options.sheet)}; the sheets are "
                                f"{short_list([shown(n) for n in book.tables])}", location=Location(field="sheet"),
                                fix="Give the sheet's name as it is written on its tab")
    for name in book.tables:
        rows = book.rows(name)
        try:
            locate_block(rows, options.header_row)
        except SeriesFormatError:
            continue
        return name, rows
    raise SeriesFormatError(f"no sheet holds a table (sheets: {short_list([shown(n) for n in book.sheets])})",
                            fix="Put a row naming the columns above the data, or choose the sheet and header row")
