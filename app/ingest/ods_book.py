"""An .ods workbook read from its XML with the standard library's parser behind defusedxml.

No ODS library is needed: the table part of OpenDocument (OASIS OpenDocument 1.2, part 1, section 9.1) is rows of
cells with repeat counts, a value type and a cached value. Formulas are never evaluated: a cell's ``office:value``
(or date value) is the result the spreadsheet stored. Repeat counts are honoured without expanding blank runs, so
the million blank rows a sheet often declares at its end cost nothing; repeated cells with content count against
the limits before they are expanded.
"""

from __future__ import annotations

import io
import zipfile
from typing import Iterator

import defusedxml.ElementTree as SafeTree
from defusedxml import DefusedXmlException

from app.errors import InputError, Location, SeriesFormatError
from app.ingest.bounded_zip import DAMAGED_FIX, read_member
from app.ingest.grid import HEADER_SEARCH_ROWS, GridRow
from app.ingest.limits import ReadLimits, refuse_cells, refuse_columns, refuse_rows
from app.ingest.sheet_cells import Workbook, cell_text, gather_rows, in_sheet, sheet_column

TABLE = "{urn:oasis:names:tc:opendocument:xmlns:table:1.0}"
OFFICE = "{urn:oasis:names:tc:opendocument:xmlns:office:1.0}"
TEXT = "{urn:oasis:names:tc:opendocument:xmlns:text:1.0}"
ODS_MIMETYPE = b"application/vnd.oasis.opendocument.spreadsheet"
_VALUE_ATTRIBUTE = {"float": "value", "percentage": "value", "currency": "value", "date": "date-value",
                    "time": "time-value", "boolean": "boolean-value"}


def ods_workbook(archive: zipfile.ZipFile, limits: ReadLimits) -> Workbook:
    names = set(archive.namelist())
    if "META-INF/manifest.xml" in names and b"encryption-data" in read_member(archive, "META-INF/manifest.xml",
                                                                                limits):
        raise SeriesFormatError("the file is encrypted (password-protected)",
                                fix="Save a copy without a password and upload that")
    if "content.xml" not in names:
        raise SeriesFormatError("the .ods file has no content part", fix=DAMAGED_FIX)
    content = read_member(archive, "content.xml", limits)
    sheets: dict[str, list[GridRow]] = {}
    try:
        for name, numbered in _tables(content, limits):
            try:
                sheets[name] = gather_rows(numbered, name, limits)
            except InputError as error:
                raise in_sheet(error, name) from None
    except SafeTree.ParseError as error:
        raise SeriesFormatError(f"the sheet's XML cannot be read ({error})", fix=DAMAGED_FIX) from None
    except (DefusedXmlException, ValueError) as error:
        raise SeriesFormatError(f"the sheet's XML holds constructs this service refuses ({type(error).__name__})",
                                fix=DAMAGED_FIX) from None
    return Workbook(sheets=tuple(sheets), tables=tuple(sheets), rows=lambda name: sheets[name])


def _tables(content: bytes, limits: ReadLimits) -> Iterator[tuple[str, Iterator[tuple[int, list[str]]]]]:
    """(sheet name, its numbered rows) for each table, read as the XML streams past."""
    events = SafeTree.iterparse(io.BytesIO(content), events=("start", "end"))
    for event, element in events:
        if event == "start" and element.tag == f"{TABLE}table":
            name = element.get(f"{TABLE}name", "")
            yield name, _rows(events, name, limits)


def _rows(events, name: str, limits: ReadLimits) -> Iterator[tuple[int, list[str]]]:
    number = 0
    for event, element in events:
        if event == "end" and element.tag == f"{TABLE}table":
            return
        if event != "end" or element.tag != f"{TABLE}table-row":
            continue
        repeat = _count(element, f"{TABLE}number-rows-repeated", Location(row=number + 1))
        cells = _cells(element, number + 1, limits)
        element.clear()
        if not any(cells):
            number += repeat  # blank rows, however many, are only counted
            continue
        refuse_rows(repeat - HEADER_SEARCH_ROWS, limits, Location(row=number + 1))
        refuse_cells(repeat * len(cells), limits, Location(row=number + 1))
        for _ in range(repeat):
            number += 1
            yield number, cells


def _cells(row, number: int, limits: ReadLimits) -> list[str]:
    cells: list[str] = []
    blanks = 0  # blank cells not yet written out: a trailing run of them never is
    for cell in row:
        if cell.tag not in (f"{TABLE}table-cell", f"{TABLE}covered-table-cell"):
            continue
        repeat = _count(cell, f"{TABLE}number-columns-repeated", Location(row=number))
        text = _cell_text(cell)
        if not text:
            blanks += repeat
            continue
        refuse_columns(len(cells) + blanks + repeat, limits,
                       Location(row=number, column=sheet_column(len(cells) + blanks + repeat)))
        cells += [""] * blanks + [text] * repeat
        blanks = 0
    return cells


def _cell_text(cell) -> str:
    kind = cell.get(f"{OFFICE}value-type")
    if kind in _VALUE_ATTRIBUTE:
        value = cell.get(f"{OFFICE}{_VALUE_ATTRIBUTE[kind]}", "")
        if kind == "date":
            return cell_text(value.removesuffix("T00:00:00"))
        return _number_text(value) if kind in ("float", "percentage", "currency") else value
    return " ".join("".join(p.itertext()).strip() for p in cell.iter(f"{TEXT}p")).strip()


def _number_text(value: str) -> str:
    try:
        return cell_text(float(value))
    except ValueError:
        return value


def _count(element, attribute: str, where: Location) -> int:
    text = element.get(attribute, "1")
    if not text.isdigit() or int(text) < 1:
        raise SeriesFormatError(f"a repeat count {text!r} cannot be read", location=where, fix=DAMAGED_FIX)
    return int(text)
