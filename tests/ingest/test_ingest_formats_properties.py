"""No file of any format makes ``read_upload`` fail with anything but an InputError, and what it accepts is valid."""

from __future__ import annotations

from hypothesis import given
from hypothesis import strategies as st

from app.ingest import read_upload
from sheet_files import ods_bytes, ods_row, xlsx_bytes
from test_ingest_properties import PROPERTY_SETTINGS, check_reader, options_strategy, time_cells, value_cells
from test_ingest_wide import MONTHS

text_lines = st.one_of(
    st.lists(st.one_of(time_cells, value_cells, st.sampled_from(["year", "value", "Jan", "Annual", "# note", "%",
                                                                  "Source: x", "M01", "Q1"])),
             max_size=6).map(lambda cells: " ".join(cells)),
    st.just(""),
)


@PROPERTY_SETTINGS
@given(st.lists(text_lines, max_size=30), options_strategy)
def test_plain_text_made_of_table_pieces(lines, options):
    check_reader(read_upload, "\n".join(lines), options)


@PROPERTY_SETTINGS
@given(st.lists(st.lists(st.one_of(value_cells, time_cells, st.sampled_from(MONTHS + ["Year", "Annual"])),
                         max_size=14), max_size=20), options_strategy)
def test_year_by_month_pieces(rows, options):
    header = "Year " + " ".join(MONTHS)
    check_reader(read_upload, header + "\n" + "\n".join(" ".join(r) for r in rows), options)


sheet_cells = st.one_of(st.none(), st.floats(allow_nan=False, allow_infinity=False), st.integers(-10**6, 10**6),
                        st.sampled_from(["year", "value", "NA", "", "Jan", "x"]), time_cells)


@PROPERTY_SETTINGS
@given(st.lists(st.lists(sheet_cells, max_size=5), max_size=25), options_strategy)
def test_sheets_of_plausible_cells(rows, options):
    check_reader(read_upload, xlsx_bytes({"S": [list(r) for r in rows] or [[None]]}), options)
    check_reader(read_upload, ods_bytes({"S": [ods_row(list(r)) for r in rows]}), options)


@PROPERTY_SETTINGS
@given(st.binary(max_size=300))
def test_bytes_that_start_like_a_zip_or_office_file(tail):
    check_reader(read_upload, b"PK\x03\x04" + tail)
    check_reader(read_upload, b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + tail)
