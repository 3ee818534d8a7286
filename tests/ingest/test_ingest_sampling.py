"""Sampling detection from the spacing of times, and the holes in a regular grid."""

from __future__ import annotations

import numpy as np
import pytest

from app.ingest.sampling import detect_sampling, gap_count, gap_times, period_label
from ingest_samples import csv_text, series_from_csv, wiggle


@pytest.mark.parametrize("times, expected", [
    (np.arange(1950, 2000) + 0.5, "annual"),
    (np.delete(np.arange(1950, 2000) + 0.5, [3, 4, 17]), "annual"),
    (2000 + (np.arange(40) + 0.5) / 4, "quarterly"),
    (2000 + (np.arange(120) + 0.5) / 12, "monthly"),
    (np.round(1998 + (np.arange(120) + 0.5) / 12, 2), "monthly"),  # decimal years rounded to two places
    (2000 + np.arange(120) / 12, "monthly"),  # months written at their start
    (2000 + np.arange(100) / 52, "irregular"),  # weekly
    (np.cumsum(np.random.default_rng(7).uniform(0.3, 1.7, 60)), "irregular"),
    (np.array([2000.5]), "irregular"),
])
def test_detect_sampling(times, expected):
    assert detect_sampling(times) == expected


def test_dates_on_the_first_of_each_month_are_monthly():
    labels = [f"{2001 + k // 12}-{k % 12 + 1:02d}-01" for k in range(48)]
    series = series_from_csv(csv_text("date,value", [(t, wiggle(i)) for i, t in enumerate(labels)]))
    assert series.sampling == "monthly"


def test_irregular_series_has_no_gaps_but_keeps_missing_rows():
    times = [1990.1, 1990.9, 1992.3, 1992.5, 1993.8, 1995.0, 1995.1, 1996.7, 1998.2, 1998.3]
    rows = [(t, "NA" if i == 4 else wiggle(i)) for i, t in enumerate(times)]
    series = series_from_csv(csv_text("time,value", rows))
    assert series.sampling == "irregular"
    assert series.missing_times == (1993.8,)
    assert any("fits no monthly, quarterly or annual grid" in note for note in series.notes)


def test_gap_times_and_labels():
    times = np.delete(2000 + (np.arange(30) + 0.5) / 12, [2, 3, 25])
    assert gap_count(times, "monthly") == 3
    gaps = gap_times(times, "monthly")
    np.testing.assert_allclose(gaps, 2000 + (np.array([2, 3, 25]) + 0.5) / 12)
    assert [period_label(t, "monthly") for t in gaps] == ["2000-03", "2000-04", "2002-02"]
    assert period_label(2001.375, "quarterly") == "2001-Q2"
    assert period_label(1999.5, "annual") == "1999"
    assert gap_count(times, "irregular") == 0


def test_annual_gaps_are_missing_times():
    years = [1990, 1991, 1993, 1994, 1995, 1996, 1997, 1999, 2000, 2001]
    series = series_from_csv(csv_text("year,value", [(y, wiggle(i)) for i, y in enumerate(years)]))
    assert series.sampling == "annual"
    assert series.missing_times == (1992.5, 1998.5)
    assert any("2 annual periods had no row: 1992, 1998" in note for note in series.notes)
