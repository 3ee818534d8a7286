"""Checks on a Series built elsewhere, and on a claimed window against the data."""

from __future__ import annotations

import numpy as np
import pytest

from app.errors import ClaimError, SeriesContentError
from app.ingest import Series, check_window_in_series, validate_series

TIMES = np.arange(1990, 2010) + 0.5
VALUES = np.sin(np.arange(20.0)) + 0.01 * np.arange(20)


def test_a_good_series_passes():
    validate_series(Series(time=TIMES, value=VALUES, sampling="annual"))


@pytest.mark.parametrize("time, value, sampling, fragment, field", [
    (TIMES, VALUES[:-1], "annual", "time has shape (20,) but value has shape (19,)", "series.value"),
    (TIMES, np.where(np.arange(20) == 4, np.nan, VALUES), "annual", "value nan is not a finite number",
     "series.value[4]"),
    (np.where(np.arange(20) == 6, np.inf, TIMES), VALUES, "annual", "time inf is not a finite number",
     "series.time[6]"),
    (TIMES[::-1], VALUES, "annual", "comes after", "series.time[1]"),
    (TIMES[:5], VALUES[:5], "annual", "only 5 valid values", "series.value"),
    (TIMES, np.full(20, 0.3), "annual", "every value is 0.3", "series.value"),
    (TIMES, VALUES, "weekly", "sampling 'weekly' is not one of", "series.sampling"),
])
def test_bad_series_are_rejected(time, value, sampling, fragment, field):
    with pytest.raises(SeriesContentError) as caught:
        validate_series(Series(time=time, value=value, sampling=sampling))
    assert fragment in caught.value.message
    assert caught.value.location.field == field


ANNUAL = Series(time=TIMES, value=VALUES, sampling="annual")


@pytest.mark.parametrize("start, end", [(1998, 2009.5), (1990.0, 2010.0), (1995.5, 1996.5)])
def test_windows_inside_the_data_pass(start, end):
    check_window_in_series(ANNUAL, start, end)


@pytest.mark.parametrize("start, end, fragment, field", [
    (2000, 2000, "starts at 2000 but ends at 2000", "claim.end"),
    (2005, 1998, "starts at 2005 but ends at 1998", "claim.end"),
    (1989.9, 2005, "window start 1989.9 lies outside the data: the data run from 1990.50 to 2009.50", "claim.start"),
    (2012, 2015, "window start 2012 lies outside", "claim.start"),
    (1995, 2010.1, "window end 2010.1 lies outside", "claim.end"),
    (float("nan"), 2000, "window start nan is not a finite decimal year", "claim.start"),
])
def test_windows_outside_the_data_are_claim_errors(start, end, fragment, field):
    with pytest.raises(ClaimError) as caught:
        check_window_in_series(ANNUAL, start, end)
    assert fragment in caught.value.message
    assert caught.value.location.field == field


def test_window_field_prefix():
    with pytest.raises(ClaimError) as caught:
        check_window_in_series(ANNUAL, 2005, 1998, field_prefix="claims[2]")
    assert caught.value.location.field == "claims[2].end"
