"""Hypothesis on what tests/ingest does not already cover: the cell parsers one by one, claim edges and options
as requests carry them, the whole audit and correlation on any readable series, and the desk's forms.

Each property is the same: the input is either used, giving a finite, JSON-safe result, or refused with an
InputError (a 4xx through HTTP) that says where. Nothing else may escape: no other exception, no 5xx.
"""

from __future__ import annotations

import collections
import json
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from app.service.audits import audit_options, claim_time
from app.audit import AuditOptions, Claim, audit_document, run_audit
from app.vocabulary import VERDICT_CODES
from app.correlation import CorrelationOptions
from app.correlation.run import run_correlation
from app.correlation.serialize import correlation_document
from app.errors import InputError
from app.ingest import IngestOptions, series_from_json
from app.ingest.cells import CellError
from app.ingest.numbers import parse_number
from app.ingest.times import parse_time
from app.settings import Settings

QUICK = settings(max_examples=300, deadline=None, suppress_health_check=list(HealthCheck))
# Derandomised: the same examples on every run, so the counts of examples that reach the statistics hold in CI.
WHOLE_AUDITS = settings(max_examples=60, deadline=None, suppress_health_check=list(HealthCheck), derandomize=True)
SETTINGS = Settings(database_url="sqlite:///unused.sqlite3", default_simulations=100)

# Pieces that time and number cells are made of, so generated text often gets past the first character.
TIME_ALPHABET = "0123456789-.:/TZQWqw+ ,eE\u2212\u00a0年月"
NUMBER_ALPHABET = "0123456789-+.,eEinfINFaAN \u2212\u00a0'_%()$"


@QUICK
@given(st.text(alphabet=TIME_ALPHABET, max_size=30) | st.text(max_size=30), st.booleans())
def test_a_time_cell_is_a_finite_decimal_year_or_a_cell_error(text, decimal_comma):
    try:
        parsed = parse_time(text, decimal_comma=decimal_comma)
    except CellError as error:
        assert error.message and error.fix
        return
    assert math.isfinite(parsed.decimal_year)


@QUICK
@given(st.integers(1, 9999), st.integers(1, 12), st.integers(1, 31))
def test_a_calendar_date_sits_inside_its_own_year(year, month, day):
    text = f"{year:04d}-{month:02d}-{day:02d}"
    try:
        parsed = parse_time(text)
    except CellError:
        assert day > 28  # only impossible dates (30 February, 31 April) may be refused
        return
    assert year < parsed.decimal_year < year + 1


@QUICK
@given(st.text(alphabet=NUMBER_ALPHABET, max_size=25) | st.text(max_size=25), st.booleans(),
       st.sampled_from([(), (-999.0,), (-99.99, 9999.0)]))
def test_a_number_cell_is_finite_missing_or_a_cell_error(text, decimal_comma, sentinels):
    try:
        value = parse_number(text, decimal_comma=decimal_comma, sentinels=sentinels)
    except CellError as error:
        assert error.message and error.fix
        return
    assert math.isfinite(value) or math.isnan(value)  # NaN means "missing", never infinity


@QUICK
@given(st.one_of(st.text(alphabet=TIME_ALPHABET, max_size=25), st.text(max_size=25),
                 st.floats(allow_nan=False, allow_infinity=False), st.integers(-10**6, 10**6)))
def test_a_claim_edge_is_a_number_or_a_claim_error(value):
    try:
        edge = claim_time(value, "claim.start")
    except InputError as error:
        assert error.location.field == "claim.start"
        return
    assert isinstance(edge, float)


option_values = st.fixed_dictionaries({}, optional={
    "confidence": st.floats(allow_nan=True, allow_infinity=True),
    "noise": st.text(max_size=8) | st.sampled_from(["white", "ar1", "arma11"]),
    "simulations": st.integers(-10**20, 10**20),
    "seed": st.integers(-10**30, 10**30),
    "reference_start": st.floats(allow_nan=True, allow_infinity=True),
    "reference_end": st.floats(allow_nan=True, allow_infinity=True),
    "rate_unit": st.text(max_size=12) | st.sampled_from(["per year", "per decade", "per century"]),
})


@QUICK
@given(option_values)
def test_options_are_accepted_whole_or_refused_naming_one(values):
    try:
        options = audit_options(values, SETTINGS)
    except InputError as error:
        assert error.location.field.startswith("options.")
        return
    assert 0.5 <= options.confidence < 1 and 100 <= options.simulations <= SETTINGS.max_simulations


# Series of any shape and any magnitude: a random walk, a line, a step, alternation or noise, scaled by 10**k
# for k anywhere a float reaches, shifted by an offset; a claimed window anywhere in or near the data.
shapes = st.sampled_from(["noise", "walk", "line", "step", "alternate", "spike"])


@st.composite
def any_series(draw, min_points=8, max_points=60):
    n = draw(st.integers(min_points, max_points))
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    shape = draw(shapes)
    base = {"noise": rng.normal(size=n), "walk": np.cumsum(rng.normal(size=n)), "line": np.arange(n, dtype=float),
            "step": (np.arange(n) >= n // 2).astype(float), "alternate": (np.arange(n) % 2).astype(float),
            "spike": (np.arange(n) == n // 3).astype(float)}[shape]
    # Mostly magnitudes the service accepts (10**-100 to 10**100), sometimes anything a float can hold.
    exponent = draw(st.sampled_from(["usual", "usual", "usual", "any"]).flatmap(
        lambda kind: st.integers(-100, 99) if kind == "usual" else st.integers(-320, 308)))
    values = base * 10.0 ** exponent + draw(st.sampled_from([0.0, 0.0, 1.0, -273.15, 1e15]))
    start = draw(st.integers(1800, 2000))
    return {"time": list(range(start, start + n)), "value": [float(v) for v in values]}


def _read(payload):
    try:
        return series_from_json(payload, IngestOptions())
    except InputError:
        return None


def test_an_audit_of_any_readable_series_is_a_finite_document_or_an_input_error():
    outcomes = collections.Counter()

    @WHOLE_AUDITS
    @given(any_series(min_points=20), st.floats(-0.1, 0.8), st.floats(0.1, 0.6), st.sampled_from(["pause", "acceleration"]),
           st.sampled_from(["white", "ar1", "arma11"]))
    def audit_any(payload, at, length, kind, noise):
        series = _read(payload)
        if series is None:
            outcomes["series refused"] += 1
            return
        span = series.end - series.start
        claim = Claim(series.start + at * span, series.start + (at + length) * span, kind)
        try:
            result = run_audit(series, claim, AuditOptions(simulations=100, seed=7, noise=noise))
        except InputError as error:
            assert error.detail
            outcomes["audit refused"] += 1
            return
        document = audit_document(result)
        json.dumps(document, allow_nan=False)  # what the store and the API must be able to write
        assert document["verdict"]["code"] in VERDICT_CODES
        outcomes["audited"] += 1

    audit_any()
    print("whole audits:", dict(outcomes))
    assert outcomes["audited"] >= WHOLE_AUDITS.max_examples // 4, outcomes  # many examples reach the statistics


def test_a_correlation_of_any_readable_pair_is_a_finite_document_or_an_input_error():
    outcomes = collections.Counter()

    @WHOLE_AUDITS
    @given(any_series(min_points=20, max_points=60), st.integers(0, 2**32 - 1),
           st.sampled_from(["none", "log", "cumulative"]), st.floats(3.0, 30.0))
    def correlate_any(response, seed, transform, window):
        driver_values = np.random.default_rng(seed).normal(size=len(response["time"])).cumsum()
        driver = _read({"time": response["time"], "value": [float(v) for v in driver_values * 10 + 300]})
        response_series = _read(response)
        if driver is None or response_series is None:
            outcomes["series refused"] += 1
            return
        options = CorrelationOptions(window_years=window, transform=transform, simulations=100, seed=3)
        try:
            result = run_correlation(driver, response_series, options)
        except InputError as error:
            assert error.detail
            outcomes["correlation refused"] += 1
            return
        json.dumps(correlation_document(result), allow_nan=False)
        outcomes["correlated"] += 1

    correlate_any()
    print("whole correlations:", dict(outcomes))
    assert outcomes["correlated"] >= WHOLE_AUDITS.max_examples // 4, outcomes


# The desk's forms are not in the OpenAPI document, so schemathesis never sees them: fuzz them here.
years_text = st.integers(1940, 2030).map(str)
form_text = years_text | st.text(max_size=40) | st.sampled_from(["", "1998", "2012-06", "0.95", "-1", "1e999", "NaN", "∞",
                                                    "<script>", "\x00", "0" * 30])
DESK_FIELDS = ("claim_kind", "confidence", "noise", "simulations", "seed", "reference_start", "reference_end",
               "rate_unit", "missing_sentinels", "decimal_comma", "time_column", "value_column", "label", "units",
               "title", "source_name", "source_url", "source_notes", "sample")
# The claim mostly usable, and up to three other fields at a time filled with anything, so that some forms
# get through to an audit and the rest fail on one field or another.
desk_fields = st.tuples(
    st.fixed_dictionaries({"claim_start": st.sampled_from([True, True, False]).flatmap(
                               lambda usual: st.integers(1950, 1990).map(str) if usual else form_text),
                           "claim_end": st.sampled_from([True, True, False]).flatmap(
                               lambda usual: st.integers(2000, 2020).map(str) if usual else form_text)}),
    st.just({}) | st.dictionaries(st.sampled_from(DESK_FIELDS), form_text, min_size=1, max_size=2),
).map(lambda parts: {**parts[0], **parts[1]})
TABLE = "year,anomaly\n" + "".join(f"{y},{0.02 * (y - 1950) + 0.1 * ((y * 7) % 5 - 2):.3f}\n" for y in range(1950, 2021))


@pytest.fixture(scope="module")
def desk(tmp_path_factory):
    from fastapi.testclient import TestClient

    from app.main import create_app

    folder = tmp_path_factory.mktemp("desk-fuzz")
    app = create_app(Settings(database_url=f"sqlite:///{folder / 'desk.sqlite3'}", api_keys="",
                              default_simulations=100, max_simulations=300))
    with TestClient(app, follow_redirects=False) as client:
        yield client


def test_the_desk_answers_any_form_with_a_page_or_a_redirect_never_a_5xx(desk):
    statuses = collections.Counter()

    @settings(max_examples=60, deadline=None, suppress_health_check=list(HealthCheck), derandomize=True)
    @given(desk_fields, st.sampled_from(["/preview", "/audit", "/audit"]), st.sampled_from([True, True, True, False]))
    def post_any(fields, path, with_table):
        data = {**fields, **({"table": TABLE} if with_table else {})}
        response = desk.post(path, data=data)
        statuses[response.status_code] += 1
        assert response.status_code < 500, response.text[:500]
        if response.status_code != 303:
            assert response.headers["content-type"].startswith("text/html")
            assert "<script>" not in response.text.replace('<script src="/static/desk.js" defer></script>', "")

    post_any()
    print("desk answers:", dict(statuses))
    assert statuses[200] and statuses[303] and sum(n for s, n in statuses.items() if 400 <= s < 500)


# What the whole-audit property found: a series without noise (an exact line or a clean step) and values too
# small or too large to square crashed the audit or its report with a 500. Each is now audited or refused.
NOISELESS = {"exact line": [0.5 * i for i in range(60)], "clean step": [0.0] * 30 + [1.0] * 30,
             "alternation": [float(i % 2) for i in range(60)]}


@pytest.mark.parametrize("name", sorted(NOISELESS))
def test_a_noiseless_series_gets_an_audit_a_report_and_every_chart(desk, name):
    created = desk.post("/api/v1/audits", json={"series": {"time": list(range(1960, 2020)), "value": NOISELESS[name]},
                                                 "claim": {"start": 1998, "end": 2012}})
    assert created.status_code == 201, created.text
    audit_id = created.json()["id"]
    assert desk.get(f"/audits/{audit_id}").status_code == 200
    for chart in ("series", "null", "sensitivity", "segments", "detectability"):
        assert desk.get(f"/audits/{audit_id}/charts/{chart}.svg").status_code == 200, chart


@pytest.mark.parametrize("scale", [1e-160, 1e-120, 1e120, 1e160])
def test_values_too_small_or_too_large_to_compute_with_are_a_422_naming_the_values(desk, scale):
    values = [scale * (0.02 * i + 0.1 * ((i * 7) % 5 - 2)) for i in range(60)]
    refused = desk.post("/api/v1/audits", json={"series": {"time": list(range(1960, 2020)), "value": values},
                                                "claim": {"start": 1998, "end": 2012}})
    assert refused.status_code == 422 and refused.json()["where"]["field"] == "series.value", refused.text
    assert "Rescale" in refused.json()["fix"]
