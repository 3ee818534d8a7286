"""GET /api/v1/samples and /api/v1/samples/{name}: the shipped demo series and their suggested claims."""

from __future__ import annotations

import json

import pytest

from app.service.audits import claim_time
from app.settings import PROJECT_ROOT

from .conftest import assert_problem

CATALOG = json.loads((PROJECT_ROOT / "sample_series" / "catalog.json").read_text(encoding="utf-8"))


def test_list_holds_every_catalog_entry(client):
    body = client.get("/api/v1/samples").json()
    assert [item["name"] for item in body["items"]] == [entry["name"] for entry in CATALOG]
    for item in body["items"]:
        assert item["url"] == f"/api/v1/samples/{item['name']}"
        assert {"title", "description", "units", "sampling", "suggested_claim"} <= set(item)


@pytest.mark.parametrize("name", [entry["name"] for entry in CATALOG])
def test_each_sample_comes_with_its_data(client, name):
    body = client.get(f"/api/v1/samples/{name}").json()
    entry = next(e for e in CATALOG if e["name"] == name)
    assert {k: body[k] for k in entry} == entry
    series = body["series"]
    assert len(series["time"]) == len(series["value"]) >= 8
    assert series["sampling"] == entry["sampling"]
    assert sorted(series["extra"]) == sorted(entry["extra_columns"])
    claim = entry["suggested_claim"]
    start, end = claim_time(claim["start"], "start"), claim_time(claim["end"], "end")
    assert series["time"][0] - 1 <= start < end <= series["time"][-1] + 1


def test_a_sample_can_be_audited_as_suggested(client):
    entry = CATALOG[0]
    series = client.get(f"/api/v1/samples/{entry['name']}").json()["series"]
    claim = {k: entry["suggested_claim"][k] for k in ("start", "end", "kind")}
    response = client.post("/api/v1/audits", json={
        "title": entry["title"], "series": {"time": series["time"], "value": series["value"], "units": entry["units"]},
        "claim": claim, "options": {"simulations": 200, "seed": 1}})
    assert response.status_code == 201, response.text


@pytest.mark.parametrize("name", ["no-such-sample", "..%2F..%2Fpyproject.toml", "catalog"])
def test_unknown_sample_is_404(client, name):
    assert_problem(client.get(f"/api/v1/samples/{name}"), 404)
