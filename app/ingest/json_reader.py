"""Reading a series sent as JSON: ``{"time": [...], "value": [...], "label"?: str, "units"?: str}``.

Times and values may be numbers or strings (read exactly as CSV cells are); a value may be null when missing.
"""

from __future__ import annotations

import math
from typing import Any

from app.errors import Location, SeriesFormatError
from app.ingest.build import build_series, check_size
from app.ingest.locations import FieldPlaces
from app.ingest.options import IngestOptions, check_options
from app.ingest.series import Series


def series_from_json(obj: Any, options: IngestOptions = IngestOptions(), field: str = "series") -> Series:
    check_options(options)
    if not isinstance(obj, dict):
        raise SeriesFormatError(f"expected an object with 'time' and 'value' arrays, got {_kind(obj)}",
                                location=Location(field=field), fix='Send {"time": [...], "value": [...]}')
    arrays = {}
    for key in ("time", "value"):
        if key not in obj:
            found = ", ".join(repr(str(k)) for k in list(obj)[:10]) or "no keys"
            raise SeriesFormatError(f"'{key}' is missing (found {found})", location=Location(field=f"{field}.{key}"),
                                    fix='Send {"time": [...], "value": [...]}')
        if not isinstance(obj[key], list):
            raise SeriesFormatError(f"'{key}' must be an array, got {_kind(obj[key])}",
                                    location=Location(field=f"{field}.{key}"), fix=f"Send '{key}' as a JSON array")
        arrays[key] = obj[key]
    return series_from_arrays(arrays["time"], arrays["value"], options, field=field,
                              label=_text_field(obj, "label", field), units=_text_field(obj, "units", field))


def series_from_arrays(time: list, value: list, options: IngestOptions = IngestOptions(), *, field: str = "series",
                       label: str = "", units: str = "") -> Series:
    """Parallel lists of times and values (numbers or strings; None for a missing value) as a checked Series.

    ``options.label`` and ``options.units``, when set, win over ``label`` and ``units``."""
    check_options(options)
    places = FieldPlaces(field)
    check_size(len(time), options.max_points, places.times())
    if len(time) != len(value):
        raise SeriesFormatError(f"'value' has {len(value)} entries but 'time' has {len(time)}",
                                location=places.values(), fix="Give exactly one value per time (null when missing)")
    time_cells = [_cell(item, places.time(i), allow_null=False) for i, item in enumerate(time)]
    value_cells = [_cell(item, places.value(i), allow_null=True) for i, item in enumerate(value)]
    built = build_series(time_cells, value_cells, places, options, label=options.label or label,
                         units=options.units or units, decimal_comma=options.decimal_comma)
    return built.series


def _cell(item: Any, where: Location, *, allow_null: bool) -> str:
    """A JSON scalar as the text a CSV cell would hold, so one parser reads both."""
    if item is None:
        if allow_null:
            return ""
        raise SeriesFormatError("the time is null", location=where, fix="Give every entry a time")
    if isinstance(item, str):
        return item
    if isinstance(item, bool) or not isinstance(item, (int, float)):
        raise SeriesFormatError(f"expected a number or a string, got {_kind(item)}", location=where,
                                fix="Write the entry as a number such as 0.42 or a string such as \"1998-03\"")
    if isinstance(item, float):
        # NaN stands for a missing value here as in a CSV cell; repr keeps every digit of the float.
        return "NaN" if math.isnan(item) else repr(item)
    if abs(item) > 10**300:
        raise SeriesFormatError("the number is too large", location=where, fix="Check the entry")
    return str(item)


def _text_field(obj: dict, key: str, field: str) -> str:
    text = obj.get(key)
    if text is None:
        return ""
    if not isinstance(text, str):
        raise SeriesFormatError(f"'{key}' must be a string, got {_kind(text)}",
                                location=Location(field=f"{field}.{key}"), fix=f"Send '{key}' as text, or leave it out")
    return text


def _kind(item: Any) -> str:
    names = {dict: "an object", list: "an array", str: "a string", bool: "true/false", type(None): "null",
             int: "a number", float: "a number"}
    return names.get(type(item), type(item).__name__)
