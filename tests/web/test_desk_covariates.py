"""Other columns as covariates, from the preview's checkboxes to the report's side-by-side, in process."""

from __future__ import annotations

import math
import re

from web.answers import report_path

MONTHLY_SAMPLE = "wrenhollow-point-monthly-temperature"


def _table_with_an_index() -> str:
    """Annual values that follow a trend plus 0.3 of an invented index a year earlier (invented for this test)."""
    rows = ["year,anomaly,index,flag"]
    for year in range(1950, 2025):
        index = round(math.sin(year * 1.3) + 0.5 * math.cos(year * 0.7), 3)
        earlier = math.sin((year - 1) * 1.3) + 0.5 * math.cos((year - 1) * 0.7)
        wiggle = 0.05 * ((year * 7) % 5 - 2)
        rows.append(f"{year},{0.015 * (year - 1950) + 0.3 * earlier + wiggle:.3f},{index},{year % 2}")
    return "\n".join(rows)


TABLE = _table_with_an_index()
CLAIM = {"claim_start": "1998", "claim_end": "2012", "claim_kind": "pause", "seed": "7", "title": "Adjusted"}


def test_the_preview_offers_each_other_numeric_column_as_a_factor(client):
    html = client.post("/preview", data={"table": TABLE}).text
    boxes = re.findall(r'<input type="checkbox" name="covariate_columns" value="([^"]+)"', html)
    assert boxes == ["index", "flag"]
    assert 'name="covariate_max_lag"' in html
    plain = client.post("/preview", data={"table": "year,value\n" + "\n".join(f"{y},{y % 7}" for y in range(1950, 2000))})
    assert 'name="covariate_columns"' not in plain.text


def test_reading_again_keeps_the_factors_chosen(client):
    html = client.post("/preview", data={"table": TABLE, "covariate_columns": "index"}).text
    assert re.search(r'value="index" checked', html) and not re.search(r'value="flag" checked', html)


def test_an_upload_with_a_covariate_column_is_audited_raw_and_adjusted(client):
    made = client.post("/audit", data={**CLAIM, "covariate_columns": "index", "covariate_max_lag": "2"},
                       files={"file": ("with-index.csv", TABLE.encode(), "text/csv")})
    report = report_path(made)
    stored = client.get("/api/v1" + report).json()
    factor = stored["adjustment"]["factors"][0]
    assert factor["name"] == "index" and factor["lag"] == 1  # the index acts a year later, as built
    low, high = factor["ci"]
    assert low < 0.3 < high
    html = client.get(report).text
    assert 'id="adjusted"' in html and "As measured and adjusted for index" in html
    assert stored["adjustment"]["audit"]["verdict"]["headline"].replace("'", "&#39;") in html
    assert html.count('class="verdict verdict-side') == 2
    assert client.get(f"{report}/charts/adjusted.svg").status_code == 200
    history = client.get("/history").text
    assert "adjusted for index" in history


def test_a_sample_with_an_index_column_can_be_adjusted_for_it(client):
    html = client.get("/", params={"sample": MONTHLY_SAMPLE}).text
    assert '<input type="checkbox" name="covariate_columns" value="ocean_index"' in html
    made = client.post("/audit", data={"sample": MONTHLY_SAMPLE, "covariate_columns": "ocean_index", "seed": "5"})
    stored = client.get("/api/v1" + report_path(made)).json()
    assert [f["name"] for f in stored["adjustment"]["factors"]] == ["ocean_index"]
    assert stored["adjustment"]["audit"]["inputs"]["label"].endswith("(adjusted)")


def test_a_factor_that_is_not_a_numeric_column_comes_back_on_the_form(client):
    page = client.post("/audit", data={**CLAIM, "table": TABLE, "covariate_columns": "year"})
    assert page.status_code == 422
    assert "“Other factors”" in page.text and "Check what was read" in page.text
    lag = client.post("/audit", data={**CLAIM, "table": TABLE, "covariate_columns": "index",
                                      "covariate_max_lag": "soon"})
    assert lag.status_code == 422 and "“Longest delay to try”" in lag.text
    assert client.get("/api/v1/audits").json()["items"] == []
