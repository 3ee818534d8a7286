"""Checks that a readable series can be audited, and that a claimed window fits it.

Each check raises from ``app.errors`` with where the fault sits and what to do about it.
"""

from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from app.errors import ClaimError, Location, SeriesContentError
from app.ingest.cells import shown
from app.ingest.locations import FieldPlaces, Places
from app.ingest.series import SAMPLING_STEP, Series

# Fewer points than this leave an AR(1)-corrected trend with almost no degrees of freedom. Common practice, no source.
MIN_POINTS = 8
SAMPLINGS = frozenset(SAMPLING_STEP) | {"irregular"}


def check_order(times: np.ndarray, labels: Sequence[str], places: Places) -> None:
    """Times must strictly increase down the input: no repeats, no steps back."""
    steps = np.diff(times)
    bad = np.flatnonzero(steps <= 0)
    if bad.size == 0:
        return
    index = int(bad[0]) + 1
    if steps[bad[0]] == 0:
        first = int(np.flatnonzero(times == times[index])[0])
        raise SeriesContentError(
            f"the time {shown(labels[index])} appears twice (first at {places.time(first).describe()})",
            location=places.time(index), fix="Keep one row per time: delete or merge the repeated one")
    raise SeriesContentError(
        f"the time {shown(labels[index])} comes after {shown(labels[index - 1])}; times must increase down the file",
        location=places.time(index), fix="Sort the rows by time, earliest first")


def check_enough_values(n_valid: int, n_missing: int, where: Location, *, after: str = "") -> None:
    """At least MIN_POINTS values, and no more missing than present."""
    total = n_valid + n_missing
    if total and n_missing > total / 2:
        raise SeriesContentError(
            f"{n_missing} of {total} times have no value (more than half)", location=where,
            fix="Fill in the missing values, or cut the series to the stretch where values exist")
    if n_valid < MIN_POINTS:
        raise SeriesContentError(
            f"only {n_valid} valid value{'s' if n_valid != 1 else ''}{after}; a trend audit needs at least {MIN_POINTS}",
            location=where, fix="Supply a longer series")


def check_not_constant(values: np.ndarray, where: Location) -> None:
    if values.size and np.ptp(values) == 0:
        raise SeriesContentError(f"every value is {values[0]:g}: a constant series has no trend to audit",
                                 location=where, fix="Check that the right column was chosen as the value")


# Beyond these magnitudes the sums of squares behind a residual variance leave double precision: 1e160 squared
# overflows, a spread of 1e-160 squared underflows to zero. Real measurements sit far inside. Common practice, no source.
LARGEST_VALUE = 1e100
SMALLEST_SPREAD = 1e-100


def check_computable_scale(values: np.ndarray, where: Location) -> None:
    """Values the statistics can square and sum without overflow or underflow."""
    if not values.size:
        return
    largest, spread = float(np.max(np.abs(values))), float(np.ptp(values))
    if largest > LARGEST_VALUE or 0 < spread < SMALLEST_SPREAD:
        raise SeriesContentError(
            f"the values reach {largest:.3g} and vary by {spread:.3g}: too far from ordinary magnitudes to compute "
            f"with (the limits are {LARGEST_VALUE:g} and a spread of {SMALLEST_SPREAD:g})", location=where,
            fix="Rescale the values, e.g. express them in other units")


def validate_series(series: Series, field: str = "series") -> None:
    """Everything later layers rely on: equal-length finite 1-D arrays, increasing times, enough varying values."""
    places = FieldPlaces(field)
    try:
        time, value = np.asarray(series.time, dtype=float), np.asarray(series.value, dtype=float)
    except (TypeError, ValueError):
        raise SeriesContentError("time and value must be arrays of numbers", location=Location(field=field),
                                 fix="Build the series from numbers") from None
    if time.ndim != 1 or value.ndim != 1 or time.shape != value.shape:
        raise SeriesContentError(f"time has shape {time.shape} but value has shape {value.shape}",
                                 location=places.values(), fix="Give one value per time")
    if series.sampling not in SAMPLINGS:
        raise SeriesContentError(f"sampling {series.sampling!r} is not one of {sorted(SAMPLINGS)}",
                                 location=Location(field=f"{field}.sampling"), fix="Use one of the listed names")
    for name, array, place in (("time", time, places.time), ("value", value, places.value)):
        bad = np.flatnonzero(~np.isfinite(array))
        if bad.size:
            raise SeriesContentError(f"{name} {float(array[bad[0]])!r} is not a finite number", location=place(int(bad[0])),
                                     fix="Drop missing points from the series and list them as missing times")
    check_order(time, [repr(float(t)) for t in time], places)
    check_enough_values(time.size, 0, places.values())
    check_not_constant(value, places.values())
    check_computable_scale(value, places.values())


def check_window_in_series(series: Series, start: float, end: float, field_prefix: str = "claim") -> None:
    """A claimed window must run forwards and lie within the data (half a step of slack at each end)."""
    for name, edge in (("start", start), ("end", end)):
        if not isinstance(edge, (int, float)) or isinstance(edge, bool) or not math.isfinite(edge):
            raise ClaimError(f"the window {name} {edge!r} is not a finite decimal year",
                             location=Location(field=f"{field_prefix}.{name}"), fix="Give the year as a number, e.g. 1998")
    if start >= end:
        raise ClaimError(f"the window starts at {start:g} but ends at {end:g}", location=Location(field=f"{field_prefix}.end"),
                         fix="Give an end later than the start")
    # An annual value labelled 1998 sits at 1998.5; a claim "since 1998" (1998.0) still begins with it.
    slack = series.step / 2 if series.n else 0.0
    span = f"the data run from {series.start:.2f} to {series.end:.2f}" if series.n else "the series has no data"
    if not series.n or start < series.start - slack or start > series.end:
        raise ClaimError(f"the window start {start:g} lies outside the data: {span}",
                         location=Location(field=f"{field_prefix}.start"), fix="Choose a start within the data")
    if end > series.end + slack or end < series.start:
        raise ClaimError(f"the window end {end:g} lies outside the data: {span}",
                         location=Location(field=f"{field_prefix}.end"), fix="Choose an end within the data")
