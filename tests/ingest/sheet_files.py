"""Spreadsheet files made in the tests: .xlsx through openpyxl, .ods written as OpenDocument XML and zipped."""

from __future__ import annotations

import io
import re
import zipfile
from xml.sax.saxutils import escape, quoteattr

import openpyxl

ODS_NS = ('xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
          'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
          'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0"')


def xlsx_bytes(sheets: dict[str, list[list]]) -> bytes:
    book = openpyxl.Workbook()
    book.remove(book.active)
    for name, rows in sheets.items():
        sheet = book.create_sheet(name)
        for row in rows:
            sheet.append(row)
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()


def rewrite_member(data: bytes, name: str, change) -> bytes:
    """The archive with one member's text changed (to plant what openpyxl would not write)."""
    source = zipfile.ZipFile(io.BytesIO(data))
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as target:
        for info in source.infolist():
            content = source.read(info)
            if info.filename == name:
                content = change(content.decode()).encode()
            target.writestr(info.filename, content)
    return out.getvalue()


def ods_cell(value, repeat: int = 1) -> str:
    rep = f' table:number-columns-repeated="{repeat}"' if repeat > 1 else ""
    if value is None:
        return f"<table:table-cell{rep}/>"
    if isinstance(value, tuple):  # ("date", "2000-01-01") or ("formula", cached, formula)
        if value[0] == "date":
            return f'<table:table-cell{rep} office:value-type="date" office:date-value="{value[1]}"><text:p>' \
                   f'{value[1]}</text:p></table:table-cell>'
        return (f'<table:table-cell{rep} table:formula={quoteattr(value[2])} office:value-type="float" '
                f'office:value="{value[1]}"><text:p>{value[1]}</text:p></table:table-cell>')
    if isinstance(value, (int, float)):
        return f'<table:table-cell{rep} office:value-type="float" office:value="{value}"><text:p>{value}</text:p>' \
               '</table:table-cell>'
    return f'<table:table-cell{rep} office:value-type="string"><text:p>{escape(value)}</text:p></table:table-cell>'


def ods_row(cells: list, repeat: int = 1) -> str:
    rep = f' table:number-rows-repeated="{repeat}"' if repeat > 1 else ""
    return f"<table:table-row{rep}>" + "".join(c if isinstance(c, str) and c.startswith("<") else ods_cell(c)
                                               for c in cells) + "</table:table-row>"


def ods_bytes(sheets: dict[str, list[str]], manifest_extra: str = "", prolog: str = "") -> bytes:
    """``sheets`` maps a name to its rows, each already written by ``ods_row``."""
    tables = "".join(f"<table:table table:name={quoteattr(name)}>" + "".join(rows) + "</table:table>"
                     for name, rows in sheets.items())
    content = (f'<?xml version="1.0" encoding="UTF-8"?>{prolog}<office:document-content {ODS_NS}><office:body>'
               f"<office:spreadsheet>{tables}</office:spreadsheet></office:body></office:document-content>")
    manifest = ('<?xml version="1.0" encoding="UTF-8"?><manifest:manifest '
                'xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0">'
                f'<manifest:file-entry manifest:full-path="content.xml">{manifest_extra}</manifest:file-entry>'
                "</manifest:manifest>")
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr(zipfile.ZipInfo("mimetype"), "application/vnd.oasis.opendocument.spreadsheet")
        archive.writestr("content.xml", content)
        archive.writestr("META-INF/manifest.xml", manifest)
    return out.getvalue()


# Hostile files: each is refused before it is unpacked or expanded.

def zip_bomb() -> bytes:
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("xl/workbook.xml", "<workbook/>")
        archive.writestr("xl/worksheets/sheet1.xml", b"\0" * (20 * 1024 * 1024))
    return out.getvalue()


def xlsx_declaring(ref: str) -> bytes:
    data = xlsx_bytes({"Data": [["year", "value"]] + [[1990 + i, round(0.02 * i, 4)] for i in range(12)]})
    return rewrite_member(data, "xl/worksheets/sheet1.xml",
                          lambda xml: re.sub(r'<dimension ref="[^"]*"', f'<dimension ref="{ref}"', xml))


def encrypted_office_file() -> bytes:
    # The compound-file signature and a directory entry named EncryptedPackage, as an encrypted workbook has
    # (MS-OFFCRYPTO section 2.3.4.4); the rest is padding.
    return b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\0" * 500 + "EncryptedPackage".encode("utf-16-le") + b"\0" * 500


def macro_only_workbook() -> bytes:
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w") as archive:
        archive.writestr("[Content_Types].xml", "<Types/>")
        archive.writestr("xl/workbook.xml", "<workbook><sheets/></workbook>")
        archive.writestr("xl/vbaProject.bin", b"\0" * 64)
    return out.getvalue()


def ods_entity_bomb() -> bytes:
    prolog = '<!DOCTYPE d [<!ENTITY a "aaaaaaaaaa"><!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;">]>'
    return ods_bytes({"S": [ods_row(["year", "value"]), "<table:table-row><table:table-cell><text:p>&b;</text:p>"
                                                       "</table:table-cell></table:table-row>"]}, prolog=prolog)
