"""The desk in process: the real app on a private SQLite file, driven by Starlette's TestClient."""

from __future__ import annotations

from collections.abc import Iterator

import pytest
from fastapi.testclient import TestClient

from app.main import create_app
from app.report.chart_cache import clear_chart_cache
from app.settings import Settings

DESK_SIMULATIONS = 200  # the least the audit accepts is 100; 200 keeps each audit quick


def desk_settings(tmp_path, **overrides) -> Settings:
    return Settings(database_url=f"sqlite:///{tmp_path / 'desk.sqlite3'}", default_simulations=DESK_SIMULATIONS,
                    **{"api_keys": "", **overrides})


@pytest.fixture
def client(tmp_path) -> Iterator[TestClient]:
    clear_chart_cache()
    with TestClient(create_app(desk_settings(tmp_path)), follow_redirects=False) as test_client:
        yield test_client


@pytest.fixture
def keyed(tmp_path) -> Iterator[TestClient]:
    clear_chart_cache()
    keys = "desk-key-one-0123456789,desk-key-two-0123456789"
    with TestClient(create_app(desk_settings(tmp_path, api_keys=keys)), follow_redirects=False) as test_client:
        yield test_client

