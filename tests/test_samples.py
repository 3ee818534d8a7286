"""The invented demo series: the catalog, the files, their reproducibility and what the catalog promises."""

from __future__ import annotations

import csv
import datetime as dt
import importlib.util
import json
import re
import sys
from pathlib import Path

import numpy as np
import pytest

from app.ingest import IngestOptions, read_csv_text
from app.vocabulary import CLAIM_KINDS

SAMPLES_DIR = Path(__file__).resolve().parent.parent / "sample_series"
GENERATOR = SAMPLES_DIR / "generate.py"
SLUG = re.compile(r"[a-z0-9]+(?:-[a-z0-9]+)*")
ENTRY_KEYS = {"name", "file", "title", "description", "units", "sampling", "time_column", "value_column",
              "extra_columns", "missing_sentinels", "suggested_claim", "what_to_expect", "rate_unit"}
PERIODS_PER_YEAR = {"annual": 1, "quarterly": 4, "monthly": 12}
MIN_ROWS = 8


def load_catalog() -> list[dict]:
    return json.loads((SAMPLES_DIR / "catalog.json").read_text(encoding="utf-8"))


CATALOG = load_catalog()
BY_NAME = {entry["name"]: entry for entry in CATALOG}


def read_rows(entry: dict) -> tuple[list[str], list[list[str]]]:
    with open(SAMPLES_DIR / entry["file"], encoding="utf-8", newline="") as handle:
        rows = list(csv.reader(handle))
    return rows[0], rows[1:]


def period_number(text: str | int, sampling: str) -> int:
    """A time label as a count of periods since year 0: consecutive periods differ by one."""
    text = str(text)
    if sampling == "annual":
        if not re.fullmatch(r"\d{4}", text):
            raise ValueError(f"{text!r} is not a whole year")
        return int(text)
    if sampling == "monthly":
        when = dt.datetime.strptime(text, "%Y-%m")
        if text != when.strftime("%Y-%m"):
            raise ValueError(f"{text!r} is not written YYYY-MM")
        return when.year * 12 + when.month - 1
    match = re.fullmatch(r"(\d{4})-Q([1-4])", text)
    if not match:
        raise ValueError(f"{text!r} is not written YYYY-Qn")
    return int(match.group(1)) * 4 + int(match.group(2)) - 1


def decimal_times(entry: dict, labels: list[str]) -> np.ndarray:
    """Mid-period decimal years, the project's convention (DEVELOPERS.md)."""
    per_year = PERIODS_PER_YEAR[entry["sampling"]]
    return np.array([(period_number(label, entry["sampling"]) + 0.5) / per_year for label in labels])


def numeric_column(entry: dict, name: str) -> tuple[np.ndarray, np.ndarray]:
    """Decimal times and values of one column, missing cells (blank or a sentinel) dropped."""
    header, rows = read_rows(entry)
    column = header.index(name)
    sentinels = {float(s) for s in entry["missing_sentinels"]}
    kept = [(row[0], float(row[column])) for row in rows
            if row[column] != "" and float(row[column]) not in sentinels]
    return decimal_times(entry, [label for label, _ in kept]), np.array([value for _, value in kept])


def slope_per_decade(entry: dict, first_year: float = -np.inf, last_year: float = np.inf) -> float:
    """Plain OLS slope of the value column over whole years first_year..last_year."""
    t, y = numeric_column(entry, entry["value_column"])
    inside = (t >= first_year) & (t < last_year + 1)
    return 10.0 * float(np.polyfit(t[inside], y[inside], 1)[0])


@pytest.fixture(scope="module")
def generator():
    """sample_series/generate.py as a module; dataclasses need it registered while it loads."""
    spec = importlib.util.spec_from_file_location("sample_series_generate", GENERATOR)
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module
    try:
        spec.loader.exec_module(module)
        yield module
    finally:
        sys.modules.pop(spec.name, None)


# --- the catalog -------------------------------------------------------------------------------------------


def test_catalog_entries_have_every_field_and_unique_slugs():
    assert len(CATALOG) >= 5
    for entry in CATALOG:
        assert set(entry) == ENTRY_KEYS, entry["name"]
        assert SLUG.fullmatch(entry["name"]), entry["name"]
        assert entry["sampling"] in PERIODS_PER_YEAR
        assert entry["rate_unit"] == "per decade"
        assert entry["units"] and entry["what_to_expect"]
    assert len(BY_NAME) == len(CATALOG)
    assert len({entry["file"] for entry in CATALOG}) == len(CATALOG)


def test_every_catalog_text_and_the_readme_say_the_data_are_invented():
    for entry in CATALOG:
        assert "invented" in entry["title"].lower(), entry["name"]
        assert entry["description"].startswith("INVENTED"), entry["name"]
        assert "invented" in entry["suggested_claim"]["quote"].lower(), entry["name"]
    readme = (SAMPLES_DIR / "README.md").read_text(encoding="utf-8")
    assert "INVENTED" in readme
    for entry in CATALOG:
        listed = [line for line in readme.splitlines() if f"`{entry['file']}`" in line]
        assert len(listed) == 1 and "invented" in listed[0].lower(), entry["file"]


def test_the_folder_holds_exactly_the_catalogued_files():
    present = {p.name for p in SAMPLES_DIR.iterdir() if p.is_file()}
    expected = {entry["file"] for entry in CATALOG} | {"catalog.json", "README.md", "generate.py"}
    assert present == expected


# --- the files ----------------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", sorted(BY_NAME))
def test_csv_is_clean_header_plus_numeric_rows(name):
    entry = BY_NAME[name]
    header, rows = read_rows(entry)
    assert header == [entry["time_column"], entry["value_column"], *entry["extra_columns"]]
    assert len(rows) >= MIN_ROWS
    sentinels = {float(s) for s in entry["missing_sentinels"]}
    for number, row in enumerate(rows, start=2):
        assert len(row) == len(header), f"row {number}"
        value, *extras = row[1:]
        if value == "":
            assert sentinels, f"row {number}: blank value in a series that declares no gaps"
        else:
            float(value)
        for cell in extras:
            float(cell)  # covariates have no gaps
    text = (SAMPLES_DIR / entry["file"]).read_bytes()
    assert b"#" not in text and b"\r" not in text


@pytest.mark.parametrize("name", sorted(BY_NAME))
def test_times_parse_and_step_by_exactly_one_period(name):
    entry = BY_NAME[name]
    _, rows = read_rows(entry)
    periods = np.array([period_number(row[0], entry["sampling"]) for row in rows])
    assert np.all(np.diff(periods) == 1)


@pytest.mark.parametrize("name", sorted(BY_NAME))
def test_suggested_claim_is_a_window_inside_the_series(name):
    entry = BY_NAME[name]
    claim = entry["suggested_claim"]
    assert claim["kind"] in CLAIM_KINDS
    if entry["sampling"] == "annual":
        assert isinstance(claim["start"], int) and isinstance(claim["end"], int)
    _, rows = read_rows(entry)
    first, last = (period_number(rows[i][0], entry["sampling"]) for i in (0, -1))
    start, end = (period_number(claim[k], entry["sampling"]) for k in ("start", "end"))
    assert first <= start < end <= last


def test_rerunning_the_generator_reproduces_every_file_byte_for_byte(generator, tmp_path):
    written = generator.generate(tmp_path)
    assert {p.name for p in written} == {p.name for p in tmp_path.iterdir()}
    assert {p.name for p in written} | {"generate.py"} == {p.name for p in SAMPLES_DIR.iterdir() if p.is_file()}
    for path in written:
        assert path.read_bytes() == (SAMPLES_DIR / path.name).read_bytes(), path.name


def test_generator_takes_an_output_directory_argument(generator, tmp_path, capsys):
    assert generator.main([str(tmp_path / "out")]) == 0
    assert (tmp_path / "out" / "catalog.json").is_file()
    assert generator.main(["a", "b"]) == 2
    assert "usage" in capsys.readouterr().err


# --- what the catalog promises: the models were built in (design values of generate.py, not outside facts) --


def test_provincial_pause_window_is_flat_inside_a_steady_warming():
    entry = BY_NAME["quorvane-annual-temperature"]
    assert 0.12 < slope_per_decade(entry) < 0.18  # built: 0.15 °C per decade
    assert abs(slope_per_decade(entry, 1998, 2012)) < 0.05  # the claim's 'no warming' window looks flat


def test_lake_level_really_stops_rising_in_1995():
    entry = BY_NAME["lake-orrindal-level"]
    assert slope_per_decade(entry, 1950, 1995) > 0.09  # built: 0.12 m per decade
    assert abs(slope_per_decade(entry, 1995, 2024)) < 0.04  # built: zero


def test_lake_ice_decline_steepens_after_1990_and_upticks_after_2012():
    entry = BY_NAME["lake-orrindal-ice-days"]
    assert slope_per_decade(entry, 1990, 2024) < slope_per_decade(entry, 1960, 1990) - 4.0  # built: -1.5 to -10
    assert slope_per_decade(entry, 2012, 2024) > 0.0  # the claimed 'recovery'


def test_station_claims_look_the_way_they_are_worded():
    monthly = BY_NAME["wrenhollow-point-monthly-temperature"]
    assert slope_per_decade(monthly, 2016, 2024) < 0.0 < slope_per_decade(monthly)  # 'cooling since 2016'
    quarterly = BY_NAME["wrenhollow-point-quarterly-sea-temperature"]
    assert slope_per_decade(quarterly, 2014, 2024) > 1.8 * slope_per_decade(quarterly)  # 'twice as fast'


def test_ocean_index_acts_three_months_later_with_about_a_tenth_of_a_degree_per_unit():
    entry = BY_NAME["wrenhollow-point-monthly-temperature"]
    t, y = numeric_column(entry, "value")
    _, index = numeric_column(entry, "ocean_index")
    lag = 3  # built: the index acts three months later
    design = np.column_stack([np.ones(t.size - lag), t[lag:], index[:-lag]])
    coefficients = np.linalg.lstsq(design, y[lag:], rcond=None)[0]
    assert 0.07 < coefficients[2] < 0.13  # built: 0.10 °C per unit
    assert 0.15 < 10.0 * coefficients[1] < 0.22  # built: 0.18 °C per decade


def test_forced_temperature_follows_log2_of_its_driver():
    response = BY_NAME["quorvane-forced-temperature"]
    _, y = numeric_column(response, "value")
    _, driver = numeric_column(response, "greenhouse_index")
    _, driver_file = numeric_column(BY_NAME["quorvane-greenhouse-index"], "value")
    np.testing.assert_array_equal(driver, driver_file)
    sensitivity = np.polyfit(np.log2(driver / driver[0]), y, 1)[0]
    assert 2.0 < sensitivity < 3.0  # built: 2.5 °C per doubling
    assert np.all(np.diff(np.diff(driver[::10])) > 0.0)  # each decade's rise exceeds the last: it accelerates


def test_glacier_series_marks_six_missing_years_both_ways():
    entry = BY_NAME["halvorrin-glacier-mass-balance"]
    _, rows = read_rows(entry)
    cells = [row[1] for row in rows]
    assert cells.count("") == 3 and cells.count("-999") == 3
    assert entry["missing_sentinels"] == [-999]


# --- through the project's own reader ---------------------------------------------------------------------


@pytest.mark.parametrize("name", sorted(BY_NAME))
def test_sample_reads_through_the_csv_ingest(name):
    entry = BY_NAME[name]
    options = IngestOptions(time_column=entry["time_column"], value_column=entry["value_column"],
                            missing_sentinels=tuple(float(s) for s in entry["missing_sentinels"]))
    text = (SAMPLES_DIR / entry["file"]).read_text(encoding="utf-8")
    series = read_csv_text(text, options).series
    t, y = numeric_column(entry, entry["value_column"])
    assert series.sampling == entry["sampling"]
    np.testing.assert_allclose(series.time, t)
    np.testing.assert_allclose(series.value, y)
    assert len(series.missing_times) == len(read_rows(entry)[1]) - t.size
