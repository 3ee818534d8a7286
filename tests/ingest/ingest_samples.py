"""Small invented series shared by the ingestion tests (demo numbers, not observations)."""

from __future__ import annotations

import math

from app.ingest import IngestOptions, Series, read_csv_text


def wiggle(i: int) -> float:
    """A trend with a deterministic wiggle, so that no two neighbouring values are equal."""
    return round(0.02 * i + 0.1 * math.sin(1.3 * i), 4)


def annual_lines(n: int = 20, start: int = 1990, sep: str = ",", joined: bool = False):
    """A header and ``n`` annual rows; the lines, or the text of a file when ``joined``."""
    lines = [f"year{sep}value"] + [f"{start + i}{sep}{wiggle(i)}" for i in range(n)]
    return "\n".join(lines) + "\n" if joined else lines


def monthly_pairs(years: int = 3, start: int = 2000) -> list[tuple[str, float]]:
    return [(f"{start + k // 12}-{k % 12 + 1:02d}", wiggle(k)) for k in range(12 * years)]


def csv_text(header: str, rows, sep: str = ",") -> str:
    return header + "\n" + "".join(sep.join(str(cell) for cell in row) + "\n" for row in rows)


def json_series(n: int = 12, start: int = 1990) -> dict:
    return {"time": [start + i for i in range(n)], "value": [wiggle(i) for i in range(n)]}


def series_from_csv(text: str | bytes, options: IngestOptions = IngestOptions()) -> Series:
    """The Series of a CSV text, as the audit reads it (the table around it left out)."""
    return read_csv_text(text, options).series
