"""Spreadsheets (.xlsx, .ods) read correctly, and hostile ones refused with a clear error."""

from __future__ import annotations

import datetime as dt
import re

import numpy as np
import pytest

from app.errors import LimitExceeded, SeriesFormatError, UnsupportedMediaType
from app.ingest import IngestOptions, ReadLimits, read_upload
from app.ingest.spreadsheet import read_spreadsheet
from ingest_samples import wiggle
from sheet_files import (encrypted_office_file, macro_only_workbook, ods_bytes, ods_cell, ods_entity_bomb, ods_row,
                         rewrite_member, xlsx_bytes, xlsx_declaring, zip_bomb)

MARKUP_NAME = "<img src=x onerror=alert(1)>"


def monthly_rows(n=24):
    return [[dt.datetime(2000 + i // 12, i % 12 + 1, 1), wiggle(i), 10 + wiggle(i + 5)] for i in range(n)]


def titled_sheet(n=24):
    return [["Monthly rainfall of an invented town"], ["Source: invented for tests"], [],
            ["date", "rain", "sun"]] + monthly_rows(n) + [[], ["Provisional after 2001"]]


def test_xlsx_titles_skipped_dates_read_as_dates_and_every_sheet_listed():
    data = xlsx_bytes({"Notes": [["This workbook holds invented data"]], "Data": titled_sheet(),
                       MARKUP_NAME: [["x"]]})
    table = read_upload(data)
    assert table.sheets == ("Notes", "Data", MARKUP_NAME) and table.sheet == "Data"
    assert table.header_row == 4 and table.delimiter == "spreadsheet"
    assert table.series.sampling == "monthly" and table.series.n == 24
    assert table.series.time_labels[0] == "2000-01-01"
    np.testing.assert_allclose(table.series.value, [wiggle(i) for i in range(24)])
    assert table.numeric_columns == ("rain", "sun")
    assert any("ignored 1 row of notes" in r for r in table.reading)
    assert any("skipped 2 rows of titles" in r for r in table.reading)


def test_xlsx_sheet_and_header_row_chosen_by_the_caller():
    data = xlsx_bytes({"A": titled_sheet(), "B": [["year", "value"]] + [[1990 + i, wiggle(i)] for i in range(12)]})
    table = read_spreadsheet(data, IngestOptions(sheet="b", value_column="value"))
    assert table.sheet == "B" and table.series.sampling == "annual" and table.series.n == 12
    table = read_spreadsheet(data, IngestOptions(sheet="A", header_row=4, value_column="sun"))
    assert table.value_column == "sun" and table.series.label == "sun"
    with pytest.raises(SeriesFormatError, match="no sheet named 'C'"):
        read_spreadsheet(data, IngestOptions(sheet="C"))


def test_a_formula_is_read_as_its_cached_value_never_as_formula_text():
    data = xlsx_bytes({"Data": [["year", "value"]] + [[1990 + i, wiggle(i)] for i in range(12)]})
    # A command-running formula (a DDE call) whose stored result is 42: the result is read, nothing runs.
    data = rewrite_member(data, "xl/worksheets/sheet1.xml", lambda xml: re.sub(
        r'<c r="B5" t="n"><v>[^<]*</v></c>', '<c r="B5"><f>cmd|\' /C calc\'!A0</f><v>42</v></c>', xml))
    table = read_spreadsheet(data)
    assert table.series.value[3] == 42.0
    assert not any("cmd" in cell for row in table.head + table.tail for cell in row)


def test_a_year_by_month_sheet_reads_as_monthly():
    months = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"]
    rows = [["Invented index, monthly"], ["Year"] + months + ["Annual"]]
    rows += [[2000 + y] + [round(wiggle(12 * y + m), 3) for m in range(12)] + [None] for y in range(4)]
    table = read_spreadsheet(xlsx_bytes({"Index": rows}))
    assert table.layout == "year-by-month" and table.series.n == 48
    assert "first month 2000-01, last month 2003-12" in " ".join(table.reading)


def ods_sheet(n=24):
    rows = [ods_row(["Monthly rainfall of an invented town", "<table:covered-table-cell/>"]),
            ods_row([None], repeat=2), ods_row(["date", "rain", "sun"])]
    for i in range(n):
        rain = ("formula", wiggle(i), "of:=[.C1]*0+1") if i == 3 else wiggle(i)
        rows.append(ods_row([("date", f"{2000 + i // 12}-{i % 12 + 1:02d}-01"), rain, 10 + wiggle(i + 5),
                             ods_cell(None, repeat=1000)]))
    rows.append(ods_row([None], repeat=1_048_000))  # the blank rows a sheet declares down to its last row
    return rows


def test_ods_reads_dates_cached_formula_values_and_repeats_without_expanding_blanks():
    data = ods_bytes({"Cover": [ods_row(["About this file"])], "Rain": ods_sheet()})
    table = read_upload(data)
    assert table.sheets == ("Cover", "Rain") and table.sheet == "Rain" and table.header_row == 4
    assert table.series.sampling == "monthly" and table.series.n == 24
    np.testing.assert_allclose(table.series.value, [wiggle(i) for i in range(24)])


def test_ods_repeated_data_rows_expand():
    rows = [ods_row(["year", "value"])] + [ods_row([1990 + i, wiggle(i)]) for i in range(10)]
    rows.append(ods_row([2000, 5.0]))
    table = read_spreadsheet(ods_bytes({"S": rows}), IngestOptions())
    assert table.series.n == 11


HOSTILE = [
    pytest.param(lambda: zip_bomb(), {}, LimitExceeded, "times larger than it is packed", id="zip-bomb"),
    pytest.param(lambda: zip_bomb(), {"max_bytes": 1024 * 1024}, LimitExceeded, "would unpack to more than",
                 id="zip-bomb-over-size"),
    pytest.param(lambda: xlsx_declaring("A1:B1000000"), {}, LimitExceeded, "more than 200,000 rows",
                 id="million-declared-rows-xlsx"),
    pytest.param(lambda: xlsx_declaring("A1:B2"), {"max_rows": 5}, LimitExceeded, "more than 5 rows",
                 id="rows-past-a-false-dimension"),
    pytest.param(lambda: ods_bytes({"S": [ods_row(["year", "value"]), ods_row([1990, 1.0], repeat=1_000_000)]}), {},
                 LimitExceeded, "more than 200,000 rows", id="million-repeated-rows-ods"),
    # An .xlsx sheet holds at most 16,384 columns (the format's own bound); our limit is 500.
    pytest.param(lambda: xlsx_bytes({"Wide": [["year"] + [f"c{i}" for i in range(16_383)], [1990] + [1.0] * 16_383]}),
                 {}, LimitExceeded, "16,384 columns", id="sixteen-thousand-columns-xlsx"),
    pytest.param(lambda: xlsx_declaring("A1:ACOF2"), {}, SeriesFormatError, "cannot be read",
                 id="twenty-thousand-declared-columns-xlsx"),
    pytest.param(lambda: ods_bytes({"S": [ods_row(["year", ods_cell("v", repeat=20_000)])]}), {}, LimitExceeded,
                 "20,001 columns", id="twenty-thousand-columns-ods"),
    pytest.param(lambda: encrypted_office_file(), {}, SeriesFormatError, "encrypted", id="encrypted-xlsx"),
    pytest.param(lambda: ods_bytes({"S": [ods_row(["year"])]}, manifest_extra="<manifest:encryption-data/>"), {},
                 SeriesFormatError, "encrypted", id="encrypted-ods"),
    pytest.param(lambda: macro_only_workbook(), {}, SeriesFormatError, "macros but no worksheet", id="macro-only"),
    pytest.param(lambda: b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\0" * 1000, {}, UnsupportedMediaType, "old-style Excel",
                 id="legacy-xls"),
    pytest.param(lambda: b"PK\x03\x04" + b"\0" * 100, {}, SeriesFormatError, "damaged zip", id="damaged-zip"),
    pytest.param(lambda: ods_entity_bomb(), {}, SeriesFormatError, "constructs this service refuses", id="xml-entities"),
]


@pytest.mark.parametrize("data, limits, error, fragment", HOSTILE)
def test_hostile_spreadsheets_are_refused_with_a_clear_error(data, limits, error, fragment):
    with pytest.raises(error) as caught:
        read_upload(data(), IngestOptions(), ReadLimits(**limits))
    assert fragment in caught.value.detail
    assert caught.value.fix


def test_a_sheet_named_with_markup_is_listed_and_quoted_as_text():
    data = xlsx_bytes({MARKUP_NAME: [["year", "value"]] + [[1990 + i, "x" if i == 4 else wiggle(i)]
                                                           for i in range(12)]})
    with pytest.raises(SeriesFormatError) as caught:
        read_spreadsheet(data)
    assert caught.value.extra["sheet"] == MARKUP_NAME
    assert caught.value.location.row == 6 and caught.value.location.column == "value"
