"""Year-by-month and year-by-quarter tables read into one series, with the annual column cross-checked."""

from __future__ import annotations

import numpy as np
import pytest

from app.errors import SeriesFormatError
from app.ingest import IngestOptions, read_csv_text
from ingest_samples import csv_text, wiggle

MONTHS = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"]


def year_by_month(header_months, years=5, annual=None, last_year_months=12, missing=()):
    header = "Year," + ",".join(header_months) + (f",{annual}" if annual else "")
    rows = []
    for y in range(years):
        values = [round(wiggle(12 * y + m) + 0.3 * m, 2) for m in range(12)]
        cells = [str(v) for v in values]
        if y == years - 1:
            cells = cells[:last_year_months] + [""] * (12 - last_year_months)
        for (yy, mm) in missing:
            if yy == y:
                cells[mm] = "NA"
        row = [2000 + y] + cells
        if annual:
            row.append(f"{np.mean(values):.3f}")
        rows.append(row)
    return csv_text(header, rows), rows


@pytest.mark.parametrize("names", [MONTHS, [m.upper() for m in MONTHS], [str(m) for m in range(1, 13)],
                                   [f"M{m:02d}" for m in range(1, 13)],
                                   ["January", "February", "March", "April", "May", "June", "July", "August",
                                    "September", "October", "November", "December"]])
def test_month_columns_in_every_spelling_read_as_a_monthly_series(names):
    text, rows = year_by_month(names)
    table = read_csv_text(text)
    assert table.layout == "year-by-month" and table.series.sampling == "monthly"
    assert table.series.n == 60
    np.testing.assert_allclose(table.series.value, [float(c) for row in rows for c in row[1:13]])
    # Months sit at mid-month: year + (month - 0.5) / 12 (our convention, DEVELOPERS.md).
    assert table.series.time[0] == pytest.approx(2000 + 0.5 / 12)
    assert "read as a year-by-month table" in table.reading[0]
    assert "first month 2000-01, last month 2004-12" in table.reading[0]


def test_trailing_blank_months_are_not_missing_and_inner_markers_are():
    text, _ = year_by_month(MONTHS, last_year_months=6, missing=[(1, 3)])
    table = read_csv_text(text)
    assert table.series.n == 4 * 12 + 6 - 1
    assert table.series.time_labels[-1] == "2004-06"
    assert table.missing_rows == (3,) and table.n_missing == 1
    assert any("not counted as missing" in line for line in table.reading)


def test_annual_column_is_cross_checked_and_not_used():
    text, _ = year_by_month(MONTHS, annual="Annual")
    table = read_csv_text(text)
    assert table.series.n == 60
    assert any("'Annual' matches the mean of its 12 periods in all 5 complete years" in r for r in table.reading)


def test_annual_column_that_disagrees_is_reported():
    text, _ = year_by_month(MONTHS, annual="Annual")
    lines = text.splitlines()
    cells = lines[3].split(",")
    cells[-1] = "99"
    lines[3] = ",".join(cells)
    table = read_csv_text("\n".join(lines) + "\n")
    assert any("differs from the mean" in r and "row 4" in r for r in table.reading)


def test_sentinels_mark_missing_months():
    text, _ = year_by_month(MONTHS, missing=[(2, 5)])
    table = read_csv_text(text.replace("NA", "-99.99"), IngestOptions(missing_sentinels=(-99.99,)))
    assert table.n_missing == 1 and table.series.n == 59


def test_quarter_columns_beside_months_are_checked_and_a_quarter_table_reads():
    header = "Year,Q1,Q2,Q3,Q4,Annual"
    rows = [(1990 + y,) + tuple(round(wiggle(4 * y + q), 3) for q in range(4)) for y in range(8)]
    rows = [r + (round(sum(r[1:]) / 4, 4),) for r in rows]
    table = read_csv_text(csv_text(header, rows))
    assert table.layout == "year-by-quarter" and table.series.sampling == "quarterly"
    assert table.series.n == 32 and table.series.time_labels[0] == "1990-Q1"


def test_a_bad_cell_is_named_by_its_row_and_month_column():
    text, _ = year_by_month(MONTHS)
    text = text.replace(text.splitlines()[2].split(",")[4], "abc", 1)
    with pytest.raises(SeriesFormatError) as caught:
        read_csv_text(text)
    assert caught.value.location.row == 3 and caught.value.location.column == "Apr"


def test_choosing_a_column_still_reads_it_alone():
    text, rows = year_by_month(MONTHS, years=10, annual="Annual")
    table = read_csv_text(text, IngestOptions(value_column="Annual"))
    assert table.layout == "long" and table.series.n == 10
