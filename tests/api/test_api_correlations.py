"""POST/GET/DELETE /api/v1/correlations, the list, the CSV export and the page, on SQLite and PostgreSQL;
and the kind check that keeps correlation ids out of the audit endpoints and the other way round."""

from __future__ import annotations

import csv
import io
import math

import pytest

from app.service.csv_export import correlation_data_csv
from app.service.payloads import series_from_payload
from app.correlation import CorrelationOptions, correlation_document, run_correlation
from app.ingest import series_from_json

from .conftest import TEST_SIMULATIONS, as_read_back, assert_problem, audit_body, numbers_only
from .invented import PER_DOUBLING, invented_pair

SEED = 424242


def correlation_request(**overrides):
    driver, response = invented_pair()
    body = {"title": "Invented province: CO2 rose, warming stalled?", "driver": driver, "response": response,
            "window_years": 15, "transform": "log", "options": {"simulations": TEST_SIMULATIONS, "seed": SEED}}
    body.update(overrides)
    return body


@pytest.fixture
def created(client):
    response = client.post("/api/v1/correlations", json=correlation_request())
    assert response.status_code == 201, response.text
    return response


def test_create_answers_201_with_location_and_the_documented_fields(created):
    body = created.json()
    assert created.headers["location"] == f"/api/v1/correlations/{body['id']}" == body["links"]["self"]
    assert body["report_url"] == f"/correlations/{body['id']}" == body["links"]["report"]
    assert body["kind"] == "correlation" and body["title"] == "Invented province: CO2 rose, warming stalled?"
    assert len(body["id"]) * 6 >= 128 and len(body["owner_token"]) >= 32 and body["created_at"].endswith("Z")
    assert body["url"] == f"/api/v1/correlations/{body['id']}"
    assert body["data_url"] == f"/api/v1/correlations/{body['id']}/data.csv"
    for key in ("r_levels", "r_detrended", "r_differences", "slope", "slope_ci", "verdict", "warnings", "seed"):
        assert key in body, key
    assert {"window_years", "starts", "r", "share_below_half"} <= set(body["rolling"])
    assert {"share_below_half", "probability_min_r"} <= set(body["null"])
    assert body["seed"] == SEED and body["transform"] == "log" and body["rolling"]["window_years"] == 15
    lo, hi = body["per_doubling"]["ci"]
    assert lo < PER_DOUBLING < hi


def test_the_answer_is_the_correlation_audits_own_document(created):
    """The endpoint adds no statistics: it stores and returns correlation_document(run_correlation(...))."""
    driver, response = invented_pair()
    result = run_correlation(series_from_json(driver, field="driver"), series_from_json(response, field="response"),
                             CorrelationOptions(window_years=15, transform="log", simulations=TEST_SIMULATIONS,
                                                seed=SEED))
    expected = correlation_document(result)
    body = created.json()
    assert {k: body[k] for k in expected if k != "elapsed_seconds"} == {
        k: v for k, v in expected.items() if k != "elapsed_seconds"}


def test_get_returns_the_stored_audit_without_the_owner_token(client, created):
    body = created.json()
    again = client.get(f"/api/v1/correlations/{body['id']}")
    assert again.status_code == 200
    assert again.json() == as_read_back(body)  # a correlation has no timeline


def test_the_same_request_twice_gives_identical_numbers(client, created):
    second = client.post("/api/v1/correlations", json=correlation_request())
    assert second.status_code == 201 and second.json()["id"] != created.json()["id"]
    assert numbers_only(second.json()) == numbers_only(created.json())


def test_a_drawn_seed_is_recorded_and_reproduces_the_audit(client):
    body = correlation_request(options={"simulations": TEST_SIMULATIONS})
    first = client.post("/api/v1/correlations", json=body).json()
    body["options"]["seed"] = first["seed"]
    assert numbers_only(client.post("/api/v1/correlations", json=body).json()) == numbers_only(first)


def test_the_stored_inputs_rerun_to_the_stored_result(client, created):
    record = client.app.state.runtime.get().audits.get(created.json()["id"])
    stored = record.input_document
    rerun = run_correlation(series_from_payload(stored["driver"]), series_from_payload(stored["response"]),
                            CorrelationOptions(**stored["options"]))
    # The stored document adds the claim record (who claimed what) to the serialiser's own.
    assert {**correlation_document(rerun), "claim": stored["claim"]} == record.result_document
    assert record.kind == "correlation" and record.seed == SEED
    assert record.summary["driver"] == "CO2" and record.summary["window_years"] == 15


def test_missing_title_gets_a_default(client):
    body = correlation_request()
    del body["title"]
    created = client.post("/api/v1/correlations", json=body).json()
    assert created["title"] == "Temperature anomaly and CO2: 15-year windows"


def test_list_is_newest_first_paginated_and_holds_only_correlations(client):
    audit_id = client.post("/api/v1/audits", json=audit_body()).json()["id"]
    ids = [client.post("/api/v1/correlations", json=correlation_request(window_years=w)).json()["id"]
           for w in (10, 12, 15)]
    first = client.get("/api/v1/correlations", params={"limit": 2}).json()
    assert [i["id"] for i in first["items"]] == ids[::-1][:2]
    item = first["items"][0]
    assert item["kind"] == "correlation" and item["report_url"] == f"/correlations/{ids[-1]}"
    assert item["url"] == f"/api/v1/correlations/{ids[-1]}"
    assert item["summary"]["verdict"]["code"] and item["summary"]["window_years"] == 15
    second = client.get("/api/v1/correlations", params={"limit": 2, "cursor": first["next_cursor"]}).json()
    assert [i["id"] for i in second["items"]] == [ids[0]] and second["next_cursor"] is None
    assert [i["id"] for i in client.get("/api/v1/audits").json()["items"]] == [audit_id]


@pytest.mark.parametrize("params, field", [({"limit": 0}, "limit"), ({"cursor": "not-a-cursor"}, "cursor")])
def test_bad_list_parameters_are_problems(client, params, field):
    assert_problem(client.get("/api/v1/correlations", params=params), 422, field)


def test_delete_needs_the_owner_token(client, created):
    correlation_id, token = created.json()["id"], created.json()["owner_token"]
    assert_problem(client.delete(f"/api/v1/correlations/{correlation_id}"), 401, "X-Owner-Token")
    assert_problem(client.delete(f"/api/v1/correlations/{correlation_id}", headers={"X-Owner-Token": "wrong"}), 403,
                   "X-Owner-Token")
    # The audits endpoint does not know this id, even with the right token.
    assert_problem(client.delete(f"/api/v1/audits/{correlation_id}", headers={"X-Owner-Token": token}), 404, "id")
    assert client.get(f"/api/v1/correlations/{correlation_id}").status_code == 200
    deleted = client.delete(f"/api/v1/correlations/{correlation_id}", headers={"X-Owner-Token": token})
    assert deleted.status_code == 204 and deleted.content == b""
    assert_problem(client.get(f"/api/v1/correlations/{correlation_id}"), 404, "id")


def test_ids_of_one_kind_are_not_found_at_the_other_kinds_addresses(client, created):
    correlation_id = created.json()["id"]
    audit_id = client.post("/api/v1/audits", json=audit_body()).json()["id"]
    for path in (f"/api/v1/audits/{correlation_id}", f"/audits/{correlation_id}",
                 f"/api/v1/audits/{correlation_id}/data.csv"):
        body = assert_problem(client.get(path), 404, "id")
        assert "no audit with id" in body["detail"]
    for path in (f"/api/v1/correlations/{audit_id}", f"/correlations/{audit_id}",
                 f"/api/v1/correlations/{audit_id}/data.csv"):
        body = assert_problem(client.get(path), 404, "id")
        assert "no correlation audit with id" in body["detail"]
    assert_problem(client.delete(f"/api/v1/correlations/{audit_id}", headers={"X-Owner-Token": "x"}), 404, "id")


def test_data_csv_holds_both_series_and_the_fitted_response(client, created):
    body = created.json()
    response = client.get(f"/api/v1/correlations/{body['id']}/data.csv")
    assert response.status_code == 200 and response.headers["content-type"].startswith("text/csv")
    assert body["id"] in response.headers["content-disposition"]
    rows = list(csv.DictReader(io.StringIO(response.text)))
    driver, series = invented_pair()
    assert [r["time_label"] for r in rows] == [str(t) for t in series["time"]]
    assert [float(r["response"]) for r in rows] == series["value"]
    assert [float(r["driver"]) for r in rows] == driver["value"]
    assert [float(r["driver_transformed"]) for r in rows] == pytest.approx([math.log(v) for v in driver["value"]])
    assert [float(r["fitted_response"]) for r in rows] == body["curves"]["fitted"]
    for r in rows:
        assert float(r["residual"]) == pytest.approx(float(r["response"]) - float(r["fitted_response"]), abs=1e-12)
    assert {r["shared"] for r in rows} == {"1"}


def test_data_csv_leaves_response_times_without_a_driver_blank(client):
    driver, response = invented_pair()
    short = {**driver, "time": driver["time"][5:], "value": driver["value"][5:]}
    created = client.post("/api/v1/correlations", json=correlation_request(driver=short)).json()
    rows = list(csv.DictReader(io.StringIO(client.get(created["data_url"]).text)))
    assert len(rows) == len(response["time"])
    assert [r["shared"] for r in rows[:6]] == ["0"] * 5 + ["1"]
    assert rows[0]["driver"] == rows[0]["fitted_response"] == rows[0]["residual"] == ""
    assert created["inputs"]["n"] == len(response["time"]) - 5


def test_data_csv_neutralises_text_cells_and_keeps_numbers_numeric():
    """OWASP CSV Injection: a text cell a spreadsheet would run gets an apostrophe; numbers stay numbers."""
    input_document = {"response": {"time": [2000.5, 2001.5], "value": [-0.25, 0.1], "time_labels": ["=cmd|x", "2001"]}}
    result_document = {"curves": {"time": [2000.5, 2001.5], "driver": [-1.5, 2.0], "driver_transformed": [-1.5, 2.0],
                                  "fitted": [-0.2, 0.05]}}
    rows = list(csv.reader(io.StringIO(correlation_data_csv(input_document, result_document))))
    assert rows[1][:4] == ["2000.5", "'=cmd|x", "-0.25", "-1.5"]
    assert rows[2][1] == "2001"


def test_report_page_is_html_with_the_verdict_and_an_escaped_title(client):
    created = client.post("/api/v1/correlations", json=correlation_request(title="<script>x</script>")).json()
    page = client.get(f"/correlations/{created['id']}")
    assert page.status_code == 200 and page.headers["content-type"].startswith("text/html")
    assert "<script>x</script>" not in page.text and "&lt;script&gt;" in page.text
    assert created["verdict"]["headline"].split()[0] in page.text


# --- faults ----------------------------------------------------------------------------------------------------


def _monthly(series: dict) -> dict:
    months = [f"{1990 + i // 12}-{i % 12 + 1:02d}" for i in range(len(series["value"]))]
    return {**series, "time": months}


@pytest.mark.parametrize("changes, field", [
    ({"transform": "square"}, "transform"),
    ({"window_years": 0}, "window_years"),
    ({"window_years": 100}, "window_years"),
    ({"window_years": "long"}, "window_years"),
    ({"options": {"simulations": 10}}, "options.simulations"),
    ({"options": {"confidence": 2}}, "options.confidence"),
    ({"options": {"noise": "pink"}}, "options.noise"),
    ({"options": {"seed": -3}}, "options.seed"),
    ({"driver": {**invented_pair()[0], "time": [1960, 1961, "x"] + list(range(1963, 2025))}}, "driver.time[2]"),
    ({"response": {"time": [1990, 1991], "value": [1.0]}}, "response.value"),
    ({"driver": {**invented_pair()[0], "value": [-1.0] + invented_pair()[0]["value"][1:]}}, "driver.value"),
    ({"driver": {**invented_pair()[0], "time": list(range(1800, 1865))}}, "driver.time"),
    ({"driver": _monthly(invented_pair()[0])}, "driver.time"),
    ({"surprise": True}, "surprise"),
])
def test_bad_requests_are_422_problems_naming_the_field(client, changes, field):
    body = correlation_request()
    body.update(changes)
    problem = assert_problem(client.post("/api/v1/correlations", json=body), 422, field)
    assert problem["fix"]


def test_a_missing_series_is_a_problem(client):
    body = correlation_request()
    del body["driver"]
    assert_problem(client.post("/api/v1/correlations", json=body), 422, "driver")


def test_only_json_is_read(client):
    response = client.post("/api/v1/correlations", content=b"year,co2\n", headers={"Content-Type": "text/csv"})
    assert_problem(response, 415, "Content-Type")
    malformed = client.post("/api/v1/correlations", content=b'{"driver": ', headers={"Content-Type": "application/json"})
    assert_problem(malformed, 422)


def test_too_many_simulations_for_this_service(make_client):
    client = make_client(max_simulations=1000)
    body = assert_problem(client.post("/api/v1/correlations", json=correlation_request(options={"simulations": 1001})),
                          422, "options.simulations")
    assert "1000" in body["detail"]


def test_over_long_strings_are_refused(make_client):
    client = make_client(max_string_length=50)
    driver, _ = invented_pair()
    assert_problem(client.post("/api/v1/correlations", json=correlation_request(title="t" * 51)), 422, "title")
    response = client.post("/api/v1/correlations", json=correlation_request(driver={**driver, "label": "l" * 51}))
    assert_problem(response, 422, "driver.label")

