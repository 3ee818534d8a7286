"""Fixtures for the HTTP tests: an app on a private database (SQLite, and PostgreSQL when configured)."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from typing import Any

import numpy as np
import pytest
from fastapi.testclient import TestClient

from app.main import create_app
from app.service.timeline import TIMELINE_KEY
from app.settings import Settings
from store.databases import database_url, postgres_url  # noqa: F401  (fixtures)

TEST_SIMULATIONS = 200  # the least the audit accepts is 100; 200 keeps each audit quick
VOLATILE = ("id", "created_at", "owner_token", "url", "report_url", "data_url", "links")  # differ between two stored copies


def as_read_back(created: dict[str, Any]) -> dict[str, Any]:
    """What a read of a stored record gives, from its create answer: the owner token is shown once only."""
    return {key: value for key, value in created.items() if key != "owner_token"}


def without_timeline(read: dict[str, Any]) -> dict[str, Any]:
    """A read of a stored audit less its verdict timeline, which is worked out in the background after the create
    and joins the stored document when done (its own tests check it): what the create answer can be held to."""
    return {key: value for key, value in read.items() if key != TIMELINE_KEY}


def invented_series(seed: int = 7, start: int = 1950, end: int = 2024, slope: float = 0.02,
                    phi: float = 0.4, sd: float = 0.1) -> dict[str, list]:
    """Annual values: a straight trend plus AR(1) noise, from a fixed seed (invented data)."""
    rng = np.random.default_rng(seed)
    years = np.arange(start, end + 1)
    shocks = rng.normal(0.0, sd, years.size)
    noise = np.empty(years.size)
    noise[0] = shocks[0]
    for i in range(1, years.size):
        noise[i] = phi * noise[i - 1] + shocks[i]
    values = slope * (years - start) + noise
    return {"time": [int(y) for y in years], "value": [round(float(v), 4) for v in values]}


def audit_body(**overrides: Any) -> dict[str, Any]:
    body: dict[str, Any] = {
        "title": "Invented province: no warming since 1998?",
        "series": {**invented_series(), "label": "Temperature anomaly", "units": "°C"},
        "claim": {"start": 1998, "end": 2013, "kind": "pause"},
        "options": {"simulations": TEST_SIMULATIONS, "seed": 20261201},
    }
    body.update(overrides)
    return body


def csv_text(series: dict[str, list] | None = None) -> str:
    series = series or invented_series()
    rows = "".join(f"{t},{v}\n" for t, v in zip(series["time"], series["value"]))
    return "year,anomaly\n" + rows


@pytest.fixture
def make_settings(tmp_path) -> Callable[..., Settings]:
    def make(database_url: str, **overrides: Any) -> Settings:
        # Charts are drawn ahead only where a test asks (test_chart_keeping.py): elsewhere it is CPU time only.
        fields = dict(database_url=database_url, api_keys="", default_simulations=TEST_SIMULATIONS,
                      compute_workers=2, compute_queue=4, draw_charts_ahead=False)
        fields.update(overrides)
        return Settings(**fields)

    return make


@pytest.fixture
def make_client(make_settings, database_url) -> Iterator[Callable[..., TestClient]]:
    """Builds clients on this test's database; each is closed (lifespan ended) after the test."""
    opened: list[TestClient] = []

    def make(**overrides: Any) -> TestClient:
        client = TestClient(create_app(make_settings(database_url, **overrides)))
        client.__enter__()
        opened.append(client)
        return client

    yield make
    for client in opened:
        client.__exit__(None, None, None)


@pytest.fixture
def client(make_client) -> TestClient:
    return make_client()


def numbers_only(body: dict[str, Any]) -> dict[str, Any]:
    """A stored answer without what names or dates the copy: what the same input and seed must repeat."""
    return {k: v for k, v in body.items() if k not in VOLATILE}


def assert_problem(response, status: int, field: str | None = None) -> dict[str, Any]:
    """Every error is RFC 9457 problem details, saying where the fault is and what to do."""
    assert response.status_code == status, response.text
    assert response.headers["content-type"].startswith("application/problem+json")
    body = response.json()
    assert body["status"] == status
    assert body["type"].startswith("/problems/") and body["title"] and body["detail"]
    assert "where" in body and "fix" in body, body
    if field is not None:
        assert body["where"].get("field") == field, body
    return body
