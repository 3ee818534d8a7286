"""POST /api/v1/trend: the trend engine's numbers over HTTP, and its faults as problems."""

from __future__ import annotations

import numpy as np
import pytest

from app.ingest import series_from_json
from app.stats.noise_fit import select_noise_model
from app.stats.ols import fit_trend
from app.stats.trend import METHODS, summarise_trend

from .conftest import TEST_SIMULATIONS, assert_problem, audit_body, invented_series


def post_trend(client, **body):
    body.setdefault("series", invented_series())
    return client.post("/api/v1/trend", json=body)


def test_trend_answers_every_documented_field(client):
    response = post_trend(client)
    assert response.status_code == 200, response.text
    body = response.json()
    for key in ("slope", "ci", "ci_white", "n", "n_effective", "p_value", "years_to_detect", "methods",
                "mann_kendall"):
        assert key in body
    assert body["units"] == "per year" and body["noise"] == "ar1"
    assert [m["name"] for m in body["methods"]] == list(METHODS)
    assert {"p_value", "sen_slope"} <= set(body["mann_kendall"])
    assert body["n"] == 75
    lo, hi = body["ci"]
    assert lo < body["slope"] < hi
    # With positively autocorrelated noise the honest range is wider than the white-noise one.
    assert hi - lo > body["ci_white"][1] - body["ci_white"][0]


def test_trend_numbers_are_the_engines_own(client):
    """The endpoint adds no statistics of its own: it reports summarise_trend for the chosen window, with the noise
    fitted as the audit fits it (restricted likelihood on the line's residuals; AR(1) behind HAC's detectability)."""
    series = series_from_json(invented_series())
    window = series.window(1970, 2010)
    noise = select_noise_model(fit_trend(window.time, window.value).residuals).model_of("ar1")
    expected = summarise_trend(window.time, window.value, method="hac", confidence=0.9, noise=noise,
                               points_per_year=1.0)
    # Whole years at both ends: 1970 through 2009, as window_edges reads them.
    body = post_trend(client, start=1970, end=2009, noise="hac", confidence=0.9).json()
    assert body["n"] == window.n == 40
    assert body["window"] == {"start_given": 1970, "end_given": 2009, "start": 1970.0, "end": 2010.0,
                              "first": "1970", "last": "2009", "points": 40}
    assert body["slope"] == expected.chosen.slope
    assert body["ci"] == list(expected.chosen.ci)
    assert body["p_value"] == expected.chosen.p_value
    assert body["years_to_detect"] == expected.years_to_detect
    white = next(m for m in expected.methods if m.method == "white")
    assert body["ci_white"] == list(white.ci)
    assert body["mann_kendall"]["sen_slope"] == expected.sen.slope
    assert body["mann_kendall"]["p_value"] == expected.mann_kendall.p_value
    assert (body["start"], body["end"]) == (window.start, window.end)


@pytest.mark.parametrize("noise", METHODS)
def test_each_noise_model_is_the_chosen_one(client, noise):
    body = post_trend(client, noise=noise).json()
    chosen = next(m for m in body["methods"] if m["name"] == noise)
    assert body["ci"] == chosen["ci"] and body["noise"] == noise


def test_a_rising_series_has_a_positive_slope_near_the_truth(client):
    body = post_trend(client, series=invented_series(slope=0.02, sd=0.05)).json()
    assert body["slope"] == pytest.approx(0.02, abs=0.005)
    assert body["p_value"] < 0.001


def test_monthly_strings_are_read_as_mid_month(client):
    months = [f"{1990 + i // 12}-{i % 12 + 1:02d}" for i in range(240)]
    values = list(0.001 * np.arange(240) + 0.05 * np.sin(np.arange(240)))
    body = post_trend(client, series={"time": months, "value": values}).json()
    assert body["n"] == 240
    assert body["slope"] == pytest.approx(0.012, rel=0.05)  # 0.001 per month is 0.012 per year


@pytest.mark.parametrize("body, field", [
    ({"series": {"time": [1, 2, 3], "value": [1, 2, 3]}}, None),
    ({"series": {"time": list(range(20)), "value": [1.0] * 20}}, None),
    ({"series": {"time": list(range(20)), "value": list(range(19))}}, None),
    ({"series": {"time": list(range(20)), "value": ["a"] * 20}}, None),
    ({"series": invented_series(), "start": 1800, "end": 1900}, "start"),
    ({"series": invented_series(), "start": 2000, "end": 1990}, "end"),
    ({"series": invented_series(), "start": 2020, "end": 2024}, "start"),
    ({"series": invented_series(), "noise": "pink"}, "noise"),
    ({"series": invented_series(), "confidence": 1.2}, "confidence"),
    ({"series": invented_series(), "extra": True}, "extra"),
    ({"time": [1, 2]}, "series"),
])
def test_bad_trend_requests_are_problems_never_500(client, body, field):
    response = client.post("/api/v1/trend", json=body)
    assert_problem(response, 422, field)


def test_too_many_points_for_trend(make_client):
    client = make_client(max_points=30)
    body = assert_problem(post_trend(client), 422)
    assert body["where"]["field"].startswith("series")


def test_trend_method_rows_are_written_as_the_audits_long_term_rows(client):
    """One serialiser: over the same series and window, /trend's rows are the audit's long-term rows. On a
    record with no detected change the audit's AR(1) noise is fitted to the same straight-line residuals, by the
    same restricted likelihood, so the numbers agree too."""
    created = client.post("/api/v1/audits", json=audit_body(options={
        "simulations": TEST_SIMULATIONS, "seed": 5, "noise": "ar1", "reference_start": 1950,
        "reference_end": 2024.5})).json()
    assert created["segments"]["n_breaks"] == 0 and created["reference"]["n"] == 75
    trend = post_trend(client, start=1950, end=2024, noise="ar1").json()
    long_term = created["long_term"]
    assert [row["name"] for row in trend["methods"]] == [row["method"] for row in long_term["methods"]]
    for row, audit_row in zip(trend["methods"], long_term["methods"]):
        assert set(row) - {"name"} <= set(audit_row)
        compared = set(row) - {"name"}
        for key in compared:
            assert row[key] == pytest.approx(audit_row[key], rel=1e-9), (row["name"], key)
    assert [trend["slope"], *trend["ci"]] == pytest.approx([long_term["slope"], *long_term["ci"]], rel=1e-9)
    assert {k: trend["mann_kendall"][k] for k in long_term["mann_kendall"]} == long_term["mann_kendall"]
