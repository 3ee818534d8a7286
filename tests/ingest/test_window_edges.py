"""Window edges: one resolution rule for every time form, and which points a window holds."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from app.errors import ClaimError
from ingest_samples import series_from_csv
from app.ingest.times import parse_time
from app.ingest.window_edges import in_window, resolve_edge, window_points_summary
from ingest_samples import csv_text, wiggle

TWELFTH = 1.0 / 12.0


@pytest.mark.parametrize("given, start, end, form", [
    ("1998", 1998.0, 1999.0, "year"),
    (1998, 1998.0, 1999.0, "year"),
    (1998.0, 1998.0, 1999.0, "year"),  # an integer a schema turned into a float is still a whole year
    ("1998-01", 1998.0, 1998 + TWELFTH, "month"),
    ("1998-03", 1998 + 2 * TWELFTH, 1998 + 3 * TWELFTH, "month"),
    ("1998/12", 1998 + 11 * TWELFTH, 1999.0, "month"),
    ("1998-Q1", 1998.0, 1998.25, "quarter"),
    ("1998-Q2", 1998.25, 1998.5, "quarter"),
    ("1998Q4", 1998.75, 1999.0, "quarter"),
    ("1998-01-01", 1998.0, 1998 + 1 / 365, "date"),
    ("1998-03-15", 1998 + 73 / 365, 1998 + 74 / 365, "date"),  # day 74 of a 365-day year
    ("2000-12-31", 2000 + 365 / 366, 2001.0, "date"),  # 2000 is a leap year
    ("1998.25", 1998.25, 1998.25, "decimal"),
    (1998.25, 1998.25, 1998.25, "decimal"),
    ("1998.0", 1998.0, 1998.0, "decimal"),  # written with a decimal point: an instant as written
])
def test_edge_rule_table(given, start, end, form):
    opened = resolve_edge(given, "start")
    closed = resolve_edge(given, "end")
    assert (opened.form, closed.form) == (form, form)
    assert opened.instant == pytest.approx(start, abs=1e-12)
    assert closed.instant == pytest.approx(end, abs=1e-12)
    assert opened.given == given and closed.given == given


def _axis(labels: list[str]) -> np.ndarray:
    """The times the project's own reader puts on the axis for these labels."""
    return series_from_csv(csv_text("time,value", [(t, wiggle(i)) for i, t in enumerate(labels)])).time


MONTHLY = [f"{year}-{month:02d}" for year in range(2010, 2024) for month in range(1, 13)]
QUARTERLY = [f"{year}-Q{quarter}" for year in range(2010, 2024) for quarter in range(1, 5)]
ANNUAL = [str(year) for year in range(1990, 2024)]


@pytest.mark.parametrize("labels, sampling, start, end, expected", [
    (MONTHLY, "monthly", "2016", "2019", ("2016-01", "2019-12", 48)),
    (MONTHLY, "monthly", "2016-03", "2016-05", ("2016-03", "2016-05", 3)),
    (MONTHLY, "monthly", "2016-Q2", "2016-Q3", ("2016-04", "2016-09", 6)),
    (MONTHLY, "monthly", "2016-03-01", "2016-03-31", ("2016-03", "2016-03", 1)),
    (QUARTERLY, "quarterly", "2016", "2019", ("2016-Q1", "2019-Q4", 16)),
    (QUARTERLY, "quarterly", "2016-Q2", "2016-Q2", ("2016-Q2", "2016-Q2", 1)),
    (QUARTERLY, "quarterly", "2016-04", "2016-09", ("2016-Q2", "2016-Q3", 2)),
    (ANNUAL, "annual", "2016", "2019", ("2016", "2019", 4)),
    (ANNUAL, "annual", "1998", "1998", ("1998", "1998", 1)),
    (ANNUAL, "annual", 1998, 2012, ("1998", "2012", 15)),
    (ANNUAL, "annual", "1998-06", "2012-07", ("1998", "2012", 15)),  # a year counts when its middle is inside
    (ANNUAL, "annual", "1998-08", "2012-06", ("1999", "2011", 13)),
    (ANNUAL, "annual", 1998.6, 2000.4, ("1999", "1999", 1)),
])
def test_window_holds_the_periods_named(labels, sampling, start, end, expected):
    times = _axis(labels)
    summary = window_points_summary(times, sampling, resolve_edge(start, "start", sampling).instant,
                                    resolve_edge(end, "end", sampling).instant)
    assert (summary.first, summary.last, summary.count) == expected


def test_windows_sharing_an_edge_split_the_points():
    times = _axis(MONTHLY)
    edge = resolve_edge("2016-06", "end").instant
    assert edge == resolve_edge("2016-07", "start").instant
    before = in_window(times, resolve_edge("2010", "start").instant, edge)
    after = in_window(times, edge, resolve_edge("2023", "end").instant)
    assert not np.any(before & after)
    assert np.all(before | after)


def test_decimal_year_series_on_period_starts():
    times = np.arange(1990.0, 2000.0)  # a column of decimal years whose times are taken as written
    summary = window_points_summary(times, "annual", resolve_edge(1992, "start").instant,
                                    resolve_edge(1994, "end").instant)
    assert (summary.first, summary.last, summary.count) == ("1992", "1994", 3)


def test_empty_window():
    summary = window_points_summary(_axis(ANNUAL), "annual", 2030.0, 2031.0)
    assert (summary.first, summary.last, summary.count) == (None, None, 0)


@pytest.mark.parametrize("given, message", [
    ("abc", "is not a time this service reads"),
    ("1998-13", "month 13, out of range"),
    ("1998-Q5", "quarter 5, out of range"),
    ("1998-02-30", "day 30"),
    ("", "is empty"),
    ("   ", "is empty"),
    (float("nan"), "not a finite number"),
    (float("inf"), "not a finite number"),
    (True, "neither a time"),
    (None, "neither a time"),
    ("1e300", "outside the years"),
])
def test_bad_edges_name_the_field(given, message):
    with pytest.raises(ClaimError, match=message) as caught:
        resolve_edge(given, "end", "monthly", field="claim.end")
    assert caught.value.location.field == "claim.end"
    assert "2016-01" in caught.value.fix  # the fix names an edge written for this series' sampling


def test_wrong_role_is_a_programming_error():
    with pytest.raises(ValueError):
        resolve_edge("1998", "middle")


@settings(max_examples=200, deadline=None)
@given(st.integers(1000, 2999), st.integers(1, 12), st.integers(1, 4))
def test_periods_tile_the_axis(year, month, quarter):
    """A period's end is the next period's start, and its mid-period time lies inside it."""
    next_month = f"{year + month // 12}-{month % 12 + 1:02d}"
    assert resolve_edge(f"{year}-{month:02d}", "end").instant == pytest.approx(
        resolve_edge(next_month, "start").instant, abs=1e-9)
    assert resolve_edge(str(year), "end").instant == resolve_edge(str(year + 1), "start").instant
    next_quarter = f"{year + quarter // 4}-Q{quarter % 4 + 1}"
    assert resolve_edge(f"{year}-Q{quarter}", "end").instant == pytest.approx(
        resolve_edge(next_quarter, "start").instant, abs=1e-9)
    for label, sampling in ((f"{year}-{month:02d}", "monthly"), (f"{year}-Q{quarter}", "quarterly"),
                            (str(year), "annual")):
        mid = parse_time(label).decimal_year  # where the reader puts this period's point
        start, end = resolve_edge(label, "start").instant, resolve_edge(label, "end").instant
        assert window_points_summary(np.array([mid]), sampling, start, end).count == 1


@settings(max_examples=200, deadline=None)
@given(st.one_of(st.text(max_size=60), st.integers(), st.floats(allow_nan=True, allow_infinity=True)),
       st.sampled_from(["start", "end"]), st.sampled_from([None, "monthly", "quarterly", "annual", "irregular"]))
def test_any_edge_resolves_or_names_the_field(value, role, sampling):
    try:
        edge = resolve_edge(value, role, sampling, field="claim.start")
    except ClaimError as error:
        assert error.location.field == "claim.start"
        return
    assert edge.form in ("year", "month", "quarter", "date", "decimal")
    assert np.isfinite(edge.instant)
