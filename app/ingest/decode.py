"""Uploaded bytes to text: UTF-8 with or without a byte-order mark, and a plain word when it is something else."""

from __future__ import annotations

from app.errors import Location, SeriesFormatError

SAVE_AS_CSV = "Save or export the data as CSV (UTF-8) and upload that file"
# File signatures: the first bytes that name a format (as published in each format's specification).
_SIGNATURES = (
    (b"PK\x03\x04", "a zip archive (an .xlsx or .ods spreadsheet?)"),
    (b"\xd0\xcf\x11\xe0", "an old-style Excel or Office file (.xls)"),
    (b"%PDF", "a PDF document"),
    (b"\xff\xfe", "UTF-16 text"),
    (b"\xfe\xff", "UTF-16 text"),
)


def decode_text(data: str | bytes) -> str:
    """The text of an upload, without a leading byte-order mark; SeriesFormatError when it is not UTF-8 text."""
    if isinstance(data, str):
        text = data
    elif isinstance(data, (bytes, bytearray, memoryview)):
        text = _decode_bytes(bytes(data))
    else:
        raise SeriesFormatError(f"expected text or bytes, got {type(data).__name__}", fix=SAVE_AS_CSV)
    text = text.removeprefix("\ufeff")
    if "\x00" in text:
        row = text[: text.index("\x00")].count("\n") + 1
        raise SeriesFormatError("the file holds NUL characters, so it is not a text file", location=Location(row=row),
                                fix=SAVE_AS_CSV)
    return text


def _decode_bytes(data: bytes) -> str:
    for signature, what in _SIGNATURES:
        if data.startswith(signature):
            raise SeriesFormatError(f"the file looks like {what}, not CSV text", location=Location(row=1),
                                    fix=SAVE_AS_CSV)
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        row = data[: error.start].count(b"\n") + 1
        raise SeriesFormatError(f"the file is not UTF-8 text (byte 0x{data[error.start]:02x} cannot be read)",
                                location=Location(row=row),
                                fix="Save the file as UTF-8 (in a spreadsheet: 'CSV UTF-8') and upload it again") from None
