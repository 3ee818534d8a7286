"""Shared fixtures: settings pointing at a private SQLite file per test, and an app built from them."""

from __future__ import annotations

import os

import pytest

from app.settings import Settings


@pytest.fixture
def settings(tmp_path) -> Settings:
    # Drawing each new audit's charts ahead is off here: most tests never open a report, and the drawing
    # would only add CPU time; tests/api/test_chart_keeping.py turns it on and checks it.
    return Settings(database_url=f"sqlite:///{tmp_path / 'audits.sqlite3'}", api_keys="", default_simulations=300,
                    draw_charts_ahead=False)


@pytest.fixture
def rng():
    import numpy as np

    return np.random.default_rng(20261201)


def postgres_url() -> str | None:
    return os.environ.get("TRENDAUDIT_TEST_DATABASE_URL") or None
