"""How the report writes numbers: rates in the audit's unit, times, probabilities.

Rates and p-values reuse the verdict's own wording (``app.audit.verdict``), so the headline and the
tables can never disagree on how a number is written.
"""

from __future__ import annotations

import math
from typing import Any

from app.audit.verdict import format_p, format_probability, format_rate
from app.ingest.sampling import PERIODS_PER_YEAR, period_label

__all__ = ["Rate", "format_p", "format_percent", "format_probability", "format_rate", "format_time", "format_years", "is_number",
           "shared_decimals", "time_of"]


def is_number(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


def shared_decimals(*values: Any, digits: int = 3) -> int:
    """Decimals that give the largest value ``digits`` significant digits, so related numbers are written alike."""
    finite = [abs(v) for v in values if is_number(v) and v != 0]
    return max(0, digits - 1 - math.floor(math.log10(max(finite)))) if finite else digits - 1


def format_time(value: Any, sampling: str = "") -> str:
    """A decimal year as a reader would write it.

    A data time (mid-period on the series' grid: 1998.5 in annual data) is named as the data name
    it, 1998 or 1998-03; a whole number is a year boundary, 1998; anything else keeps two decimals.
    """
    if not is_number(value):
        return "undetermined"
    per_year = PERIODS_PER_YEAR.get(sampling)
    if per_year is not None:
        position = value * per_year - 0.5
        if abs(position - round(position)) < 1e-6 * per_year:
            return period_label(value, sampling)
    if abs(value - round(value)) < 1e-6:
        return f"{round(value):d}"
    return f"{value:.2f}".rstrip("0").rstrip(".")


def time_of(document: dict[str, Any], value: Any) -> str:
    """A time of this audit named the way its series' data name it (1998, 1998-03)."""
    return format_time(value, (document.get("inputs") or {}).get("sampling") or "")


def window_span(document: dict[str, Any]) -> str:
    """The claimed window as its first and last periods ("1998 to 2013"), not its half-open edges
    ("1998 to 2014"); records stored before the window was echoed fall back to the edges."""
    claim = document.get("claim") or {}
    window = claim.get("window") or {}
    first = window.get("first") or time_of(document, claim.get("start"))
    last = window.get("last") or time_of(document, claim.get("end"))
    return f"{first} to {last}"


def format_years(value: Any) -> str:
    if not is_number(value):
        return "undetermined"
    return f"{value:.0f}" if value >= 3 else f"{value:.1f}"


def format_percent(value: Any, digits: int = 0) -> str:
    if not is_number(value):
        return "undetermined"
    if 0 < value < 0.001:
        return "under 0.1%"
    return f"{100 * value:.{digits}f}%"


class Rate:
    """Writes slopes (per year inside) in the audit's rate unit, with the series' units."""

    def __init__(self, factor: float, unit: str, units: str = "") -> None:
        self.factor = float(factor)
        self.unit = unit
        self.units = units or ""

    @classmethod
    def of(cls, document: dict[str, Any]) -> "Rate":
        rate = document.get("rate") or {}
        return cls(rate.get("factor", 10.0), rate.get("unit", "per decade"),
                   (document.get("inputs") or {}).get("units") or "")

    @property
    def axis_unit(self) -> str:
        """'°C per decade', or just 'per decade' when the series has no units."""
        return f"{self.units} {self.unit}".strip()

    def scaled(self, slope: Any) -> float:
        return slope * self.factor if is_number(slope) else math.nan

    def text(self, slope: Any) -> str:
        return format_rate(slope if is_number(slope) else math.nan, self.factor, self.unit, self.units)

    def number(self, slope: Any) -> str:
        """The scaled slope alone, for tables whose header carries the unit."""
        return format_rate(slope if is_number(slope) else math.nan, self.factor, "", "").strip()

    def range_text(self, interval: Any) -> str:
        if not interval or len(interval) != 2 or not all(is_number(v) for v in interval):
            return "undetermined"
        lo, hi = interval
        return f"{self.number(lo)} to {self.number(hi)}"
