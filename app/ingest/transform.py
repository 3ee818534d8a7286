"""Optional reshaping after reading: anomalies against a base period, and annual means of monthly data."""

from __future__ import annotations

import calendar
from dataclasses import replace

import numpy as np

from app.errors import ClaimError, Location
from app.ingest.cells import short_list
from app.ingest.sampling import PERIODS_PER_YEAR, period_index
from app.ingest.series import Series

MONTHS_PER_YEAR = 12


def anomalies(series: Series, base: tuple[float, float]) -> Series:
    """Values minus their base-period mean: per calendar month (or quarter) for monthly (quarterly) data,
    one mean for annual or irregular data. The base is the half-open interval [start, end) in decimal years."""
    start, end = float(base[0]), float(base[1])
    where = Location(field="options.anomaly_base")
    periods = PERIODS_PER_YEAR.get(series.sampling, 1)
    season = period_index(series.time, periods) % periods
    in_base = (series.time >= start) & (series.time < end)
    if not in_base.any():
        raise ClaimError(f"the anomaly base period {start:g} to {end:g} holds no values; the data run from "
                         f"{series.start:.2f} to {series.end:.2f}", location=where,
                         fix="Choose a base period inside the data")
    counts = np.bincount(season[in_base], minlength=periods)
    if counts.min() == 0:
        empty = int(np.argmin(counts))
        raise ClaimError(f"the anomaly base period {start:g} to {end:g} has no value for {_season_name(empty, periods)}",
                         location=where, fix="Widen the base period so that every calendar month has values")
    sums = np.bincount(season[in_base], weights=series.value[in_base], minlength=periods)
    climatology = sums / counts
    what = {12: "each calendar month", 4: "each quarter"}.get(periods, "the base period")
    note = (f"anomalies: subtracted the mean of {what} over {start:g} to {end:g} (end excluded), "
            f"from {int(counts.min())} to {int(counts.max())} values per mean")
    return replace(series, value=series.value - climatology[season], notes=series.notes + (note,))


def annual_means(series: Series, min_months: int) -> Series:
    """Calendar-year means of monthly data; a year with fewer than ``min_months`` valid months is dropped."""
    if series.sampling == "annual":
        return replace(series, notes=series.notes + ("annual means: the series is already annual, left as is",))
    if series.sampling != "monthly":
        raise ClaimError(f"annual means need monthly data, but this series is {series.sampling}",
                         location=Location(field="options.annual_means"), fix="Turn off annual means for this series")
    years = period_index(series.time, MONTHS_PER_YEAR) // MONTHS_PER_YEAR
    if not years.size:
        return replace(series, sampling="annual")
    first = int(years[0])
    offsets = years - first
    counts = np.bincount(offsets)
    sums = np.bincount(offsets, weights=series.value)
    all_years = first + np.arange(counts.size)
    keep = counts >= min_months
    dropped = [f"{year} ({count} months)" for year, count in zip(all_years[~keep], counts[~keep])]
    note = f"annual means of calendar years with at least {min_months} of 12 months"
    if dropped:
        note += "; dropped " + short_list(dropped)
    missing = tuple(float(year) + 0.5 for year in all_years[~keep])
    return Series(time=all_years[keep] + 0.5, value=sums[keep] / counts[keep], sampling="annual",
                  label=series.label, units=series.units, missing_times=missing,
                  time_labels=tuple(str(int(year)) for year in all_years[keep]), notes=series.notes + (note,))


def _season_name(index: int, periods: int) -> str:
    if periods == 12:
        return calendar.month_name[index + 1]
    if periods == 4:
        return f"quarter {index + 1}"
    return "the base period"
