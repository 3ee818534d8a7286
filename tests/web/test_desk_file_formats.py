"""The desk reads what newsrooms receive: a spreadsheet (its sheet and header row chosen), a year-by-month
table, plain text with comments, several series in one file, a link to the data; and it says what it found
about a seasonal cycle. Files made here (invented data)."""

from __future__ import annotations

import re

import pytest
from fastapi.testclient import TestClient

from api.newsroom_files import XLSX_TYPE, csv_of, long_rows, newsroom_files, serving, wide_rows
from app.main import create_app
from app.report.chart_cache import clear_chart_cache
from ingest.sheet_files import ods_bytes, ods_row, xlsx_bytes
from web.answers import report_path
from web.conftest import desk_settings

MONTHLY_CLAIM = {"claim_start": "2005-01", "claim_end": "2014-12", "claim_kind": "pause", "seed": "7"}
ANNUAL_CLAIM = {**MONTHLY_CLAIM, "claim_start": "1998", "claim_end": "2012"}


def hidden(html: str, name: str) -> str:
    found = re.search(rf'<input type="hidden" name="{name}" value="([^"]*)"', html)
    assert found, f"no hidden {name}"
    return found.group(1)


def test_a_wide_workbook_lists_its_sheets_and_is_read_as_a_year_by_month_table(client):
    book = xlsx_bytes({"Read me": [["Nothing to read"], ["year", "note"], [1990, "x"]],
                       "Index": wide_rows(cycle=2.0)})
    first = client.post("/preview", files={"file": ("index.xlsx", book, XLSX_TYPE)})
    assert first.status_code == 200, first.text
    carried = hidden(first.text, "file_data")
    page = client.post("/preview", data={"file_data": carried, "sheet": "Index"})
    assert page.status_code == 200, page.text
    html = page.text
    assert re.findall(r'<option value="([^"]+)"[^>]*>[^<]+</option>', html.split('id="sheet"')[1].split("</select>")[0]) \
        == ["Read me", "Index"]
    assert "Read as a year-by-month table, 1980-01 to 2020-12" in html
    assert "A seasonal cycle: F test of calendar-month means" in html and "takes it out" in html
    assert 'name="header_row"' in html and 'placeholder="4"' in html
    answer = client.post("/audit", data={**MONTHLY_CLAIM, "file_data": carried, "sheet": "Index"})
    stored = client.get("/api/v1" + report_path(answer)).json()
    assert stored["inputs"]["sheet"] == "Index" and stored["inputs"]["layout"] == "year-by-month"
    assert stored["inputs"]["seasonal"]["removed"]
    report = client.get(report_path(answer)).text
    assert "seasonal cycle (range" in report


def test_an_ods_file_offers_every_numeric_column_and_audits_the_one_chosen(client):
    data = ods_bytes({"Weather": [ods_row(row) for row in long_rows()]})
    page = client.post("/preview", files={"file": ("w.ods", data, "application/vnd.oasis.opendocument.spreadsheet")})
    assert page.status_code == 200, page.text
    assert "Columns of numbers: “rain”, “sunshine”, “wind”" in page.text.replace("&#8220;", "“")
    carried = hidden(page.text, "file_data")
    answer = client.post("/audit", data={**ANNUAL_CLAIM, "file_data": carried, "value_column": "wind",
                                         "covariate_columns": "sunshine"})
    stored = client.get("/api/v1" + report_path(answer)).json()
    assert stored["inputs"]["value_column"] == "wind"
    assert [f["name"] for f in stored["adjustment"]["factors"]] == ["sunshine"]
    assert "Column audited" in client.get(report_path(answer)).text


def test_plain_text_with_comments_and_trailing_notes_says_what_was_skipped(client):
    lines = ["# Invented annual series", "  year      value   spread"]
    lines += [f"{row[0]:6d}   {row[1]:8.4f}   {row[2]:6.3f}" for row in long_rows()[1:]]
    lines += ["", "Notes: provisional after 2018"]
    page = client.post("/preview", files={"file": ("s.txt", "\n".join(lines) + "\n", "text/plain")})
    assert page.status_code == 200, page.text
    assert 'class="plain-list note read-notes"' in page.text
    answer = client.post("/audit", data={**ANNUAL_CLAIM, "table": "\n".join(lines) + "\n"})
    assert client.get("/api/v1" + report_path(answer)).json()["inputs"]["n"] == 61


def test_the_seasonal_choice_is_offered_for_monthly_data_and_kept(client):
    book = xlsx_bytes({"Index": wide_rows(cycle=2.0)})
    page = client.post("/preview", files={"file": ("index.xlsx", book, XLSX_TYPE)})
    assert 'name="seasonal"' in page.text
    answer = client.post("/audit", data={**MONTHLY_CLAIM, "file_data": hidden(page.text, "file_data"),
                                         "seasonal": "keep"})
    seasonal = client.get("/api/v1" + report_path(answer)).json()["inputs"]["seasonal"]
    assert seasonal["choice"] == "keep" and not seasonal["removed"]


@pytest.fixture
def linking_client(tmp_path):
    clear_chart_cache()
    settings = desk_settings(tmp_path, fetch_allow_http=True, fetch_allow_loopback=True)
    with TestClient(create_app(settings), follow_redirects=False) as test_client:
        yield test_client


def test_a_link_to_the_data_is_read_and_its_provenance_shown(linking_client):
    with serving(newsroom_files()) as address:
        url = f"{address}/weather.csv"
        page = linking_client.post("/preview", data={"data_url": url})
        assert page.status_code == 200, page.text
        assert hidden(page.text, "data_url") == url
        answer = linking_client.post("/audit", data={**ANNUAL_CLAIM, "data_url": url, "value_column": "rain"})
        assert address.seen == ["/weather.csv", "/weather.csv"]  # once for the preview, once for the audit
    report = linking_client.get(report_path(answer)).text
    assert "Fetched from" in report and url in report and "HTTP 200" in report


def test_the_home_page_offers_a_link_box_and_refuses_loopback_by_default(client):
    assert 'name="data_url"' in client.get("/").text
    page = client.post("/preview", data={"data_url": "https://127.0.0.1/data.csv"})
    assert page.status_code == 422 and "loopback" in page.text


def test_a_csv_with_several_series_still_reads_as_before(client):
    page = client.post("/preview", data={"table": csv_of(long_rows())})
    assert page.status_code == 200 and "Columns of numbers" in page.text


def test_a_driver_and_response_check_reads_a_spreadsheet_too(client):
    data = xlsx_bytes({"Weather": long_rows()})
    page = client.post("/preview", files={"file": ("w.xlsx", data, XLSX_TYPE)}, data={"check": "link"})
    assert page.status_code == 200, page.text
    answer = client.post("/correlate", data={"file_data": hidden(page.text, "file_data"), "value_column": "wind",
                                             "driver_column": "rain", "seed": "3", "simulations": "200"})
    stored = client.get("/api/v1/correlations/" + report_path(answer).rsplit("/", 1)[1]).json()
    ingest_columns = (stored["inputs"].get("driver", {}).get("label"), stored["inputs"].get("response", {}).get("label"))
    assert ingest_columns == ("rain", "wind"), stored["inputs"]
