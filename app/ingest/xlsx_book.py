"""An .xlsx workbook through openpyxl: read-only, formulas as their cached values, never evaluated.

openpyxl parses the XML with defusedxml when that is installed (it is one of our dependencies), so entity tricks in
the XML are refused. The archive has passed ``app.ingest.bounded_zip`` before openpyxl sees it.
"""

from __future__ import annotations

import io
import warnings
import zipfile

from app.errors import InputError, Location, SeriesFormatError
from app.ingest.bounded_zip import DAMAGED_FIX
from app.ingest.grid import HEADER_SEARCH_ROWS, GridRow
from app.ingest.limits import ReadLimits, refuse_columns, refuse_rows
from app.ingest.sheet_cells import Workbook, cell_text, gather_rows, in_sheet, sheet_column


def xlsx_workbook(data: bytes, archive: zipfile.ZipFile, limits: ReadLimits) -> Workbook:
    names = set(archive.namelist())
    if not any(n.startswith("xl/worksheets/") and n.endswith(".xml") for n in names):
        if "xl/vbaProject.bin" in names:
            raise SeriesFormatError("the workbook holds macros but no worksheet; this service reads cell values only",
                                    fix="Save the sheet with the data as .xlsx (without macros) and upload that")
        raise SeriesFormatError("the workbook has no worksheet", fix="Upload a workbook with the data in a sheet")
    import openpyxl  # imported here: only spreadsheet uploads pay for it

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # openpyxl warns about features it drops (validation, styles)
            book = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True, keep_links=False,
                                          keep_vba=False)
    except Exception as error:  # openpyxl raises many kinds (KeyError, ValueError, its own) on a damaged file
        raise SeriesFormatError(f"the file cannot be read as an .xlsx workbook ({type(error).__name__})",
                                fix=DAMAGED_FIX) from None
    tables = tuple(ws.title for ws in book.worksheets)

    def rows(name: str) -> list[GridRow]:
        sheet = book[name]
        try:
            _check_declared(sheet.max_row, sheet.max_column, limits)
            sheet.reset_dimensions()  # a declared size may also be too small: read to the end, counting
            numbered = ((number, [cell_text(v) for v in values])
                        for number, values in enumerate(sheet.iter_rows(values_only=True), start=1))
            return gather_rows(numbered, name, limits)
        except InputError as error:
            raise in_sheet(error, name) from None
        except (ValueError, KeyError, TypeError) as error:
            raise in_sheet(SeriesFormatError(f"a cell cannot be read ({type(error).__name__})", fix=DAMAGED_FIX),
                           name) from None

    return Workbook(sheets=tuple(book.sheetnames), tables=tables, rows=rows)


def _check_declared(max_row: int | None, max_column: int | None, limits: ReadLimits) -> None:
    """The size the sheet declares for itself, refused before its rows are read."""
    if max_column:
        refuse_columns(max_column, limits, Location(row=1, column=sheet_column(max_column)))
    if max_row:
        refuse_rows(max_row - HEADER_SEARCH_ROWS, limits, Location(row=max_row))
