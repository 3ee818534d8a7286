"""How much of a file a reader takes on before it refuses: rows, columns, cells and bytes, passed in by the caller."""

from __future__ import annotations

from dataclasses import dataclass

from app.errors import LimitExceeded, Location


@dataclass(frozen=True)
class ReadLimits:
    """Bounds checked before and while a file is read.

    ``max_bytes`` bounds the uncompressed size of a spreadsheet (every member of its zip together) and the size of a
    text file; ``max_ratio`` is the largest uncompressed-to-compressed ratio a zip member may declare (spreadsheet XML
    compresses about 5 to 30 times; a zip bomb, thousands of times). Our requirement, no source.
    """

    max_rows: int = 200_000
    max_columns: int = 500
    max_cells: int = 2_000_000
    max_bytes: int = 32 * 1024 * 1024
    max_ratio: float = 200.0
    max_members: int = 2_000


def refuse_rows(count: int, limits: ReadLimits, where: Location) -> None:
    if count > limits.max_rows:
        raise LimitExceeded(f"the table has more than {limits.max_rows:,} rows, the most this service reads",
                            location=where, fix="Send a shorter series, or monthly or annual means")


def refuse_columns(count: int, limits: ReadLimits, where: Location) -> None:
    if count > limits.max_columns:
        raise LimitExceeded(f"the table has {count:,} columns, more than the {limits.max_columns:,} this service "
                            "reads", location=where, fix="Keep only the time column and the series you need")


def refuse_cells(count: int, limits: ReadLimits, where: Location) -> None:
    if count > limits.max_cells:
        raise LimitExceeded(f"the table has more than {limits.max_cells:,} cells, the most this service reads",
                            location=where, fix="Keep only the time column and the series you need")


def refuse_bytes(size: int, limits: ReadLimits) -> None:
    if size > limits.max_bytes:
        raise LimitExceeded(f"the file is larger than {limits.max_bytes:,} bytes, the most this service reads",
                            body_too_large=True, fix="Send a smaller file, or only the part with the series")
