"""Reading well-formed CSV files: delimiters, encodings, time styles, missing values, column choice, preview."""

from __future__ import annotations

import numpy as np
import pytest

from app.ingest import IngestOptions, read_csv_text
from ingest_samples import annual_lines, csv_text, monthly_pairs, series_from_csv, wiggle

EXPECTED_ANNUAL = np.array([wiggle(i) for i in range(20)])


@pytest.mark.parametrize("sep", [",", ";", "\t"])
def test_each_delimiter_gives_the_same_series(sep):
    table = read_csv_text(annual_lines(20, sep=sep, joined=True))
    assert table.delimiter == sep
    np.testing.assert_array_equal(table.series.value, EXPECTED_ANNUAL)
    np.testing.assert_array_equal(table.series.time, np.arange(1990, 2010) + 0.5)


@pytest.mark.parametrize("encode", [
    lambda text: text,
    lambda text: "\ufeff" + text,
    lambda text: text.encode("utf-8"),
    lambda text: text.encode("utf-8-sig"),
    lambda text: text.replace("\n", "\r\n").encode("utf-8-sig"),
    lambda text: text.replace("\n", "\r"),
], ids=["str", "str-bom", "utf8-bytes", "utf8-bom-bytes", "crlf-bom", "bare-cr"])
def test_encodings_and_line_endings(encode):
    table = read_csv_text(encode(annual_lines(20, joined=True)))
    assert table.columns == ("year", "value")  # the BOM does not stick to the first name
    np.testing.assert_array_equal(table.series.value, EXPECTED_ANNUAL)


def test_quoted_fields_and_names_with_separators():
    rows = [(f'"{1990 + i}"', f'"{wiggle(i)}"', f'"note, {i}"') for i in range(10)]
    table = read_csv_text(csv_text('"Year","Temperature, global (K)","comment"', rows))
    assert table.value_column == "Temperature, global (K)"
    assert table.series.label == "Temperature, global (K)"
    np.testing.assert_array_equal(table.series.value, [wiggle(i) for i in range(10)])


def test_semicolon_file_reads_decimal_commas_without_being_asked():
    rows = [(1990 + i, str(wiggle(i)).replace(".", ",")) for i in range(12)]
    series = series_from_csv(csv_text("Jahr;Wert", rows, sep=";"))
    np.testing.assert_allclose(series.value, [wiggle(i) for i in range(12)])


@pytest.mark.parametrize("sep, quote", [("\t", ""), (",", '"')])
def test_decimal_comma_option(sep, quote):
    rows = [(f"{quote}{1990 + i},5{quote}", quote + str(wiggle(i)).replace(".", ",") + quote) for i in range(12)]
    series = series_from_csv(csv_text("time" + sep + "value", rows, sep=sep), IngestOptions(decimal_comma=True))
    np.testing.assert_allclose(series.time, np.arange(1990, 2002) + 0.5)  # "1990,5" is the decimal year 1990.5
    np.testing.assert_allclose(series.value, [wiggle(i) for i in range(12)])


@pytest.mark.parametrize("token", ["", "NA", "N/A", "NaN", "null", "-", "na", " NA ", "#N/A"])
def test_missing_value_tokens(token):
    lines = annual_lines(12)
    lines[4] = "1993," + token
    table = read_csv_text("\n".join(lines))
    assert table.n_missing == 1
    assert table.missing_rows == (5,)
    assert table.series.n == 11
    assert table.series.missing_times == (1993.5,)
    assert "1993" not in table.series.time_labels
    assert any("1 times had no value: 1993" in note for note in table.series.notes)


def test_sentinels_are_missing_only_when_listed():
    values = ["0.1", "-999", "0.3", "-99.99", "0.2", "0.5", "-9999", "0.4", "0.6", "0.7", "0.65", "0.8"]
    text = csv_text("year,value", [(1990 + i, v) for i, v in enumerate(values)])
    plain = series_from_csv(text)
    assert plain.n == 12 and plain.value.min() == -9999
    cleaned = read_csv_text(text, IngestOptions(missing_sentinels=(-999, -99.99, -9999)))
    assert cleaned.series.n == 9
    assert cleaned.missing_rows == (3, 5, 8)
    assert cleaned.series.missing_times == (1991.5, 1993.5, 1996.5)


def test_time_styles_on_the_mid_period_convention():
    def times(labels):
        return series_from_csv(csv_text("time,value", [(t, wiggle(i)) for i, t in enumerate(labels)])).time

    # Integer years sit at mid-year.
    np.testing.assert_allclose(times([str(1990 + i) for i in range(10)]), np.arange(1990, 2000) + 0.5)
    # Decimal years are taken as written, and so are the integers among them.
    np.testing.assert_allclose(times(["1990.25", "1990.75", "1991", "1991.5"] + [f"{1992 + i}.0" for i in range(6)]),
                               [1990.25, 1990.75, 1991, 1991.5] + [1992.0 + i for i in range(6)])
    # Months sit at mid-month: year + (month - 0.5) / 12.
    np.testing.assert_allclose(times([f"2001-{m:02d}" for m in range(1, 13)]), 2001 + (np.arange(1, 13) - 0.5) / 12)
    # Quarters sit at mid-quarter: year + (quarter - 0.5) / 4.
    np.testing.assert_allclose(times([f"{2001 + k // 4}-Q{k % 4 + 1}" for k in range(8)]),
                               2001 + (np.arange(8) + 0.5) / 4)
    # Dates sit at mid-day: 2001-03-15 is day 74 of a 365-day year; 2004-03-15 is day 75 of 366.
    dated = times(["2001-03-15", "2002-03-15", "2003-03-15", "2004-03-15T00:00:00Z", "2005-03-15 12:00",
                   "2006-01-01", "2007-12-31", "2008-12-31", "2009-07-02"])
    np.testing.assert_allclose(dated[:4], [2001 + 73.5 / 365, 2002 + 73.5 / 365, 2003 + 73.5 / 365, 2004 + 74.5 / 366])
    np.testing.assert_allclose(dated[5:8], [2006 + 0.5 / 365, 2007 + 364.5 / 365, 2008 + 365.5 / 366])


def test_original_time_labels_are_kept():
    labels = ["2004-03-15T00:00:00Z"] + [f"2004-{m:02d}-15" for m in range(4, 13)]
    series = series_from_csv(csv_text("date,value", [(t, wiggle(i)) for i, t in enumerate(labels)]))
    assert series.time_labels == tuple(labels)


def test_year_and_month_columns_are_read_together():
    rows = [(2000 + k // 12, k % 12 + 1, wiggle(k)) for k in range(24)]
    table = read_csv_text(csv_text("Year,Month,Anomaly", rows))
    assert (table.time_column, table.month_column, table.value_column) == ("Year", "Month", "Anomaly")
    assert table.series.sampling == "monthly"
    assert table.series.time_labels[:2] == ("2000-01", "2000-02")
    np.testing.assert_allclose(table.series.time, 2000 + (np.arange(24) + 0.5) / 12)
    assert table.numeric_columns == ("Anomaly",)


def test_columns_chosen_by_name_ignore_case_and_spacing():
    rows = [(i, 1990 + i, wiggle(i), 300 + i * 1.5) for i in range(12)]
    text = csv_text("index,Decimal Year,Temp,CO2 (ppm)", rows)
    table = read_csv_text(text, IngestOptions(time_column="decimal_year", value_column="co2 ppm"))
    assert (table.time_column, table.value_column) == ("Decimal Year", "CO2 (ppm)")
    np.testing.assert_allclose(table.series.value, [300 + i * 1.5 for i in range(12)])
    assert set(table.extra_columns) == {"index", "Temp"}


def test_time_found_by_name_before_position():
    rows = [(wiggle(i), 1990 + i, 2 * wiggle(i)) for i in range(12)]
    table = read_csv_text(csv_text("anomaly,Year (CE),other", rows))
    assert (table.time_column, table.value_column) == ("Year (CE)", "anomaly")


def test_time_found_by_content_when_no_name_says_so():
    rows = [(f"{2000 + k // 12}-{k % 12 + 1:02d}", wiggle(k)) for k in range(12)]
    table = read_csv_text(csv_text("when,how much", rows))
    assert (table.time_column, table.value_column) == ("when", "how much")
    assert table.series.sampling == "monthly"


def test_extra_numeric_columns_come_back_as_series_on_the_same_times():
    rows = [(1990 + i, wiggle(i), "NA" if i == 3 else 0.5 * i, f"site {i}") for i in range(12)]
    table = read_csv_text(csv_text("year,temp,enso,station", rows))
    assert table.numeric_columns == ("temp", "enso")
    enso = table.extra_columns["enso"]
    assert set(table.extra_columns) == {"enso"}
    np.testing.assert_array_equal(enso.time, np.delete(np.arange(1990, 2002) + 0.5, 3))
    np.testing.assert_array_equal(enso.value, np.delete(0.5 * np.arange(12), 3))
    assert enso.missing_times == (1993.5,)


def test_comments_blank_lines_and_trailing_separators_are_skipped():
    text = ("# invented demo series\n\nyear,value,\n" + "".join(f"{1990 + i},{wiggle(i)},\n" for i in range(12))
            + ",,\n\n")
    table = read_csv_text(text)
    assert table.columns == ("year", "value")
    assert table.n_rows == 12


def test_preview_rows_do_not_repeat():
    table = read_csv_text(annual_lines(8, joined=True))
    assert len(table.head) == 5 and len(table.tail) == 3
    assert table.head[0] == ("1990", str(wiggle(0)))
    assert table.tail[-1] == ("1997", str(wiggle(7)))
    long_table = read_csv_text(annual_lines(30, joined=True))
    assert long_table.tail[0] == ("2015", str(wiggle(25)))
    assert long_table.n_rows == 30


def test_label_and_units_from_options():
    series = series_from_csv(annual_lines(12, joined=True), IngestOptions(label="Global mean", units="K"))
    assert (series.label, series.units) == ("Global mean", "K")


def test_monthly_gaps_are_listed_and_missing_times_include_them():
    pairs = [p for k, p in enumerate(monthly_pairs(3)) if k not in (5, 6, 20)]
    table = read_csv_text(csv_text("date,value", pairs))
    assert table.gaps == ("2000-06", "2000-07", "2001-09")
    np.testing.assert_allclose(table.series.missing_times, [2000 + 5.5 / 12, 2000 + 6.5 / 12, 2001 + 8.5 / 12])
    assert table.series.sampling == "monthly"


def test_many_rows_read_quickly_enough():
    rows = [(f"{1000 + k / 12:.4f}", f"{wiggle(k)}") for k in range(60_000)]
    table = read_csv_text(csv_text("time,value", rows))
    assert table.series.n == 60_000 and table.series.sampling == "monthly"


def test_a_column_per_month_reads_once_a_value_column_is_chosen():
    header = "Year,Jan,Feb,Mar,Apr,May,Jun,Jul,Aug,Sep,Oct,Nov,Dec,J-D"
    rows = [(1990 + i,) + tuple(round(0.1 * m + wiggle(i), 4) for m in range(13)) for i in range(10)]
    table = read_csv_text(csv_text(header, rows), IngestOptions(value_column="J-D"))
    np.testing.assert_allclose(table.series.value, [row[-1] for row in rows])
    assert "Jan" in table.extra_columns
