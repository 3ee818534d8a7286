"""Covariates in POST /api/v1/audits (JSON and CSV columns) and POST /api/v1/trend: a planted factor comes
back within its range, the adjusted audit rides along, and bad covariates are problems naming the field."""

from __future__ import annotations

import pytest

import app.service.covariates as covariates_module
from app.audit import AuditOptions, Claim, audit_document, run_audit
from app.ingest import series_from_json
from app.service.payloads import series_from_payload
from app.stats.adjust import Covariate, fit_covariates

from .conftest import TEST_SIMULATIONS, assert_problem, audit_body
from .invented import FIRST, LAST, PLANTED_BETA, PLANTED_LAG, planted, planted_csv



def with_covariates(*covariates, **overrides):
    series, _ = planted()
    return audit_body(series={**series, "label": "Temperature anomaly", "units": "°C"}, covariates=list(covariates),
                      **overrides)


@pytest.fixture
def adjusted(client):
    _, covariate = planted()
    response = client.post("/api/v1/audits", json=with_covariates(covariate))
    assert response.status_code == 201, response.text
    return response.json()


def test_json_covariate_recovers_the_planted_factor_and_audits_the_adjusted_series(adjusted):
    adjustment = adjusted["adjustment"]
    (factor,) = adjustment["factors"]
    assert factor["name"] == "ENSO-like index"
    assert factor["lag"] == PLANTED_LAG and factor["lag_years"] == PLANTED_LAG
    lo, hi = factor["ci"]
    assert lo < PLANTED_BETA < hi
    assert factor["coefficient"] == pytest.approx(PLANTED_BETA, abs=0.03)
    assert 0 < factor["variance_share"] < 1
    assert adjustment["residual_sd_adjusted"] < adjustment["residual_sd_raw"]
    assert adjustment["trend_ci"][0] < 0.02 < adjustment["trend_ci"][1]
    assert adjustment["n_used"] == LAST - FIRST + 1 and adjustment["dropped_times"] == []
    inner = adjustment["audit"]
    assert all(inner["claim"][name] == adjusted["claim"][name] for name in ("start", "end", "kind"))
    assert inner["seed"] == adjusted["seed"]
    assert inner["verdict"]["code"] and inner["adjustment"] is None
    assert "adjusted for ENSO-like index" in inner["inputs"]["notes"]


def test_without_covariates_adjustment_is_null(client):
    body = client.post("/api/v1/audits", json=audit_body()).json()
    assert body["adjustment"] is None


def test_the_stored_inputs_with_covariates_rerun_to_the_stored_result(client, adjusted):
    record = client.app.state.runtime.get().audits.get(adjusted["id"])
    stored = record.input_document
    (payload,) = stored["covariates"]
    assert payload["name"] == "ENSO-like index" and payload["max_lag"] is None
    covariates = [Covariate(name=c["name"], time=series_from_payload(c["series"]).time,
                            value=series_from_payload(c["series"]).value, max_lag=c["max_lag"])
                  for c in stored["covariates"]]
    rerun = run_audit(series_from_payload(stored["series"]), Claim(**{name: stored["claim"][name] for name in ("start", "end", "kind")}), AuditOptions(**stored["options"]),
                      covariates=covariates)
    stored_claim = record.result_document["claim"]
    assert {**audit_document(rerun), "claim": stored_claim} == record.result_document
    assert record.summary["covariates"] == ["ENSO-like index"]


def test_missing_covariate_values_are_allowed_and_cost_only_their_times(client):
    _, covariate = planted()
    position = covariate["time"].index(1980)
    covariate["value"][position] = None
    body = client.post("/api/v1/audits", json=with_covariates(covariate)).json()
    adjustment = body["adjustment"]
    # A missing index year removes every response year that would use it at some candidate lag (0 to 2).
    assert adjustment["dropped_times"] == [1980.5, 1981.5, 1982.5]
    assert adjustment["factors"][0]["lag"] == PLANTED_LAG


def test_covariate_strings_sit_on_the_same_mid_period_axis(client):
    _, covariate = planted()
    as_text = {**covariate, "time": [f"{y}" for y in covariate["time"]]}
    as_numbers = client.post("/api/v1/audits", json=with_covariates(covariate)).json()
    as_strings = client.post("/api/v1/audits", json=with_covariates(as_text)).json()
    assert as_strings["adjustment"]["factors"] == as_numbers["adjustment"]["factors"]


# --- multipart: extra CSV columns ------------------------------------------------------------------------------


def form(**overrides):
    fields = {"claim_start": "1998", "claim_end": "2013", "simulations": str(TEST_SIMULATIONS), "seed": "20261201"}
    fields.update(overrides)
    return {k: v for k, v in fields.items() if v is not None}


def upload(client, **fields):
    return client.post("/api/v1/audits", data=form(**fields), files={"file": ("s.csv", planted_csv(), "text/csv")})


def test_csv_columns_give_the_same_adjustment_as_the_same_covariate_in_json(client):
    response = upload(client, covariate_columns="enso", value_column="anomaly")
    assert response.status_code == 201, response.text
    from_csv = response.json()["adjustment"]
    # The JSON covariate over the file's own years: the same sample, so the same numbers.
    series, covariate = planted()
    covariate = {**covariate, "time": covariate["time"][4:], "value": covariate["value"][4:], "name": "enso"}
    from_json = client.post("/api/v1/audits", json=audit_body(series=series, covariates=[covariate])).json()["adjustment"]
    for key in ("factors", "residual_sd_raw", "residual_sd_adjusted", "trend_slope", "trend_ci", "dropped_times"):
        assert from_csv[key] == from_json[key], key
    assert from_csv["factors"][0]["lag"] == PLANTED_LAG
    assert from_csv["dropped_times"] == [1950.5, 1951.5]  # lags up to two years reach before the file


def test_covariate_columns_may_be_repeated_fields_and_carry_a_max_lag(client):
    response = client.post("/api/v1/audits", data={**form(covariate_max_lag="1"), "covariate_columns": ["ENSO", "volcanic"]},
                           files={"file": ("s.csv", planted_csv(), "text/csv")})
    assert response.status_code == 201, response.text
    factors = response.json()["adjustment"]["factors"]
    assert [f["name"] for f in factors] == ["enso", "volcanic"]  # matched like the value column: case aside
    assert all(f["lag"] <= 1 for f in factors)
    stored = client.app.state.runtime.get().audits.get(response.json()["id"]).input_document
    assert [c["max_lag"] for c in stored["covariates"]] == [1, 1]
    assert stored["ingest"]["covariate_columns"] == ["ENSO", "volcanic"]


@pytest.mark.parametrize("fields, field", [
    ({"covariate_columns": "nope"}, "covariate_columns"),
    ({"covariate_columns": "anomaly"}, "covariate_columns"),
    ({"covariate_columns": "year"}, "covariate_columns"),
    ({"covariate_columns": "enso", "covariate_max_lag": "two"}, "covariate_max_lag"),
    ({"covariate_columns": "enso", "covariate_max_lag": "-1"}, "covariate_max_lag"),
    ({"covariate_columns": "enso", "covariate_max_lag": "40"}, "covariate_max_lag"),  # over a quarter of 75 points
    ({"covariate_columns": ",".join(["enso"] * 1 + [f"c{i}" for i in range(9)])}, "covariate_columns"),
])
def test_bad_covariate_form_fields_are_problems_naming_the_field(client, fields, field):
    body = assert_problem(upload(client, **fields), 422, field)
    assert body["fix"]


def test_a_text_column_cannot_be_a_covariate(client):
    lines = planted_csv().splitlines()
    text = "\n".join([lines[0] + ",note"] + [line + ",see notes" for line in lines[1:]]) + "\n"
    response = client.post("/api/v1/audits", data=form(covariate_columns="note"),
                           files={"file": ("s.csv", text, "text/csv")})
    body = assert_problem(response, 422, "covariate_columns")
    assert "numbers" in body["detail"] and "'enso'" in body["detail"]


# --- JSON faults -----------------------------------------------------------------------------------------------


def _covariate(**changes):
    _, covariate = planted()
    return {**covariate, **changes}


def _spoilt(key, position, value):
    covariate = _covariate()
    covariate[key] = list(covariate[key])
    covariate[key][position] = value
    return covariate


@pytest.mark.parametrize("covariates, field", [
    ([_spoilt("time", 3, "19x0")], "covariates[0].time[3]"),
    ([_spoilt("time", 0, None)], "covariates[0].time[0]"),
    ([_spoilt("value", 2, "abc")], "covariates[0].value[2]"),
    ([_covariate(value=[1.0, 2.0])], "covariates[0].value"),
    ([_covariate(value=[0.5] * 79)], "covariates[0].value"),  # constant
    ([_covariate(max_lag=-1)], "covariates[0].max_lag"),
    ([_covariate(max_lag=40)], "covariates[0].max_lag"),  # over a quarter of the 75 points
    ([_covariate(name="")], "covariates[0].name"),
    ([_covariate(), _covariate()], "covariates[1].name"),
    ([_covariate(name=f"f{i}") for i in range(9)], "covariates"),
    ([_covariate(time=list(range(1800, 1879)))], "covariates[0].time"),  # no overlap with the series
    ([{**_covariate(), "colour": "red"}], "covariates[0].colour"),
    ([{"name": "x", "time": [1990]}], "covariates[0].value"),
])
def test_bad_json_covariates_are_problems_naming_the_field(client, covariates, field):
    body = assert_problem(client.post("/api/v1/audits", json=with_covariates(*covariates)), 422, field)
    assert body["fix"]


def test_an_over_long_covariate_name_is_refused(make_client):
    client = make_client(max_string_length=100)
    response = client.post("/api/v1/audits", json=with_covariates(_covariate(name="n" * 101)))
    assert_problem(response, 422, "covariates[0].name")


def test_a_lag_search_too_big_to_hold_is_refused_before_computing(client, monkeypatch):
    monkeypatch.setattr(covariates_module, "MAX_LAG_CELLS", 100)
    body = assert_problem(client.post("/api/v1/audits", json=with_covariates(_covariate(max_lag=2))), 422,
                          "covariates[0].max_lag")
    assert "100" in body["detail"]


# --- the trend endpoint ----------------------------------------------------------------------------------------


def test_trend_with_covariates_reports_the_fit_itself(client):
    series, covariate = planted()
    response = client.post("/api/v1/trend", json={"series": series, "covariates": [covariate], "confidence": 0.9,
                                                   "start": 1960})
    assert response.status_code == 200, response.text
    adjustment = response.json()["adjustment"]
    window = series_from_json(series).window(1960, LAST + 1)
    index = series_from_json({"time": covariate["time"], "value": covariate["value"]})
    fit = fit_covariates(window.time, window.value, [Covariate(covariate["name"], index.time, index.value)], 1.0,
                         confidence=0.9)
    (factor,) = adjustment["factors"]
    assert factor["coefficient"] == fit.factors[0].coefficient and factor["ci"] == list(fit.factors[0].ci)
    assert factor["lag"] == PLANTED_LAG and factor["ci"][0] < PLANTED_BETA < factor["ci"][1]
    assert adjustment["trend_slope"] == fit.trend_slope and adjustment["trend_ci"] == list(fit.trend_ci)
    assert adjustment["residual_sd_adjusted"] == fit.residual_sd_adjusted
    assert adjustment["n_used"] == window.n and adjustment["noise"] == "ar1" and adjustment["lag_rule"] == "ls"


def test_trend_without_covariates_has_no_adjustment(client):
    series, _ = planted()
    assert client.post("/api/v1/trend", json={"series": series}).json()["adjustment"] is None


def test_trend_adjustment_takes_the_lag_rule_and_stands_in_ar1_for_other_noise_models(client):
    series, covariate = planted()
    body = client.post("/api/v1/trend", json={"series": series, "covariates": [covariate], "noise": "hac",
                                              "lag_rule": "aic"}).json()
    assert body["noise"] == "hac"
    assert body["adjustment"]["noise"] == "ar1" and body["adjustment"]["lag_rule"] == "aic"
    assert body["adjustment"]["factors"][0]["lag"] == PLANTED_LAG


@pytest.mark.parametrize("covariate, field", [
    (_spoilt("value", 5, "n/a?"), "covariates[0].value[5]"),
    (_covariate(max_lag=30), "covariates[0].max_lag"),
    (_covariate(name=""), "covariates[0].name"),
])
def test_bad_trend_covariates_are_problems(client, covariate, field):
    series, _ = planted()
    assert_problem(client.post("/api/v1/trend", json={"series": series, "covariates": [covariate]}), 422, field)


def test_bad_lag_rule_is_a_problem(client):
    series, covariate = planted()
    response = client.post("/api/v1/trend", json={"series": series, "covariates": [covariate], "lag_rule": "best"})
    assert_problem(response, 422, "lag_rule")
