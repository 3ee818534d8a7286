"""POST/GET/DELETE /api/v1/audits, the CSV export and the report page, on SQLite and PostgreSQL."""

from __future__ import annotations

import csv
import io

import numpy as np
import pytest

from app.service.payloads import series_from_payload
from app.audit import AuditOptions, Claim, audit_document, run_audit

from .conftest import (TEST_SIMULATIONS, as_read_back, assert_problem, audit_body, csv_text, invented_series,
                       numbers_only, without_timeline)

HEADLINE_KEYS = {
    "verdict": {"code", "headline", "summary"},
    "reference": {"start", "end"},
    "long_term": {"slope", "ci", "p_value"},
    "window": {"start", "end", "slope", "ci", "p_value_vs_zero", "p_value_vs_long_term"},
    "trend_change": {"p_value_nominal", "p_value_adjusted"},
    "spell": {"probability"},
    "segments": {"breakpoints"},
    "detectability": {"years_to_detect"},
    "inputs": {"sha256", "n"},
}


@pytest.fixture
def created(client):
    response = client.post("/api/v1/audits", json=audit_body())
    assert response.status_code == 201, response.text
    return response


def test_create_answers_201_with_location_and_the_documented_fields(created):
    body = created.json()
    assert created.headers["location"] == f"/api/v1/audits/{body['id']}" == body["links"]["self"]
    assert body["report_url"] == f"/audits/{body['id']}" == body["links"]["report"]
    assert body["links"]["data_csv"] == f"/api/v1/audits/{body['id']}/data.csv"
    assert body["links"]["charts"]["series"] == f"/audits/{body['id']}/charts/series.svg"
    assert len(body["id"]) * 6 >= 128 and len(body["owner_token"]) >= 32
    for section, keys in HEADLINE_KEYS.items():
        assert keys <= set(body[section]), section
    assert body["seed"] == 20261201
    assert body["inputs"]["n"] == 75
    assert body["title"] == "Invented province: no warming since 1998?"
    assert body["created_at"].endswith("Z")
    assert isinstance(body["software_version"], str) and body["software_version"]
    assert body["verdict"]["code"] and body["verdict"]["headline"]


def test_get_returns_the_stored_audit_without_the_owner_token(client, created):
    body = created.json()
    again = client.get(f"/api/v1/audits/{body['id']}")
    assert again.status_code == 200
    assert "owner_token" not in again.json()
    assert without_timeline(again.json()) == as_read_back(body)


def test_the_same_request_twice_gives_identical_numbers(client, created):
    second = client.post("/api/v1/audits", json=audit_body())
    assert second.status_code == 201
    assert second.json()["id"] != created.json()["id"]
    assert numbers_only(second.json()) == numbers_only(created.json())


def test_a_drawn_seed_is_recorded_and_reproduces_the_audit(client):
    body = audit_body(options={"simulations": TEST_SIMULATIONS})
    first = client.post("/api/v1/audits", json=body).json()
    assert isinstance(first["seed"], int)
    body["options"]["seed"] = first["seed"]
    second = client.post("/api/v1/audits", json=body).json()
    assert numbers_only(second) == numbers_only(first)


def test_the_stored_inputs_rerun_to_the_stored_result(client, created):
    """What is kept is enough to reproduce the audit months later without the original request."""
    runtime = client.app.state.runtime.get()
    record = runtime.audits.get(created.json()["id"])
    stored = record.input_document
    series = series_from_payload(stored["series"])
    options = AuditOptions(**stored["options"])
    claim = Claim(**{name: stored["claim"][name] for name in ("start", "end", "kind")})
    rerun = audit_document(run_audit(series, claim, options))
    # The stored document adds who claimed what, and the edges as given, to the serialiser's claim.
    stored_claim = record.result_document["claim"]
    assert rerun["claim"] == {name: stored_claim[name] for name in ("start", "end", "kind")}
    assert {**rerun, "claim": stored_claim} == record.result_document
    assert record.input_sha256 == series.sha256() == created.json()["inputs"]["sha256"]
    assert record.seed == created.json()["seed"]


def test_unknown_audit_is_a_404_problem(client):
    assert_problem(client.get("/api/v1/audits/doesnotexist"), 404, "id")
    assert_problem(client.get("/audits/doesnotexist"), 404, "id")
    assert_problem(client.get("/api/v1/audits/doesnotexist/data.csv"), 404, "id")


def test_list_is_newest_first_and_paginated(client):
    ids = []
    for year in (1996, 1997, 1998):
        response = client.post("/api/v1/audits", json=audit_body(claim={"start": year, "end": 2012, "kind": "pause"}))
        ids.append(response.json()["id"])
    first = client.get("/api/v1/audits", params={"limit": 2}).json()
    assert [i["id"] for i in first["items"]] == ids[::-1][:2]
    assert first["items"][0]["report_url"] == f"/audits/{ids[-1]}"
    assert first["items"][0]["summary"]["verdict"]["code"]
    second = client.get("/api/v1/audits", params={"limit": 2, "cursor": first["next_cursor"]}).json()
    assert [i["id"] for i in second["items"]] == [ids[0]]
    assert second["next_cursor"] is None


@pytest.mark.parametrize("params, field", [({"limit": 0}, "limit"), ({"limit": 1000}, "limit"),
                                           ({"cursor": "not-a-cursor"}, "cursor")])
def test_bad_list_parameters_are_problems(client, params, field):
    assert_problem(client.get("/api/v1/audits", params=params), 422, field)


def test_delete_needs_the_owner_token(client, created):
    audit_id, token = created.json()["id"], created.json()["owner_token"]
    missing = assert_problem(client.delete(f"/api/v1/audits/{audit_id}"), 401, "X-Owner-Token")
    assert "owner" in missing["detail"]
    assert_problem(client.delete(f"/api/v1/audits/{audit_id}", headers={"X-Owner-Token": "wrong"}), 403,
                   "X-Owner-Token")
    assert client.get(f"/api/v1/audits/{audit_id}").status_code == 200
    deleted = client.delete(f"/api/v1/audits/{audit_id}", headers={"X-Owner-Token": token})
    assert deleted.status_code == 204 and deleted.content == b""
    assert_problem(client.get(f"/api/v1/audits/{audit_id}"), 404)
    assert_problem(client.delete(f"/api/v1/audits/{audit_id}", headers={"X-Owner-Token": token}), 404)


def test_data_csv_holds_the_input_the_trend_line_and_residuals(client, created):
    body = created.json()
    response = client.get(f"/api/v1/audits/{body['id']}/data.csv")
    assert response.status_code == 200
    assert response.headers["content-type"].startswith("text/csv")
    assert body["id"] in response.headers["content-disposition"]
    rows = list(csv.DictReader(io.StringIO(response.text)))
    series = invented_series()
    assert len(rows) == len(series["time"])
    assert [r["time_label"] for r in rows] == [str(t) for t in series["time"]]
    assert [float(r["value"]) for r in rows] == series["value"]
    in_reference = [r for r in rows if r["in_reference"] == "1"]
    assert in_reference and all(r["long_term_trend"] for r in in_reference)
    # The residual is the value less the stored trend line, and the line rises by the stored slope.
    for r in in_reference:
        assert float(r["residual"]) == pytest.approx(float(r["value"]) - float(r["long_term_trend"]), abs=1e-12)
    t = np.array([float(r["time"]) for r in in_reference])
    line = np.array([float(r["long_term_trend"]) for r in in_reference])
    assert np.allclose(np.diff(line) / np.diff(t), body["long_term"]["slope"], rtol=1e-9)
    window = [r for r in rows if r["in_window"] == "1"]
    assert {float(r["time"]) for r in window} == {t + 0.5 for t in range(1998, 2014)}  # 1998 through 2013


def test_data_csv_keeps_negative_numbers_numeric(client):
    series = invented_series()
    series["value"] = [v - 3.0 for v in series["value"]]
    labels = [f"{t}-06" for t in series["time"]]
    body = audit_body(series={"time": labels, "value": series["value"]})
    created = client.post("/api/v1/audits", json=body)
    assert created.status_code == 201, created.text
    text = client.get(f"/api/v1/audits/{created.json()['id']}/data.csv").text
    rows = list(csv.DictReader(io.StringIO(text)))
    assert all(float(r["value"]) < 0 for r in rows)  # numbers stay numbers
    assert not any(r["value"].startswith("'") for r in rows)


def test_report_page_is_html_with_the_verdict(client, created):
    body = created.json()
    page = client.get(f"/audits/{body['id']}")
    assert page.status_code == 200
    assert page.headers["content-type"].startswith("text/html")
    assert body["verdict"]["headline"].split()[0] in page.text
    assert body["id"] in page.text


def test_title_is_escaped_in_the_report(client):
    created = client.post("/api/v1/audits", json=audit_body(title="<script>alert(1)</script>")).json()
    page = client.get(f"/audits/{created['id']}").text
    assert "<script>alert(1)</script>" not in page
    assert "&lt;script&gt;" in page


def test_missing_title_gets_a_default(client):
    body = audit_body()
    del body["title"]
    created = client.post("/api/v1/audits", json=body).json()
    assert "pause" in created["title"] and "1998" in created["title"]


# --- multipart: a CSV upload ---------------------------------------------------------------------------------


def form(**overrides):
    fields = {"title": "Uploaded file", "claim_start": "1998", "claim_end": "2013", "claim_kind": "pause",
              "simulations": str(TEST_SIMULATIONS), "seed": "20261201"}
    fields.update(overrides)
    return {k: v for k, v in fields.items() if v is not None}


def test_multipart_csv_upload_gives_the_same_numbers_as_json(client, created):
    response = client.post("/api/v1/audits", data=form(time_column="year", value_column="anomaly"),
                           files={"file": ("series.csv", csv_text(), "text/csv")})
    assert response.status_code == 201, response.text
    body = response.json()
    assert response.headers["location"] == f"/api/v1/audits/{body['id']}"
    as_json = created.json()
    for section in ("long_term", "window", "trend_change", "spell", "segments"):
        assert body[section] == as_json[section], section
    assert body["verdict"]["code"] == as_json["verdict"]["code"]  # the wording differs: the CSV has no units
    assert body["inputs"]["sha256"] == as_json["inputs"]["sha256"]


def test_multipart_detects_columns_when_not_named(client):
    response = client.post("/api/v1/audits", data=form(), files={"file": ("s.csv", csv_text(), "text/csv")})
    assert response.status_code == 201, response.text
    runtime = client.app.state.runtime.get()
    ingest = runtime.audits.get(response.json()["id"]).input_document["ingest"]
    assert (ingest["time_column"], ingest["value_column"], ingest["filename"]) == ("year", "anomaly", "s.csv")


@pytest.mark.parametrize("fields, files, field", [
    (form(), None, "file"),
    (form(claim_start=None), "ok", "claim_start"),
    (form(claim_start="nineteen"), "ok", "claim_start"),
    (form(claim_kind="collapse"), "ok", "claim_kind"),
    (form(simulations="lots"), "ok", "simulations"),
    (form(simulations="10"), "ok", "simulations"),
    (form(confidence="2"), "ok", "confidence"),
    (form(noise="pink"), "ok", "noise"),
    (form(decimal_comma="maybe"), "ok", "decimal_comma"),
    (form(missing_sentinels="-999,abc"), "ok", "missing_sentinels"),
    (form(value_column="nope"), "ok", None),
])
def test_multipart_faults_are_problems_naming_the_field(client, fields, files, field):
    upload = {"file": ("s.csv", csv_text(), "text/csv")} if files else None
    if files is None:
        response = client.post("/api/v1/audits", data=fields, files={"other": ("x.txt", "x", "text/plain")})
    else:
        response = client.post("/api/v1/audits", data=fields, files=upload)
    assert_problem(response, 422, field)


def test_a_damaged_spreadsheet_is_a_problem_naming_the_file(client):
    response = client.post("/api/v1/audits", data=form(),
                           files={"file": ("s.xlsx", b"PK\x03\x04" + bytes(range(256)), "application/octet-stream")})
    body = assert_problem(response, 422, "file")
    assert ".xlsx" in body["fix"]


# --- JSON faults -----------------------------------------------------------------------------------------------


@pytest.mark.parametrize("body, field", [
    ({**audit_body(), "claim": {"start": 1998, "end": 2013, "kind": "collapse"}}, "claim.kind"),
    ({**audit_body(), "claim": {"start": 2013, "end": 1998, "kind": "pause"}}, None),
    ({**audit_body(), "claim": {"start": 1700, "end": 1720, "kind": "pause"}}, "claim.start"),
    ({**audit_body(), "options": {"simulations": 10**9}}, "options.simulations"),
    ({**audit_body(), "options": {"confidence": 1.5}}, "options.confidence"),
    ({**audit_body(), "options": {"seed": -1}}, "options.seed"),
    ({**audit_body(), "series": {"time": [1, 2, 3], "value": [1, 2]}}, None),
    ({**audit_body(), "series": {"time": [1990, 1991], "value": [1, "x"]}}, None),
    ({**audit_body(), "surprise": 1}, "surprise"),
    ({k: v for k, v in audit_body().items() if k != "series"}, "series"),
])
def test_json_faults_are_422_problems(client, body, field):
    assert_problem(client.post("/api/v1/audits", json=body), 422, field)


def test_malformed_json_is_a_problem(client):
    response = client.post("/api/v1/audits", content=b'{"title": ', headers={"Content-Type": "application/json"})
    assert_problem(response, 422)


def test_other_media_types_are_415(client):
    response = client.post("/api/v1/audits", content=b"year,value\n", headers={"Content-Type": "text/csv"})
    assert_problem(response, 415, "Content-Type")


def test_too_many_points_is_a_422_naming_the_series(make_client):
    client = make_client(max_points=50)
    body = assert_problem(client.post("/api/v1/audits", json=audit_body()), 422)
    assert body["where"]["field"].startswith("series.time")
    assert "50" in body["detail"]


def test_too_many_simulations_is_a_422(make_client):
    client = make_client(max_simulations=1000)
    body = assert_problem(client.post("/api/v1/audits", json=audit_body(options={"simulations": 1001})), 422,
                          "options.simulations")
    assert "1000" in body["detail"]


@pytest.mark.parametrize("path, make_body", [
    ("title", lambda text: audit_body(title=text)),
    ("series.label", lambda text: audit_body(series={**invented_series(), "label": text})),
    ("source.notes", lambda text: audit_body(source={"notes": text})),
])
def test_over_long_strings_are_422_naming_the_field(make_client, path, make_body):
    client = make_client(max_string_length=100)
    body = assert_problem(client.post("/api/v1/audits", json=make_body("x" * 101)), 422, path)
    assert "100" in body["detail"]


@pytest.mark.parametrize("field", ["title", "source_notes", "time_column"])
def test_over_long_form_fields_are_422_naming_the_field(make_client, field):
    client = make_client(max_string_length=100)
    response = client.post("/api/v1/audits", data=form(**{field: "y" * 101}),
                           files={"file": ("s.csv", csv_text(), "text/csv")})
    assert_problem(response, 422, field)


def test_json_ingest_options_are_applied_and_stored(client):
    series = invented_series()
    series["value"][10] = -999
    created = client.post("/api/v1/audits", json=audit_body(series=series, ingest={"missing_sentinels": [-999]}))
    assert created.status_code == 201, created.text
    body = created.json()
    assert body["inputs"]["n"] == len(series["time"]) - 1
    stored = client.app.state.runtime.get().audits.get(body["id"]).input_document
    assert stored["ingest"]["options"]["missing_sentinels"] == [-999.0]
    assert stored["series"]["missing_times"] == [series["time"][10] + 0.5]


def test_claim_edges_may_be_written_like_the_data(client):
    months = [f"{1980 + i // 12}-{i % 12 + 1:02d}" for i in range(12 * 40)]
    values = [0.0015 * i + 0.1 * ((i * 7919) % 11 - 5) / 5 for i in range(len(months))]
    body = audit_body(series={"time": months, "value": values}, claim={"start": "2005-01", "end": "2014-12"})
    created = client.post("/api/v1/audits", json=body)
    assert created.status_code == 201, created.text
    claim = created.json()["claim"]
    # A month as the start begins at its first instant; as the end it is included whole.
    assert claim["start"] == pytest.approx(2005.0) and claim["end"] == pytest.approx(2015.0)
    assert claim["window"] == {"start_given": "2005-01", "end_given": "2014-12", "start": claim["start"],
                               "end": claim["end"], "first": "2005-01", "last": "2014-12", "points": 120}
    bad = client.post("/api/v1/audits", json={**body, "claim": {"start": "2005-13", "end": "2014-12"}})
    assert_problem(bad, 422, "claim.start")
