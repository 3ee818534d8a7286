"""Choosing the reference period the long-term trend is measured over."""

from __future__ import annotations

from dataclasses import dataclass

from app.errors import ClaimError, Location


@dataclass(frozen=True)
class ReferencePeriod:
    start: float
    end: float
    how: str  # "user" | "record" | "breakpoint"
    note: str


def choose_reference(record_start: float, record_end: float, window_start: float, breakpoints: tuple[float, ...],
                     min_segment_years: float, user_start: float | None = None,
                     user_end: float | None = None) -> ReferencePeriod:
    """The trend regime in force when the window begins, running to the end of the record.

    Default: from the last breakpoint that lies at least one minimum segment before the window's start
    (a breakpoint right at the window's start is exactly what is being tested, so we reach back past it),
    or from the record start. A user-set period wins.
    """
    if user_start is not None or user_end is not None:
        start = record_start if user_start is None else max(user_start, record_start)
        end = record_end if user_end is None else min(user_end, record_end)
        if not start < window_start:
            raise ClaimError("the reference period must begin before the claimed window",
                             location=Location(field="options.reference_start"),
                             fix="Start the reference period before the window, or leave it out to use the default")
        if end < window_start:
            raise ClaimError("the reference period ends before the claimed window begins",
                             location=Location(field="options.reference_end"),
                             fix="End the reference period at or after the window, or leave it out")
        return ReferencePeriod(start, end, "user", "set by the user")
    eligible = [b for b in breakpoints if window_start - b >= min_segment_years and b > record_start]
    if eligible:
        start = max(eligible)
        return ReferencePeriod(start, record_end, "breakpoint",
                               f"from the last detected change in trend before the window ({start:.4g}) to the end of the record")
    return ReferencePeriod(record_start, record_end, "record", "the whole record")
