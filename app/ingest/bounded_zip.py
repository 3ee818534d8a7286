"""A zip archive (an .xlsx or .ods file) opened only after its declared sizes pass, and read with a byte cap.

A zip bomb is refused before anything is unpacked: too many members, a declared total beyond the byte limit, or a
member whose declared ratio of unpacked to packed size is beyond what spreadsheets reach. Since declared sizes can
lie, every member is then unpacked once as a stream and counted, and refused at the first byte past its
declaration or the limit.
"""

from __future__ import annotations

import io
import zipfile
import zlib

from app.errors import LimitExceeded, SeriesFormatError
from app.ingest.limits import ReadLimits, refuse_bytes

CHUNK = 64 * 1024
RATIO_FLOOR = 1024 * 1024  # members smaller than this are not ratio-checked: tiny XML compresses very well
DAMAGED_FIX = "Open the file in a spreadsheet program, save it again as .xlsx or .ods, and upload that"


def open_bounded_zip(data: bytes, limits: ReadLimits) -> zipfile.ZipFile:
    refuse_bytes(len(data), limits)
    try:
        archive = zipfile.ZipFile(io.BytesIO(data))
        members = archive.infolist()
    except (zipfile.BadZipFile, zipfile.LargeZipFile, ValueError, EOFError) as error:
        raise SeriesFormatError(f"the file is a damaged zip archive ({error})", fix=DAMAGED_FIX) from None
    if len(members) > limits.max_members:
        raise LimitExceeded(f"the archive holds {len(members):,} files, more than the {limits.max_members:,} a "
                            "spreadsheet needs", fix=DAMAGED_FIX)
    declared = 0
    for member in members:
        if member.flag_bits & 0x1:
            raise SeriesFormatError("the file is encrypted (password-protected)",
                                    fix="Save a copy without a password and upload that")
        declared += member.file_size
        if declared > limits.max_bytes:
            raise LimitExceeded(f"the file would unpack to more than {limits.max_bytes:,} bytes, the most this service "
                                "reads", fix="Send a smaller file, or only the sheet with the series")
        ratio = member.file_size / max(member.compress_size, 1)
        if member.file_size > RATIO_FLOOR and ratio > limits.max_ratio:
            raise LimitExceeded(f"{member.filename!r} in the archive would unpack {ratio:,.0f} times larger than it is "
                                f"packed (more than {limits.max_ratio:,.0f}): this is not an ordinary spreadsheet",
                                fix="Save the sheet again from a spreadsheet program and upload that")
    return archive


def read_member(archive: zipfile.ZipFile, name: str, limits: ReadLimits) -> bytes:
    """One member's bytes, unpacked as a stream and cut off past its declared size or the byte limit."""
    info = archive.getinfo(name)
    cap = min(info.file_size, limits.max_bytes)
    out = bytearray()
    try:
        with archive.open(info) as stream:
            while chunk := stream.read(CHUNK):
                out += chunk
                if len(out) > cap:
                    raise LimitExceeded(f"{name!r} in the archive unpacks to more than its declared or allowed size",
                                        fix="Save the sheet again from a spreadsheet program and upload that")
    except (zipfile.BadZipFile, EOFError, OSError, ValueError, zlib.error) as error:
        raise SeriesFormatError(f"{name!r} in the archive cannot be unpacked ({error})", fix=DAMAGED_FIX) from None
    return bytes(out)


def check_every_member(archive: zipfile.ZipFile, limits: ReadLimits) -> None:
    """Unpack each member once, counting, so that a library reading the archive later meets no surprise."""
    total = 0
    for info in archive.infolist():
        total += len(read_member(archive, info.filename, limits))
        if total > limits.max_bytes:
            raise LimitExceeded(f"the file unpacks to more than {limits.max_bytes:,} bytes, the most this service "
                                "reads", fix="Send a smaller file, or only the sheet with the series")
