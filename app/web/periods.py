"""Claim dates as a person types them: '1998', '2016-01', '2003-Q2', or a decimal year.

In the desk both ends of a window are *included*: "1998 to 2012" means every value from the year
1998 through the year 2012, however the series is sampled. A written period becomes the span of
time it names, and each end is then moved onto the data: the start to the first data time inside
its period, the end to the last one inside its period. The audit then sees exactly the values the
person meant, and the report can name them as the data name them (1998, 2016-01). A decimal year
(1998.25) is taken as written, as the API takes it.
"""

from __future__ import annotations

import numpy as np

from app.errors import ClaimError, Location
from app.ingest.cells import CellError
from app.ingest.times import parse_time

PERIOD_HALF_WIDTH = {"month": 1 / 24, "quarter": 1 / 8, "date": 0.5 / 365.25}


def period_bounds(text: str, field: str) -> tuple[float, float]:
    """The span of time a written period covers, [start, end); a decimal year is a span of zero length."""
    try:
        parsed = parse_time(text)
    except CellError as error:
        raise ClaimError(error.message, location=Location(field=field),
                         fix="Write a year (1998), a year-month (2016-01), a quarter (2003-Q2) or a decimal year "
                             "(1998.25)") from None
    if parsed.family == "number":
        half = 0.5 if parsed.integer_year else 0.0
    else:
        half = PERIOD_HALF_WIDTH[parsed.family]
    return parsed.decimal_year - half, parsed.decimal_year + half


def first_time_in(text: str, times: np.ndarray, field: str) -> float:
    """The start of a window written as a period: its first data point, or the period's start if it has none."""
    low, high = period_bounds(text, field)
    inside = _inside(times, low, high)
    return float(inside[0]) if inside.size else low


def last_time_in(text: str, times: np.ndarray, field: str) -> float:
    """The end of a window written as a period: its last data point, or the period's end if it has none."""
    low, high = period_bounds(text, field)
    inside = _inside(times, low, high)
    return float(inside[-1]) if inside.size else high


def _inside(times: np.ndarray, low: float, high: float) -> np.ndarray:
    times = np.asarray(times, dtype=float)
    if high <= low:  # a decimal year names an instant, taken as written
        return times[:0]
    return times[(times >= low) & (times < high)]
