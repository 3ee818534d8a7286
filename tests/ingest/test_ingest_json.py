"""Reading a series from JSON objects and from plain arrays."""

from __future__ import annotations

import numpy as np

from app.ingest import IngestOptions, series_from_arrays, series_from_json
from ingest_samples import json_series, wiggle


def test_numbers_strings_and_nulls():
    obj = {"time": [f"{2000 + k // 12}-{k % 12 + 1:02d}" for k in range(24)],
           "value": [None if k == 5 else (str(wiggle(k)) if k % 2 else wiggle(k)) for k in range(24)],
           "label": "Invented anomaly", "units": "K"}
    series = series_from_json(obj)
    assert (series.label, series.units, series.sampling) == ("Invented anomaly", "K", "monthly")
    assert series.n == 23
    np.testing.assert_allclose(series.missing_times, [2000 + 5.5 / 12])
    np.testing.assert_allclose(series.value, [wiggle(k) for k in range(24) if k != 5])


def test_integer_years_sit_mid_year_and_floats_as_written():
    assert series_from_json(json_series(10)).time[0] == 1990.5
    floats = {"time": [1990.0 + i for i in range(10)], "value": json_series(10)["value"]}
    assert series_from_json(floats).time[0] == 1990.0


def test_nan_is_missing_and_sentinels_apply():
    obj = json_series(12)
    obj["value"][2], obj["value"][7] = float("nan"), -999
    series = series_from_json(obj, IngestOptions(missing_sentinels=(-999,)))
    assert series.missing_times == (1992.5, 1997.5)


def test_options_label_wins_over_the_object_label():
    series = series_from_json({**json_series(10), "label": "from file"}, IngestOptions(label="chosen"))
    assert series.label == "chosen"


def test_series_from_arrays():
    series = series_from_arrays(list(range(2000, 2010)), [wiggle(i) for i in range(10)], label="x")
    assert series.label == "x" and series.sampling == "annual" and series.n == 10
