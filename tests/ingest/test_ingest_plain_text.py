"""Plain-text tables: comment lines and titles above, columns by spaces or fixed width, notes below."""

from __future__ import annotations

import numpy as np
import pytest

from app.errors import LimitExceeded, SeriesFormatError
from app.ingest import IngestOptions, read_upload
from app.ingest.limits import ReadLimits
from app.ingest.plain_text import read_plain_text
from ingest_samples import wiggle


def body(n=24, start=1990):
    return "".join(f"{start + i:6d} {wiggle(i):9.4f} {1 + wiggle(i + 3):9.4f}\n" for i in range(n))


def test_comment_lines_of_every_mark_and_a_title_are_skipped():
    text = ("# Invented station record\n% produced for tests\n! units: K\n"
            "Annual temperatures of an invented station\n\n"
            "  year   anomaly    other\n" + body())
    table = read_plain_text(text)
    assert (table.time_column, table.value_column, table.delimiter) == ("year", "anomaly", "whitespace")
    assert table.header_row == 6 and table.series.n == 24
    np.testing.assert_allclose(table.series.value, [round(wiggle(i), 4) for i in range(24)])
    assert any("skipped 1 row of titles" in r for r in table.reading)


def test_every_numeric_column_is_listed_and_the_caller_chooses_one():
    text = "year anomaly other\n" + body()
    table = read_plain_text(text, IngestOptions(value_column="other"))
    assert table.numeric_columns == ("anomaly", "other")
    assert table.value_column == "other" and "value column: other" in table.series.notes
    assert "anomaly" in table.extra_columns


def test_fixed_width_columns_read_an_empty_cell_as_missing():
    lines = ["year   value   other"]
    for i in range(20):
        value = "" if i == 7 else f"{wiggle(i):.3f}"
        lines.append(f"{1990 + i:<4d}   {value:>5s}   {i:5d}")
    table = read_plain_text("\n".join(lines) + "\n")
    assert table.delimiter == "fixed-width"
    assert table.series.n == 19 and table.missing_rows == (9,)


def test_notes_after_the_data_are_ignored_and_said():
    text = "year value\n" + "".join(f"{1990 + i} {wiggle(i)}\n" for i in range(12)) + \
        "\nSource: invented for this test\nRevised yearly\n"
    table = read_plain_text(text)
    assert table.series.n == 12
    assert any("ignored 2 rows of notes after the data (from row 15" in r for r in table.reading)


def test_two_blocks_of_data_are_refused():
    one = "".join(f"{1990 + i} {wiggle(i)}\n" for i in range(12))
    with pytest.raises(SeriesFormatError) as caught:
        read_plain_text("year value\n" + one + "\nyear value\n" + one)
    assert "a second block of data starts at row 16" in caught.value.message
    assert caught.value.location.row == 16


def test_a_ragged_row_under_spaces_is_refused_at_its_row():
    text = "year value other\n" + "".join(f"{1990 + i} {wiggle(i)} 1\n" for i in range(12))
    text = text.replace("1995 ", "1995 7 ", 1)
    with pytest.raises(SeriesFormatError) as caught:
        read_plain_text(text)
    assert caught.value.location.row == 7


def test_year_by_month_text_table_reads_as_monthly():
    header = "Year Jan Feb Mar Apr May Jun Jul Aug Sep Oct Nov Dec\n"
    rows = "".join(f"{2000 + y} " + " ".join(f"{wiggle(12 * y + m):.3f}" for m in range(12)) + "\n" for y in range(3))
    table = read_plain_text("# invented\n" + header + rows)
    assert table.layout == "year-by-month" and table.series.n == 36


def test_no_header_and_too_many_lines_are_refused():
    with pytest.raises(SeriesFormatError, match="no header row"):
        read_plain_text("1990 1\n1991 2\n1992 3\n")
    with pytest.raises(LimitExceeded):
        read_plain_text("year value\n" + body(50), limits=ReadLimits(max_rows=20))


def test_a_csv_under_titles_and_a_units_row_reads_through_the_upload_entry():
    text = ("Invented agency: monthly river flow\nStation 12, provisional\n\nmonth,flow\n,m3/s\n" +
            "".join(f"2001-{m:02d},{10 + wiggle(m)}\n" for m in range(1, 13)) + "\nNotes: invented\n")
    table = read_upload(text.encode())
    assert table.delimiter == "," and table.series.n == 12 and table.series.sampling == "monthly"
    assert any("skipped row 5 of text between the header and the data" in r for r in table.reading)
    assert any("ignored 1 row of notes" in r for r in table.reading)


def test_a_plain_csv_still_takes_the_csv_reader():
    text = "year,value\n" + "".join(f"{1990 + i},{wiggle(i)}\n" for i in range(12))
    assert read_upload(text).delimiter == ","


def test_a_csv_with_twenty_thousand_columns_is_refused_through_the_upload_entry():
    text = "year," + ",".join(f"c{i}" for i in range(20_000)) + "\n" + "1990," + ",".join(["1"] * 20_000) + "\n"
    with pytest.raises(LimitExceeded, match="20,001 columns"):
        read_upload(text)
