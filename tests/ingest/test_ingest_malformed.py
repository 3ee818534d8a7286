"""Every way an upload can be wrong gets its own message, its place (row/column or JSON field) and a fix."""

from __future__ import annotations

import pytest

from app.errors import ClaimError, LimitExceeded, SeriesContentError, SeriesFormatError
from app.ingest import IngestOptions, read_csv_text, series_from_json
from ingest_samples import annual_lines, json_series


def csv_with(row_index: int, time: str | None = None, value: str | None = None, n: int = 12, sep: str = ",") -> str:
    """An annual CSV whose data row ``row_index`` (0-based) has its time and/or value replaced."""
    lines = annual_lines(n, sep=sep)
    year, val = lines[row_index + 1].split(sep)
    lines[row_index + 1] = f"{year if time is None else time}{sep}{val if value is None else value}"
    return "\n".join(lines) + "\n"


def values_csv(values: list[str], start: int = 1990) -> str:
    return "year,value\n" + "".join(f"{start + i},{v}\n" for i, v in enumerate(values))


def monthly_csv(labels: list[str]) -> str:
    return "date,value\n" + "".join(f"{label},{0.1 * (i % 5) + 0.01 * i}\n" for i, label in enumerate(labels))


MONTHS_2000 = [f"2000-{m:02d}" for m in range(1, 13)]

# (input, options, error class, fragment of the message, expected location as a dict)
CSV_CASES = [
    pytest.param("", {}, SeriesFormatError, "the file is empty", {"row": 1}, id="empty"),
    pytest.param("\n \n\r\n", {}, SeriesFormatError, "the file is empty", {"row": 1}, id="blank-lines-only"),
    pytest.param("# only a comment\n", {}, SeriesFormatError, "the file is empty", {"row": 1}, id="comments-only"),
    pytest.param("1990,0.1\n1991,0.2\n1992,0.3\n", {}, SeriesFormatError, "not column names", {"row": 1},
                 id="no-header"),
    pytest.param("value\n1\n2\n3\n", {}, SeriesFormatError, "only one column", {"row": 1}, id="one-column"),
    pytest.param("year value\n1990 1\n1991 2\n", {}, SeriesFormatError, "only one column", {"row": 1},
                 id="space-separated"),
    pytest.param(annual_lines(12, joined=True), {"time_column": "Date"}, SeriesFormatError,
                 "no column named 'Date' for the time", {"row": 1, "column": "Date"}, id="unknown-time-column"),
    pytest.param(annual_lines(12, joined=True), {"value_column": "temp"}, SeriesFormatError,
                 "no column named 'temp' for the value", {"row": 1, "column": "temp"}, id="unknown-value-column"),
    pytest.param(annual_lines(12, joined=True), {"time_column": "year", "value_column": "YEAR"}, SeriesFormatError,
                 "cannot be both the time and the value", {"row": 1, "column": "year"}, id="same-column-twice"),
    pytest.param("a,b\nx,1\ny,2\n", {}, SeriesFormatError, "no column holds times", {"row": 1}, id="no-time-column"),
    pytest.param("year,name\n1990,abc\n1991,def\n", {}, SeriesFormatError, "no column besides 'year' holds numbers",
                 {"row": 1}, id="no-value-column"),
    pytest.param("year,value,value\n1990,1,2\n", {}, SeriesFormatError, "two columns are named 'value'",
                 {"row": 1, "column": "value"}, id="duplicate-column-names"),
    pytest.param("year,value\n", {}, SeriesContentError, "no data rows", {"row": 1}, id="header-only"),
    pytest.param(csv_with(3, value="abc"), {}, SeriesFormatError, "'abc' is not a number",
                 {"row": 5, "column": "value"}, id="non-numeric-value"),
    pytest.param(csv_with(3, value='"1.234,5"'), {}, SeriesFormatError, "mixes '.' and ','",
                 {"row": 5, "column": "value"}, id="thousands-separator"),
    pytest.param(csv_with(2, value="0,5", sep="\t"), {}, SeriesFormatError, "not a number with a decimal point",
                 {"row": 4, "column": "value"}, id="decimal-comma-without-option-tab"),
    pytest.param(csv_with(2, value='"0,5"'), {}, SeriesFormatError, "not a number with a decimal point",
                 {"row": 4, "column": "value"}, id="decimal-comma-without-option-quoted"),
    pytest.param(csv_with(6, value="inf"), {}, SeriesFormatError, "'inf' is infinite",
                 {"row": 8, "column": "value"}, id="infinity"),
    pytest.param(csv_with(6, value="-Infinity"), {}, SeriesFormatError, "is infinite",
                 {"row": 8, "column": "value"}, id="minus-infinity"),
    pytest.param(csv_with(1, value="1e999"), {}, SeriesFormatError, "too large", {"row": 3, "column": "value"},
                 id="overflow"),
    pytest.param(csv_with(4, time="1993"), {}, SeriesContentError, "'1993' appears twice (first at row 5",
                 {"row": 6, "column": "year"}, id="duplicate-time"),
    pytest.param(csv_with(4, time="1980"), {}, SeriesContentError, "'1980' comes after '1993'",
                 {"row": 6, "column": "year"}, id="unsorted"),
    pytest.param(csv_with(4, time=""), {}, SeriesFormatError, "the time is missing", {"row": 6, "column": "year"},
                 id="blank-time"),
    pytest.param(csv_with(4, time="March 1994"), {}, SeriesFormatError, "'March 1994' is not a time",
                 {"row": 6, "column": "year"}, id="unparseable-time"),
    pytest.param(csv_with(4, time="1e9"), {}, SeriesFormatError, "outside the years this service reads",
                 {"row": 6, "column": "year"}, id="time-out-of-range"),
    pytest.param(monthly_csv(MONTHS_2000[:5] + ["2000-13"] + MONTHS_2000[6:]), {}, SeriesFormatError,
                 "month 13, out of range 1-12", {"row": 7, "column": "date"}, id="month-out-of-range"),
    pytest.param(monthly_csv(MONTHS_2000[:5] + ["2000-06-15"] + MONTHS_2000[6:]), {}, SeriesFormatError,
                 "cannot mix time formats", {"row": 7, "column": "date"}, id="mixed-date-formats"),
    pytest.param(monthly_csv(MONTHS_2000[:3] + ["2000.25"] + MONTHS_2000[4:]), {}, SeriesFormatError,
                 "is written as years or decimal years but the first time", {"row": 5, "column": "date"},
                 id="mixed-month-and-decimal"),
    pytest.param(monthly_csv([f"2001-{m:02d}-28" for m in range(1, 2)] + ["2001-02-30"] +
                             [f"2001-{m:02d}-28" for m in range(3, 13)]), {}, SeriesFormatError,
                 "day 30, which month 2 of 2001 does not have", {"row": 3, "column": "date"}, id="day-out-of-range"),
    pytest.param(monthly_csv([f"2001-{m:02d}-01T00:00:00Z" for m in range(1, 12)] + ["2001-12-01Tnoon"]), {},
                 SeriesFormatError, "time of day that cannot be read", {"row": 13, "column": "date"},
                 id="bad-time-of-day"),
    pytest.param(monthly_csv(["2000-Q1", "2000-Q2", "2000-Q5"] + [f"{2001 + k // 4}-Q{k % 4 + 1}" for k in range(9)]),
                 {}, SeriesFormatError, "quarter 5, out of range 1-4", {"row": 4, "column": "date"},
                 id="quarter-out-of-range"),
    pytest.param("year,month,value\n" + "".join(f"2000,{m},{m * 0.1}\n" for m in (1, 2, 13)), {}, SeriesFormatError,
                 "month 13 is out of range 1-12", {"row": 4, "column": "month"}, id="month-column-out-of-range"),
    pytest.param(csv_with(2, value="0.5,7"), {}, SeriesFormatError, "the row has 3 fields but the header has 2",
                 {"row": 4}, id="ragged-too-many"),
    pytest.param(annual_lines(12, joined=True).replace("1995,", "1995;"), {}, SeriesFormatError,
                 "the row has 1 fields but the header has 2", {"row": 7}, id="ragged-too-few"),
    pytest.param(csv_with(2, value='"0.5'), {}, SeriesFormatError, "", {"row": 4}, id="unclosed-quote"),
    pytest.param(values_csv(["0.1", "0.2", "0.3", "0.1", "0.5"]), {}, SeriesContentError,
                 "only 5 valid values; a trend audit needs at least 8", {"column": "value"}, id="too-few-points"),
    pytest.param(values_csv(["0.1", "NA", "", "-", "0.5", "null", "N/A", "0.3", "NaN", "0.2"]), {},
                 SeriesContentError, "6 of 10 times have no value (more than half)", {"column": "value"},
                 id="mostly-missing"),
    pytest.param("year,value\n" + "".join(f"{y},{0.1 * i + (i % 2) * 0.05}\n" for i, y in
                                          enumerate([1900, 1901, 1902, 1950, 1951, 1952, 1953, 1954, 1955, 2000])),
                 {}, SeriesContentError, "have no value (more than half)", {"column": "value"},
                 id="mostly-missing-by-gaps"),
    pytest.param(values_csv(["-999", "0.2", "-999", "-999", "-999", "-999", "-999", "0.1", "0.3", "0.4"]),
                 {"missing_sentinels": (-999.0,)}, SeriesContentError, "6 of 10 times have no value",
                 {"column": "value"}, id="mostly-sentinels"),
    pytest.param(values_csv(["1"] * 10), {}, SeriesContentError, "every value is 1: a constant series",
                 {"column": "value"}, id="constant"),
    pytest.param(annual_lines(20, joined=True), {"max_points": 10}, LimitExceeded, "more than 10 data rows",
                 {"row": 12}, id="too-many-rows"),
    pytest.param(b"year,value\n1990,\x00\x01\x02\n", {}, SeriesFormatError, "NUL characters", {"row": 2},
                 id="binary-nul"),
    pytest.param("year,value\n1990,0.1\n1991,caf\u00e9\n".encode("latin-1"), {}, SeriesFormatError,
                 "not UTF-8 text (byte 0xe9", {"row": 3}, id="latin-1-bytes"),
    pytest.param(b"PK\x03\x04\x14\x00\x06\x00", {}, SeriesFormatError, "zip archive", {"row": 1}, id="xlsx"),
    pytest.param("year,value\n1990,1\n".encode("utf-16"), {}, SeriesFormatError, "UTF-16 text", {"row": 1},
                 id="utf-16"),
    pytest.param(annual_lines(12, joined=True), {"min_months_per_year": 13}, ClaimError,
                 "min_months_per_year must be a whole number from 1 to 12",
                 {"field": "options.min_months_per_year"}, id="bad-min-months"),
    pytest.param(annual_lines(12, joined=True), {"anomaly_base": (1995, 1991)}, ClaimError,
                 "starts at 1995 but ends at 1991", {"field": "options.anomaly_base"}, id="base-backwards"),
    pytest.param(annual_lines(12, joined=True), {"anomaly_base": (1800, 1850)}, ClaimError,
                 "holds no values; the data run from 1990.50", {"field": "options.anomaly_base"}, id="base-outside"),
    pytest.param(monthly_csv([f"{2000 + k // 12}-{k % 12 + 1:02d}" for k in range(36)]),
                 {"anomaly_base": (2000, 2000.2)}, ClaimError, "has no value for March",
                 {"field": "options.anomaly_base"}, id="base-misses-a-month"),
    pytest.param(annual_lines(12, joined=True), {"missing_sentinels": (float("nan"),)}, ClaimError,
                 "not a finite number", {"field": "options.missing_sentinels[0]"}, id="nan-sentinel"),
    pytest.param(monthly_csv(["2000-Q1", "2000-Q2", "2000-Q3"] + [f"{2001 + k // 4}-Q{k % 4 + 1}" for k in range(9)]),
                 {"annual_means": True}, ClaimError, "annual means need monthly data, but this series is quarterly",
                 {"field": "options.annual_means"}, id="annual-means-of-quarters"),
    pytest.param(monthly_csv([f"{2000 + k // 12}-{k % 12 + 1:02d}" for k in range(60)]), {"annual_means": True},
                 SeriesContentError, "only 5 valid values after annual means", {"column": "value"},
                 id="too-few-years-after-annual-means"),
]


@pytest.mark.parametrize("text, options, error, fragment, where", CSV_CASES)
def test_malformed_csv_is_rejected_with_place_and_fix(text, options, error, fragment, where):
    with pytest.raises(error) as caught:
        read_csv_text(text, IngestOptions(**options))
    assert type(caught.value) is error
    assert fragment in caught.value.message
    assert caught.value.location.as_dict() == where
    assert caught.value.fix, "every rejection says what to do"


def test_decimal_comma_hint_names_the_option():
    with pytest.raises(SeriesFormatError) as caught:
        read_csv_text(csv_with(2, value="0,5", sep="\t"))
    assert "decimal-comma option" in caught.value.fix


def test_ragged_comma_file_suggests_semicolons_for_decimal_commas():
    with pytest.raises(SeriesFormatError) as caught:
        read_csv_text(csv_with(2, value="0,5"), IngestOptions(decimal_comma=True))
    assert "separate the columns with ';'" in caught.value.fix


def test_row_numbers_count_comment_and_blank_lines():
    text = "# invented demo data\n\n" + csv_with(3, value="oops")
    with pytest.raises(SeriesFormatError) as caught:
        read_csv_text(text)
    assert caught.value.location.row == 7


def test_unclosed_quote_names_the_quote():
    with pytest.raises(SeriesFormatError) as caught:
        read_csv_text(csv_with(2, value='"0.5'))
    assert "quote" in caught.value.message + caught.value.fix


def with_entry(key: str, index: int, item):
    obj = json_series(12)
    obj[key] = list(obj[key])
    obj[key][index] = item
    return obj


JSON_CASES = [
    pytest.param([1, 2, 3], {}, SeriesFormatError, "expected an object with 'time' and 'value' arrays, got an array",
                 "series", id="not-an-object"),
    pytest.param({"times": [1990], "value": [1]}, {}, SeriesFormatError, "'time' is missing (found 'times', 'value')",
                 "series.time", id="missing-time"),
    pytest.param({"time": [1990]}, {}, SeriesFormatError, "'value' is missing", "series.value", id="missing-value"),
    pytest.param({"time": "1990", "value": [1]}, {}, SeriesFormatError, "'time' must be an array, got a string",
                 "series.time", id="time-not-array"),
    pytest.param({**json_series(12), "value": json_series(11)["value"]}, {}, SeriesFormatError,
                 "'value' has 11 entries but 'time' has 12", "series.value", id="lengths-differ"),
    pytest.param(with_entry("value", 3, {"v": 1}), {}, SeriesFormatError,
                 "expected a number or a string, got an object", "series.value[3]", id="value-object"),
    pytest.param(with_entry("value", 4, True), {}, SeriesFormatError, "got true/false", "series.value[4]",
                 id="value-bool"),
    pytest.param(with_entry("time", 5, [1995]), {}, SeriesFormatError, "got an array", "series.time[5]",
                 id="time-array"),
    pytest.param(with_entry("time", 2, None), {}, SeriesFormatError, "the time is null", "series.time[2]",
                 id="time-null"),
    pytest.param(with_entry("value", 7, "warm"), {}, SeriesFormatError, "'warm' is not a number", "series.value[7]",
                 id="value-text"),
    pytest.param(with_entry("value", 7, float("inf")), {}, SeriesFormatError, "is infinite", "series.value[7]",
                 id="value-infinite"),
    pytest.param(with_entry("time", 6, 1995), {}, SeriesContentError, "'1995' appears twice", "series.time[6]",
                 id="duplicate-time"),
    pytest.param(with_entry("time", 6, "1996-13"), {}, SeriesFormatError, "month 13, out of range",
                 "series.time[6]", id="json-month-out-of-range"),
    pytest.param(with_entry("time", 0, "1989-06"), {}, SeriesFormatError, "cannot mix time formats", "series.time[1]",
                 id="json-mixed-formats"),
    pytest.param({**json_series(12), "label": 5}, {}, SeriesFormatError, "'label' must be a string, got a number",
                 "series.label", id="label-not-text"),
    pytest.param(json_series(12), {"max_points": 11}, LimitExceeded, "more than 11 points", "series.time",
                 id="too-many-points"),
    pytest.param({"time": list(range(1990, 1996)), "value": [0.1, 0.3, 0.2, 0.5, 0.4, 0.6]}, {}, SeriesContentError,
                 "only 6 valid values", "series.value", id="too-few"),
]


@pytest.mark.parametrize("obj, options, error, fragment, field", JSON_CASES)
def test_malformed_json_is_rejected_with_field_and_fix(obj, options, error, fragment, field):
    with pytest.raises(error) as caught:
        series_from_json(obj, IngestOptions(**options))
    assert type(caught.value) is error
    assert fragment in caught.value.message
    assert caught.value.location.as_dict() == {"field": field}
    assert caught.value.fix


def test_json_field_prefix_is_used_in_locations():
    with pytest.raises(SeriesFormatError) as caught:
        series_from_json(with_entry("value", 3, "x"), field="body.series")
    assert caught.value.location.field == "body.series.value[3]"
