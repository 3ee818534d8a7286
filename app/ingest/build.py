"""From two columns of cells to a checked Series: the one pipeline the CSV and JSON readers share."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from app.errors import LimitExceeded, Location, SeriesFormatError
from app.ingest.cells import CellError, short_list
from app.ingest.locations import Places
from app.ingest.numbers import parse_number
from app.ingest.options import IngestOptions
from app.ingest.sampling import detect_sampling, gap_count, gap_times, period_label
from app.ingest.series import Series
from app.ingest.times import TimeAxis, parse_time_column
from app.ingest.transform import annual_means, anomalies
from app.ingest.validate import check_computable_scale, check_enough_values, check_not_constant, check_order


@dataclass(frozen=True)
class BuiltSeries:
    """The series and what was learned on the way, for previews and for reading more columns on the same times."""

    series: Series
    axis: TimeAxis  # every row's time, rows without a value included
    sampling: str
    missing_indices: tuple[int, ...]  # input positions whose value was missing
    gap_labels: tuple[str, ...]  # grid periods with no row at all


def check_size(n_points: int, limit: int, where: Location) -> None:
    if n_points > limit:
        raise LimitExceeded(f"the series has more than {limit:,} points, the most this service reads", location=where,
                            fix="Send a shorter series, or monthly or annual means instead of daily values")


def parse_value_column(cells: Sequence[str], places: Places, *, decimal_comma: bool,
                       sentinels: tuple[float, ...]) -> np.ndarray:
    """The cells as numbers, NaN where a value is missing; SeriesFormatError at the first cell that is not a number."""
    values = np.empty(len(cells))
    for index, text in enumerate(cells):
        try:
            values[index] = parse_number(text, decimal_comma=decimal_comma, sentinels=sentinels)
        except CellError as error:
            raise SeriesFormatError(error.message, location=places.value(index), fix=error.fix) from None
    return values


def build_series(time_cells: Sequence[str], value_cells: Sequence[str], places: Places, options: IngestOptions, *,
                 label: str, units: str, decimal_comma: bool) -> BuiltSeries:
    check_size(len(time_cells), options.max_points, places.times())
    axis = parse_time_column(time_cells, places.time, decimal_comma=decimal_comma)
    check_order(axis.times, axis.labels, places)
    values = parse_value_column(value_cells, places, decimal_comma=decimal_comma, sentinels=options.missing_sentinels)
    sampling = detect_sampling(axis.times)
    missing = np.isnan(values)
    check_enough_values(int((~missing).sum()), int(missing.sum()) + gap_count(axis.times, sampling), places.values())
    series = series_on_axis(axis, values, sampling, label=label, units=units)
    check_not_constant(series.value, places.values())
    check_computable_scale(series.value, places.values())
    series = apply_options(series, options, places.values())
    gap_labels = tuple(period_label(t, sampling) for t in gap_times(axis.times, sampling))
    return BuiltSeries(series=series, axis=axis, sampling=sampling,
                       missing_indices=tuple(int(i) for i in np.flatnonzero(missing)), gap_labels=gap_labels)


def series_on_axis(axis: TimeAxis, values: np.ndarray, sampling: str, *, label: str, units: str) -> Series:
    """The valid points as a Series; rows without a value and holes in the grid become its missing times."""
    valid = ~np.isnan(values)
    gaps = gap_times(axis.times, sampling)
    labels = np.asarray(axis.labels, dtype=object)
    notes = [f"times: {axis.convention}", f"sampling: {sampling}" + (
        " (the spacing fits no monthly, quarterly or annual grid)" if sampling == "irregular" else "")]
    if not valid.all():
        notes.append(f"{int((~valid).sum())} times had no value: {short_list([str(x) for x in labels[~valid]])}")
    if gaps.size:
        notes.append(f"{gaps.size} {sampling} periods had no row: "
                     f"{short_list([period_label(t, sampling) for t in gaps])}")
    missing_times = np.sort(np.concatenate([axis.times[~valid], gaps]))
    return Series(time=axis.times[valid], value=values[valid], sampling=sampling, label=label, units=units,
                  missing_times=tuple(float(t) for t in missing_times),
                  time_labels=tuple(str(x) for x in labels[valid]), notes=tuple(notes))


def apply_options(series: Series, options: IngestOptions, where: Location) -> Series:
    if options.anomaly_base is not None:
        series = anomalies(series, options.anomaly_base)
    if options.annual_means:
        series = annual_means(series, options.min_months_per_year)
        check_enough_values(series.n, 0, where, after=" after annual means")
        check_not_constant(series.value, where)
        check_computable_scale(series.value, where)
    return series
