"""Anomalies and annual means, checked against the same arithmetic done by hand with numpy.

Anomalies against a per-calendar-month base-period mean and annual means of monthly values are the
ordinary climatological definitions (common practice, no source); the hand computations below restate them.
"""

from __future__ import annotations

import numpy as np
import pytest

from app.ingest import IngestOptions, read_csv_text
from ingest_samples import csv_text, series_from_csv

YEARS = 9
START = 2000


def seasonal_values(missing: tuple[int, ...] = ()) -> np.ndarray:
    """Nine invented years of monthly values: a seasonal cycle, a trend and a wiggle; NaN where missing."""
    k = np.arange(12 * YEARS)
    values = np.round(3.0 * np.cos(2 * np.pi * k / 12) + 0.01 * k + 0.2 * np.sin(1.7 * k), 4)
    values[list(missing)] = np.nan
    return values


def monthly_csv(values: np.ndarray, extra: np.ndarray | None = None) -> str:
    def cell(v):
        return "NA" if np.isnan(v) else repr(float(v))

    rows = [(f"{START + k // 12}-{k % 12 + 1:02d}", cell(v)) + ((cell(extra[k]),) if extra is not None else ())
            for k, v in enumerate(values)]
    return csv_text("date,value" + (",co2" if extra is not None else ""), rows)


def test_monthly_anomalies_subtract_each_calendar_month_base_mean():
    values = seasonal_values(missing=(14, 27))  # 2001-03 and 2002-04 lie in the base period
    series = series_from_csv(monthly_csv(values), IngestOptions(anomaly_base=(2001, 2004)))
    grid = values.reshape(YEARS, 12)
    climatology = np.nanmean(grid[1:4], axis=0)  # base 2001-2003: rows 1..3, each month on its own
    expected = (grid - climatology).ravel()
    np.testing.assert_allclose(series.value, expected[~np.isnan(expected)], rtol=0, atol=1e-12)
    assert any("each calendar month over 2001 to 2004" in note and "from 2 to 3 values" in note
               for note in series.notes)


def test_annual_anomalies_subtract_the_base_mean():
    values = [0.1, 0.3, 0.2, 0.5, 0.4, 0.6, 0.55, 0.8, 0.7, 0.9]
    series = series_from_csv(csv_text("year,value", [(1990 + i, v) for i, v in enumerate(values)]),
                             IngestOptions(anomaly_base=(1991, 1995)))
    base_mean = np.mean(values[1:5])  # years 1991-1994 sit at 1991.5 ... 1994.5, inside [1991, 1995)
    np.testing.assert_allclose(series.value, np.array(values) - base_mean, atol=1e-12)


def test_quarterly_anomalies_use_each_quarter():
    values = np.array([1.0, 5.0, 9.0, 2.0, 1.4, 5.2, 9.3, 2.6, 1.9, 5.1, 9.9, 2.2])
    labels = [f"{2000 + k // 4}-Q{k % 4 + 1}" for k in range(12)]
    series = series_from_csv(csv_text("period,value", zip(labels, values)), IngestOptions(anomaly_base=(2000, 2002)))
    climatology = values.reshape(3, 4)[:2].mean(axis=0)
    np.testing.assert_allclose(series.value, (values.reshape(3, 4) - climatology).ravel(), atol=1e-12)


def test_annual_means_drop_years_with_too_few_months():
    # 2001 loses 2 months (10 left, kept); 2003 loses 3 (9 left, dropped under the default of 10).
    values = seasonal_values(missing=(12, 13, 36, 40, 44))
    table = read_csv_text(monthly_csv(values), IngestOptions(annual_means=True))
    grid = values.reshape(YEARS, 12)
    counts = np.sum(~np.isnan(grid), axis=1)
    means = np.nanmean(grid, axis=1)
    keep = counts >= 10
    series = table.series
    assert series.sampling == "annual"
    np.testing.assert_allclose(series.value, means[keep], atol=1e-12)
    np.testing.assert_allclose(series.time, START + np.flatnonzero(keep) + 0.5)
    assert series.time_labels == tuple(str(START + i) for i in np.flatnonzero(keep))
    assert series.missing_times == (2003.5,)
    assert any("at least 10 of 12 months; dropped 2003 (9 months)" in note for note in series.notes)


def test_min_months_per_year_is_configurable():
    values = seasonal_values(missing=(36, 40, 44))
    series = series_from_csv(monthly_csv(values), IngestOptions(annual_means=True, min_months_per_year=9))
    np.testing.assert_allclose(series.value, np.nanmean(values.reshape(YEARS, 12), axis=1), atol=1e-12)


def test_incomplete_first_and_last_years_follow_the_same_rule():
    values = seasonal_values()[5:-4]  # June 2000 (7 months that year) to August 2008 (8 months)
    rows = [(f"{START + (k + 5) // 12}-{(k + 5) % 12 + 1:02d}", v) for k, v in enumerate(values)]
    series = series_from_csv(csv_text("date,value", rows), IngestOptions(annual_means=True, min_months_per_year=8))
    full = seasonal_values().reshape(YEARS, 12)
    np.testing.assert_allclose(series.value, np.append(full[1:8].mean(axis=1), full[8, :8].mean()), atol=1e-12)
    assert series.missing_times == (2000.5,)


def test_anomalies_come_before_annual_means():
    values = seasonal_values()
    series = series_from_csv(monthly_csv(values), IngestOptions(anomaly_base=(2000, 2003), annual_means=True))
    grid = values.reshape(YEARS, 12)
    expected = (grid - grid[:3].mean(axis=0)).mean(axis=1)
    np.testing.assert_allclose(series.value, expected, atol=1e-12)


def test_extra_columns_get_annual_means_but_not_anomalies():
    values, co2 = seasonal_values(), 370 + 0.15 * np.arange(12 * YEARS)
    table = read_csv_text(monthly_csv(values, co2), IngestOptions(anomaly_base=(2000, 2003), annual_means=True))
    np.testing.assert_allclose(table.extra_columns["co2"].value, co2.reshape(YEARS, 12).mean(axis=1))


def test_annual_means_of_annual_data_leave_it_as_is():
    values = [0.1, 0.3, 0.2, 0.5, 0.4, 0.6, 0.55, 0.8, 0.7, 0.9]
    series = series_from_csv(csv_text("year,value", [(1990 + i, v) for i, v in enumerate(values)]),
                             IngestOptions(annual_means=True))
    np.testing.assert_array_equal(series.value, values)
    assert "already annual" in series.notes[-1]


@pytest.mark.parametrize("start_of_month", [True, False])
def test_decimal_year_months_fall_in_the_right_calendar_year(start_of_month):
    # Some files write months at their start (2000.0, 2000.0833); others mid-month. Both group by calendar year.
    offset = 0.0 if start_of_month else 0.5
    rows = [(f"{START + (k + offset) / 12:.4f}", v) for k, v in enumerate(seasonal_values())]
    series = series_from_csv(csv_text("time,value", rows), IngestOptions(annual_means=True))
    np.testing.assert_allclose(series.value, seasonal_values().reshape(YEARS, 12).mean(axis=1), atol=1e-12)
