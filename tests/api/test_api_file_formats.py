"""Every format the readers know, through the API: spreadsheets, year-by-month tables, plain text, several series
in one file, a link to the data; and the hostile spreadsheets answered 4xx. The files are made here (invented
data)."""

from __future__ import annotations

import io
import threading
import time

import openpyxl
import pytest

from api.conftest import TEST_SIMULATIONS, assert_problem
from api.newsroom_files import XLSX_TYPE, csv_of, level, long_rows, newsroom_files, serving, wide_rows
from ingest.sheet_files import (encrypted_office_file, macro_only_workbook, ods_bytes, ods_cell, ods_entity_bomb,
                                ods_row, xlsx_bytes, xlsx_declaring, zip_bomb)

def monthly_form(**overrides):
    fields = {"claim_start": "2005-01", "claim_end": "2014-12", "claim_kind": "pause",
              "simulations": str(TEST_SIMULATIONS), "seed": "7"}
    fields.update(overrides)
    return fields


def annual_form(**overrides):
    return monthly_form(claim_start="1998", claim_end="2012", **overrides)


def post(client, data: bytes | str, name: str, fields: dict, kind: str = "application/octet-stream"):
    return client.post("/api/v1/audits", data=fields, files={"file": (name, data, kind)})


def test_a_wide_xlsx_with_notes_above_is_read_as_a_monthly_series(client):
    data = xlsx_bytes({"Read me": [["Nothing here"]], "Index": wide_rows()})
    response = post(client, data, "index.xlsx", monthly_form(sheet="Index"), XLSX_TYPE)
    assert response.status_code == 201, response.text
    inputs = response.json()["inputs"]
    assert (inputs["sheet"], inputs["layout"], inputs["sampling"], inputs["n"]) == (
        "Index", "year-by-month", "monthly", 41 * 12)
    assert inputs["header_row"] == 4


def test_an_ods_spreadsheet_is_read_and_the_value_column_chosen_by_name(client):
    rows = [ods_row(row) for row in long_rows()]
    response = post(client, ods_bytes({"Weather": rows}), "weather.ods", annual_form(value_column="wind"),
                    "application/vnd.oasis.opendocument.spreadsheet")
    assert response.status_code == 201, response.text
    inputs = response.json()["inputs"]
    assert inputs["value_column"] == "wind" and inputs["numeric_columns"] == ["rain", "sunshine", "wind"]
    assert "value column: wind" in inputs["notes"]


def test_plain_text_with_comment_lines_and_trailing_notes_is_read(client):
    lines = ["# Invented annual series", "% three columns", "! more comment", "  year      value   spread"]
    lines += [f"{row[0]:6d}   {row[1]:8.4f}   {row[2]:6.3f}" for row in long_rows()[1:]]
    lines += ["", "Notes: values after 2018 are provisional"]
    response = post(client, "\n".join(lines) + "\n", "series.txt", annual_form(), "text/plain")
    assert response.status_code == 201, response.text
    body = response.json()
    assert body["inputs"]["n"] == 61
    runtime = client.app.state.runtime.get()
    assert runtime.audits.get(body["id"]).input_document["ingest"]["format"] == "text"


def test_several_series_in_a_csv_choose_the_value_and_covariate_columns(client):
    text = csv_of(long_rows())
    response = post(client, text, "weather.csv", annual_form(value_column="rain", covariate_columns="sunshine"),
                    "text/csv")
    assert response.status_code == 201, response.text
    body = response.json()
    assert body["inputs"]["value_column"] == "rain"
    assert [f["name"] for f in body["adjustment"]["factors"]] == ["sunshine"]


def test_a_seasonal_cycle_is_taken_out_by_default_and_kept_when_asked(client):
    data = xlsx_bytes({"Index": wide_rows(cycle=2.0)})
    removed = post(client, data, "index.xlsx", monthly_form(), XLSX_TYPE)
    kept = post(client, data, "index.xlsx", monthly_form(seasonal="keep"), XLSX_TYPE)
    assert removed.status_code == kept.status_code == 201, removed.text + kept.text
    auto, keep = removed.json()["inputs"]["seasonal"], kept.json()["inputs"]["seasonal"]
    assert auto["present"] and auto["removed"] and auto["choice"] == "auto"
    assert keep["present"] and not keep["removed"]
    assert "taken out" in auto["sentence"]
    # Kept, the cycle is noise: its spread (2 x 0.71) swamps the 0.15 wiggle the audit otherwise sees.
    assert kept.json()["noise"]["marginal_sd"] > 3 * removed.json()["noise"]["marginal_sd"]
    report = client.get(removed.json()["report_url"])
    assert auto["sentence"].split(" (")[0] in report.text


def test_json_options_choose_the_seasonal_treatment(client):
    series = {"time": [f"{1980 + k // 12}-{k % 12 + 1:02d}" for k in range(480)],
              "value": [level(1980 + k // 12, k % 12 + 1, 2.0) for k in range(480)]}
    body = {"series": series, "claim": {"start": "2005-01", "end": "2014-12"},
            "options": {"simulations": TEST_SIMULATIONS, "seed": 1, "seasonal": "remove"}}
    response = client.post("/api/v1/audits", json=body)
    assert response.status_code == 201, response.text
    assert response.json()["inputs"]["seasonal"]["removed"]
    body["options"]["seasonal"] = "sometimes"
    assert_problem(client.post("/api/v1/audits", json=body), 422)


# --- hostile spreadsheets, one of each kind, through the API ------------------------------------------------

HOSTILE = [
    pytest.param(zip_bomb, 413, "times larger than it is packed", id="zip-bomb"),
    pytest.param(lambda: xlsx_declaring("A1:B1000000"), 413, "more than 200,000 rows", id="million-declared-rows"),
    pytest.param(lambda: ods_bytes({"S": [ods_row(["year", ods_cell("v", repeat=20_000)])]}), 413, "20,001 columns",
                 id="twenty-thousand-columns"),
    pytest.param(encrypted_office_file, 422, "encrypted", id="encrypted"),
    pytest.param(macro_only_workbook, 422, "macros but no worksheet", id="macro-only"),
    pytest.param(ods_entity_bomb, 422, "constructs this service refuses", id="xml-entities"),
]


@pytest.mark.parametrize("make, status, fragment", HOSTILE)
def test_hostile_spreadsheets_are_answered_4xx_within_a_second(client, make, status, fragment):
    data = make()
    started = time.perf_counter()
    response = post(client, data, "book.xlsx", annual_form())
    elapsed = time.perf_counter() - started
    assert response.status_code in (status, 422), response.text
    body = response.json()
    assert 400 <= body["status"] < 500 and fragment in body["detail"] and body["fix"]
    assert elapsed < 1.0, f"{elapsed:.2f} s"  # our requirement: a hostile file is refused at once


def test_a_formula_is_read_as_its_cached_value_and_a_markup_sheet_name_stays_text(client):
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "<img src=x onerror=alert(1)>"
    sheet.append(["year", "value"])
    for i, row in enumerate(long_rows()[1:]):
        sheet.append([row[0], row[1]])
    sheet["B10"] = '=HYPERLINK("http://attacker.invalid","x")'
    out = io.BytesIO()
    book.save(out)
    # openpyxl writes no cached value, so the formula's cell is read as missing, never as its text.
    response = post(client, out.getvalue(), "book.xlsx", annual_form(), XLSX_TYPE)
    assert response.status_code == 201, response.text
    inputs = response.json()["inputs"]
    assert inputs["sheet"] == "<img src=x onerror=alert(1)>" and inputs["missing"] == 1
    report = client.get(response.json()["report_url"]).text
    assert "<img src=x" not in report


# --- a link to the data --------------------------------------------------------------------------------------

@pytest.fixture()
def data_server():
    with serving(newsroom_files()) as url:
        yield url


def link_body(url: str, **extra) -> dict:
    return {"source_url": url, "claim": {"start": 1998, "end": 2012},
            "options": {"simulations": TEST_SIMULATIONS, "seed": 5}, **extra}


def test_source_url_fetches_the_data_and_keeps_its_provenance(make_client, data_server):
    client = make_client(fetch_allow_http=True, fetch_allow_loopback=True)
    body = link_body(f"{data_server}/weather.csv", ingest={"value_column": "sunshine"}, covariate_columns=["wind"])
    response = client.post("/api/v1/audits", json=body)
    assert response.status_code == 201, response.text
    inputs = response.json()["inputs"]
    provenance = inputs["provenance"]
    assert inputs["value_column"] == "sunshine"
    assert provenance["url"] == provenance["final_url"] == f"{data_server}/weather.csv"
    assert provenance["status"] == 200 and provenance["size"] > 1000 and len(provenance["sha256"]) == 64
    assert provenance["retrieved_at"].endswith("+00:00")
    report = client.get(response.json()["report_url"]).text
    assert "Where the data came from" in report and provenance["sha256"] in report


def test_a_redirected_link_to_a_wide_spreadsheet_records_the_final_address(make_client, data_server):
    client = make_client(fetch_allow_http=True, fetch_allow_loopback=True)
    body = {**link_body(f"{data_server}/moved"), "claim": {"start": "2005-01", "end": "2014-12"}}
    response = client.post("/api/v1/audits", json=body)
    assert response.status_code == 201, response.text
    inputs = response.json()["inputs"]
    assert inputs["provenance"]["final_url"] == f"{data_server}/index.xlsx" and inputs["layout"] == "year-by-month"


@pytest.mark.parametrize("settings, path, fragment", [
    pytest.param({"fetch_allow_http": True}, "http://127.0.0.1/weather.csv", "loopback",
                 id="loopback-refused-by-default"),
    pytest.param({"fetch_allow_http": True}, "http://localhost/weather.csv", "loopback",
                 id="localhost-refused-by-default"),
    pytest.param({}, "/weather.csv", "http", id="http-refused-by-default"),
    pytest.param({"fetch_allow_http": True, "fetch_allow_loopback": True}, "/missing.csv", "404", id="not-found"),
    pytest.param({"fetch_allow_http": True, "fetch_allow_loopback": True, "fetch_max_bytes": 100}, "/weather.csv",
                 "larger than", id="too-large"),
])
def test_refused_links_are_4xx_problems_naming_source_url(make_client, data_server, settings, path, fragment):
    client = make_client(**settings)
    url = path if path.startswith("http") else f"{data_server}{path}"
    response = client.post("/api/v1/audits", json=link_body(url))
    assert 400 <= response.status_code < 500, response.text
    body = response.json()
    assert body["where"]["field"] == "source_url" and fragment in body["detail"], body


def test_the_multipart_form_takes_a_link_instead_of_a_file(make_client, data_server):
    client = make_client(fetch_allow_http=True, fetch_allow_loopback=True)
    response = client.post("/api/v1/audits", data=monthly_form(data_url=f"{data_server}/index.xlsx"),
                           files={"label": (None, "linked index")})  # a plain field keeps the body multipart
    assert response.status_code == 201, response.text
    assert response.json()["inputs"]["provenance"]["final_url"] == f"{data_server}/index.xlsx"
    refused = make_client().post("/api/v1/audits", data=monthly_form(data_url="https://10.0.0.1/x.csv"),
                                 files={"label": (None, "linked index")})  # a plain field keeps the body multipart
    assert_problem(refused, 422, "data_url")


def test_a_fetch_waiting_on_a_slow_server_never_blocks_the_event_loop(make_client, data_server):
    client = make_client(fetch_allow_http=True, fetch_allow_loopback=True)
    answers = []
    posting = threading.Thread(target=lambda: answers.append(
        client.post("/api/v1/audits", json=link_body(f"{data_server}/held"))))
    posting.start()
    try:
        assert data_server.arrived.wait(30), "the fetch never reached the server"
        # The fetch now waits for its answer; the loop still answers other requests (were it blocked, this would
        # come only after the audit, and "answers" would not be empty).
        assert client.get("/healthz").status_code == 200
        assert not answers
    finally:
        data_server.release.set()
        posting.join(60)
    assert answers and answers[0].status_code == 201, answers


def test_neither_a_series_nor_a_link_is_a_problem(client):
    body = link_body("")
    del body["source_url"]
    assert_problem(client.post("/api/v1/audits", json=body), 422, "series")
