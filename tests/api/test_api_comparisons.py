"""Comparisons: one claim audited on several datasets, answered in one stored document."""

from __future__ import annotations

import numpy as np

from api.conftest import TEST_SIMULATIONS, assert_problem

YEARS = np.arange(1950, 2025)


def dataset(label: str, noise_seed: int, change: bool = False) -> dict:
    """One steady trend of 0.02 a year plus white noise of its own seed (invented data); with ``change``,
    the trend really stops in 1998 (a flat stretch in the last 27 years)."""
    rng = np.random.default_rng(noise_seed)
    trend = 0.02 * (YEARS - 1950.0)
    if change:
        trend = np.where(YEARS >= 1998, 0.02 * (1998 - 1950.0), trend)
    values = trend + rng.normal(0.0, 0.06, YEARS.size)
    return {"time": [int(y) for y in YEARS], "value": [round(float(v), 4) for v in values], "label": label,
            "units": "°C"}


def body(series: list[dict], **extra) -> dict:
    return {"title": "No warming since 1998, in four datasets",
            "claim": {"start": 1998, "end": 2024, "kind": "pause"}, "series": series,
            "options": {"simulations": TEST_SIMULATIONS, "seed": 20261204}, **extra}


FOUR = [dataset("Agency A", 1), dataset("Agency B", 2), dataset("Agency C", 3),
        dataset("Agency D (changed)", 4, change=True)]


def test_three_agree_and_the_one_with_a_real_change_differs(client):
    response = client.post("/api/v1/comparisons", json=body(FOUR))
    assert response.status_code == 201, response.text
    answer = response.json()
    codes = [row["code"] for row in answer["datasets"]]
    assert codes[0] == codes[1] == codes[2] != codes[3], codes
    assert codes[3] == "trend_change_supported"
    agreement = answer["agreement"]
    assert agreement["agreeing"] == 3 and not agreement["all_agree"]
    assert agreement["sentence"].startswith("Three of four datasets agree")
    assert "Agency D (changed)" in agreement["sentence"]
    for row in answer["datasets"]:
        assert row["window_ci"][0] <= row["window_slope"] <= row["window_ci"][1]
        assert row["long_term_ci"][0] <= row["long_term_slope"] <= row["long_term_ci"][1]

    page = client.get(answer["report_url"])
    assert page.status_code == 200
    assert "Three of four datasets agree" in page.text and 'id="datasets-chart"' in page.text
    listed = client.get("/api/v1/comparisons").json()["items"]
    assert [item["id"] for item in listed] == [answer["id"]]
    assert client.get(f"/api/v1/comparisons/{answer['id']}/data.csv").text.count("\n") == 5
    assert client.get(f"/api/v1/audits/{answer['id']}").status_code == 404  # another kind of record
    assert client.delete(f"/api/v1/comparisons/{answer['id']}",
                         headers={"X-Owner-Token": answer["owner_token"]}).status_code == 204
    assert client.get(f"/comparisons/{answer['id']}").status_code == 404


def test_datasets_that_agree_say_so(client):
    answer = client.post("/api/v1/comparisons", json=body(FOUR[:3])).json()
    assert answer["agreement"]["all_agree"]
    assert answer["agreement"]["sentence"].startswith("All three datasets give the same verdict")


def test_one_dataset_is_not_a_comparison(client):
    assert_problem(client.post("/api/v1/comparisons", json=body(FOUR[:1])), 422)
