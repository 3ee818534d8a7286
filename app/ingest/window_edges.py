"""One meaning of a window's edges, wherever a window is named (a form, JSON, the CLI, a claim sentence).

An edge is written in any time form a series accepts (``app.ingest.times``): a year ``1998``, a year-month
``1998-03``, a quarter ``1998-Q2``, an ISO date ``1998-03-15`` or a decimal year ``1998.25``. It resolves to
one instant on the decimal-year axis:

- a whole period (year, quarter, month, day) given as the **start** begins at its first instant:
  ``1998`` -> 1998.0, ``1998-03`` -> 1998 + 2/12, ``1998-Q2`` -> 1998.25, ``1998-03-15`` -> the start of that day;
- a whole period given as the **end** includes the whole period: ``1998`` -> 1999.0, ``1998-03`` -> 1998 + 3/12,
  ``1998-Q2`` -> 1998.5, ``1998-03-15`` -> the end of that day;
- a decimal year is an instant as written, in either role;
- a bare integer number (JSON ``1998``), or a float with no fractional part (``1998.0`` after a schema turned the
  integer into a float), is a whole year; a float with a fractional part is an instant.

Which points a window holds (``in_window``): a point belongs to the half-open window [start, end) when its
time, which sits mid-period (``app.ingest.times``), lies inside. We choose the mid-time rule over "the
point's period overlaps the window" because

- resolved whole-period edges fall on period boundaries and mid-period times never do, so "2016" to "2019"
  holds exactly the periods named: 2016-01..2019-12 (48 points) on monthly data, 2016..2019 (4 points) on
  annual data, 2016-Q1..2019-Q4 (16 points) on quarterly data;
- windows that share an edge ([a, b) and [b, c)) share no point and miss none, so a window and the record
  before it split the data cleanly;
- it needs no step, so irregular series follow the same rule;
- an edge written finer than the data (a month edge on annual data) takes a period when its middle is inside,
  the same rounding a reader does by eye.

A series of decimal years whose times sit on period starts (1998.0, 1999.0...) takes a point lying exactly on
an edge into the window that begins there.
"""

from __future__ import annotations

import calendar
import math
from dataclasses import dataclass

import numpy as np

from app.errors import ClaimError, Location
from app.ingest.cells import CellError, shown
from app.ingest.sampling import PERIODS_PER_YEAR, period_label
from app.ingest.times import TIME_FORMATS_FIX, parse_time

EDGE_ROLES = ("start", "end")
EDGE_FORMS = ("year", "month", "quarter", "date", "decimal")
SAMPLINGS = ("monthly", "quarterly", "annual", "irregular")
_FORM_OF_FAMILY = {"month": "month", "quarter": "quarter", "date": "date"}
_HALF_PERIOD = {"year": 0.5, "month": 0.5 / 12.0, "quarter": 0.5 / 4.0}
_EXAMPLE_EDGE = {"monthly": "2016-01", "quarterly": "2016-Q1", "annual": "2016"}
# Mid-period times never come this close to a period boundary; decimal-year times computed with rounding may.
_TOLERANCE = 1e-9


@dataclass(frozen=True)
class ResolvedEdge:
    given: str | int | float  # as sent
    instant: float  # decimal year
    form: str  # one of EDGE_FORMS


@dataclass(frozen=True)
class WindowPoints:
    """The points a window holds, named as a person would name their periods."""

    first: str | None  # period label of the first point inside, None when the window is empty
    last: str | None
    count: int


def resolve_edge(value: str | int | float, role: str, sampling: str | None = None, *,
                 field: str = "claim.start") -> ResolvedEdge:
    """The instant an edge written as ``value`` stands for when it opens (``start``) or closes (``end``) a window."""
    _check_role_and_sampling(role, sampling)
    text = _edge_text(value, field, sampling)
    try:
        parsed = parse_time(text)
    except CellError as error:
        raise ClaimError(f"the window {role} cannot be read: {error.message}", location=Location(field=field),
                         fix=_fix(error.fix, sampling)) from None
    form = _FORM_OF_FAMILY.get(parsed.family, "year" if parsed.integer_year else "decimal")
    if form == "decimal":
        return ResolvedEdge(given=value, instant=parsed.decimal_year, form=form)
    half = _half_period(form, parsed.decimal_year)
    instant = parsed.decimal_year - half if role == "start" else parsed.decimal_year + half
    return ResolvedEdge(given=value, instant=instant, form=form)


def in_window(times: np.ndarray, start_instant: float, end_instant: float) -> np.ndarray:
    """Which points the window [start, end) holds: those whose mid-period time lies inside."""
    times = np.asarray(times, dtype=float)
    return (times >= start_instant - _TOLERANCE) & (times < end_instant - _TOLERANCE)


def window_points_summary(times: np.ndarray, sampling: str, start_instant: float,
                          end_instant: float) -> WindowPoints:
    """First and last period inside the window and how many points it holds, to echo next to the edges given."""
    times = np.asarray(times, dtype=float)
    inside = times[in_window(times, start_instant, end_instant)]
    if inside.size == 0:
        return WindowPoints(first=None, last=None, count=0)
    return WindowPoints(first=period_label(float(inside[0]), sampling),
                        last=period_label(float(inside[-1]), sampling), count=int(inside.size))


def _check_role_and_sampling(role: str, sampling: str | None) -> None:
    # Both come from our own code, never from a caller's input: a wrong one is a programming error.
    if role not in EDGE_ROLES:
        raise ValueError(f"role must be one of {EDGE_ROLES}, not {role!r}")
    if sampling is not None and sampling not in SAMPLINGS:
        raise ValueError(f"sampling must be one of {SAMPLINGS} or None, not {sampling!r}")


def _edge_text(value: str | int | float, field: str, sampling: str | None) -> str:
    """The edge as the text ``parse_time`` reads; whole-number floats become whole years."""
    if isinstance(value, bool) or not isinstance(value, (str, int, float)):
        raise ClaimError(f"the window edge {shown(str(value))} is neither a time written as text nor a number",
                         location=Location(field=field), fix=_fix(TIME_FORMATS_FIX, sampling))
    if isinstance(value, float):
        if not math.isfinite(value):
            raise ClaimError(f"the window edge {value} is not a finite number", location=Location(field=field),
                             fix=_fix(TIME_FORMATS_FIX, sampling))
        return str(int(value)) if value.is_integer() else repr(value)
    if isinstance(value, str) and not value.strip():
        raise ClaimError("the window edge is empty", location=Location(field=field),
                         fix=_fix(TIME_FORMATS_FIX, sampling))
    return str(value)


def _half_period(form: str, mid_time: float) -> float:
    if form == "date":
        days_in_year = 366 if calendar.isleap(math.floor(mid_time)) else 365
        return 0.5 / days_in_year
    return _HALF_PERIOD[form]


def _fix(general_fix: str, sampling: str | None) -> str:
    if sampling not in _EXAMPLE_EDGE:
        return general_fix
    per_year = PERIODS_PER_YEAR[sampling]
    return (f"{general_fix}. This series is {sampling} ({per_year} per year): "
            f"a whole period such as {_EXAMPLE_EDGE[sampling]} or 2016 names its edge exactly")
