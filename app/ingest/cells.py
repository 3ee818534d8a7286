"""The one internal signal a cell parser gives: this text is not what it should be, and how to fix it.

A ``CellError`` never leaves ``app.ingest``: the column that parsed the cell adds where it sits
and raises the matching ``app.errors`` class.
"""

from __future__ import annotations

MAX_SHOWN = 40


class CellError(Exception):
    def __init__(self, message: str, fix: str) -> None:
        super().__init__(message)
        self.message = message
        self.fix = fix


def shown(text: str) -> str:
    """The cell as quoted in a message, cut short so one bad cell cannot flood an error."""
    cut = text if len(text) <= MAX_SHOWN else text[:MAX_SHOWN] + "..."
    return repr(cut)


def short_list(items: list[str], most: int = 10) -> str:
    """A list for a note or message, cut after ``most`` items with a count of the rest."""
    if len(items) <= most:
        return ", ".join(items)
    return ", ".join(items[:most]) + f" and {len(items) - most} more"
