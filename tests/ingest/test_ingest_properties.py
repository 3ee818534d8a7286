"""No input makes a reader fail with anything but an InputError, and whatever it accepts is a valid Series."""

from __future__ import annotations

import math

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from app.errors import InputError
from app.ingest import IngestOptions, read_csv_text, series_from_json, validate_series

PROPERTY_SETTINGS = settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])

options_strategy = st.builds(
    IngestOptions,
    decimal_comma=st.booleans(),
    missing_sentinels=st.sampled_from([(), (-999.0,), (-99.99, -9999.0)]),
    anomaly_base=st.sampled_from([None, None, (1980.0, 1985.0), (2000.0, 2003.0), (1990.0, 1991.0)]),
    annual_means=st.booleans(),
    min_months_per_year=st.integers(1, 12),
    max_points=st.sampled_from([200_000, 30]),
)

# Pieces that real files are made of, so random files often get past the first checks.
time_cells = st.one_of(
    st.integers(1990, 2030).map(str),
    st.floats(1990, 2030, allow_nan=False).map(lambda x: f"{x:.2f}"),
    st.tuples(st.integers(1995, 2005), st.integers(0, 13)).map(lambda ym: f"{ym[0]}-{ym[1]:02d}"),
    st.tuples(st.integers(1995, 2005), st.integers(1, 12), st.integers(1, 31)).map(lambda d: f"{d[0]}-{d[1]:02d}-{d[2]:02d}"),
    st.tuples(st.integers(1995, 2005), st.integers(0, 5)).map(lambda q: f"{q[0]}-Q{q[1]}"),
    st.sampled_from(["", "NA", "1998-02-29", "2000-02-29T12:00:00Z", "x", '"1999"', "1e400", "-"]),
)
value_cells = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(-10**6, 10**6).map(str),
    st.floats(-5, 5).map(lambda x: f"{x:.3f}".replace(".", ",")),
    st.sampled_from(["", "NA", "N/A", "NaN", "null", "-", "-999", "1.234,5", "inf", '"0,5"', "abc", "1e999"]),
)


def check_reader(read, data, options=IngestOptions()):
    try:
        result = read(data, options)
    except InputError:
        return
    validate_series(getattr(result, "series", result))


def structured_csv(sep: str, header: str, rows: list[tuple[str, str]]) -> str:
    return header.replace(",", sep) + "\n" + "".join(f"{t}{sep}{v}\n" for t, v in rows)


@PROPERTY_SETTINGS
@given(st.text())
def test_random_text(text):
    check_reader(read_csv_text, text)


@PROPERTY_SETTINGS
@given(st.binary())
def test_random_bytes(data):
    check_reader(read_csv_text, data)


@PROPERTY_SETTINGS
@given(st.text(alphabet="0123456789,;\t\n\r.-\"' #NAQTZ:eE+/x\ufeff", max_size=400), options_strategy)
def test_text_made_of_csv_characters(text, options):
    check_reader(read_csv_text, text, options)


@PROPERTY_SETTINGS
@given(st.sampled_from([",", ";", "\t"]), st.sampled_from(["time,value", "year,month,value", "a,b", "date,value,x"]),
       st.lists(st.tuples(time_cells, value_cells), max_size=40), options_strategy)
def test_tables_of_plausible_cells(sep, header, rows, options):
    check_reader(read_csv_text, structured_csv(sep, header, rows), options)


plain_values = st.floats(-50, 50).map(lambda x: f"{x:.3f}")
GRID_LABELS = {
    "annual": lambda k: str(1980 + k),
    "monthly": lambda k: f"{1980 + k // 12}-{k % 12 + 1:02d}",
    "decimal": lambda k: f"{1980 + (k + 0.5) / 12:.3f}",
    "quarterly": lambda k: f"{1980 + k // 4}-Q{k % 4 + 1}",
    "dates": lambda k: f"{1980 + k // 12}-{k % 12 + 1:02d}-15",
}


@PROPERTY_SETTINGS
@given(st.sampled_from([",", ";", "\t"]), st.sampled_from(sorted(GRID_LABELS)),
       st.lists(st.tuples(st.booleans(), plain_values), min_size=8, max_size=80),
       st.none() | st.tuples(st.integers(0, 79), value_cells), options_strategy)
def test_regular_grids_with_holes_and_an_odd_value(sep, grid, cells, odd, options):
    # Each position of the grid is kept or left out, so gaps fall anywhere; at most one cell is odd.
    values = [value for _, value in cells]
    if odd is not None:
        values[odd[0] % len(values)] = odd[1]
    rows = [(GRID_LABELS[grid](k), values[k]) for k, (keep, _) in enumerate(cells) if keep or k % 3 == 0]
    check_reader(read_csv_text, structured_csv(sep, "time,value", rows), options)


json_scalars = st.one_of(st.none(), st.booleans(), st.integers(), st.floats(), st.text(max_size=20),
                         st.integers(min_value=10**300, max_value=10**320))
json_values = st.recursive(json_scalars, lambda inner: st.lists(inner, max_size=4) |
                           st.dictionaries(st.text(max_size=8), inner, max_size=4), max_leaves=20)


@PROPERTY_SETTINGS
@given(json_values)
def test_random_json(obj):
    check_reader(series_from_json, obj)


@PROPERTY_SETTINGS
@given(st.fixed_dictionaries({"time": st.lists(st.one_of(json_scalars, time_cells, st.integers(1900, 2100)), max_size=30),
                              "value": st.lists(st.one_of(json_scalars, value_cells), max_size=30)},
                             optional={"label": json_scalars, "units": json_scalars}),
       options_strategy)
def test_json_series_shaped_objects(obj, options):
    check_reader(series_from_json, obj, options)


@PROPERTY_SETTINGS
@given(st.integers(1900, 2000), st.lists(st.floats(-1e6, 1e6) | st.none(), min_size=8, max_size=50), options_strategy)
def test_json_annual_series(start, values, options):
    obj = {"time": list(range(start, start + len(values))), "value": values}
    try:
        series = series_from_json(obj, options)
    except InputError:
        return
    validate_series(series)
    assert all(math.isfinite(v) for v in series.value)
