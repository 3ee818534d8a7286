"""Fixtures for the hardening tests: the app in process on a private database, and headless Chromium.

The HTTP fixtures (``client``, ``make_client``, ``database_url``) are the API tests' own; the browser is
Debian's /usr/bin/chromium through tests/browser's own fixture, skipped (saying why) when missing
unless TRENDAUDIT_REQUIRE_BROWSER=1.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from api.conftest import client, make_client, make_settings  # noqa: F401  (fixtures)
from browser.conftest import _browser_missing_reason, browser  # noqa: F401  (fixture)
from store.databases import database_url, postgres_url  # noqa: F401  (fixtures)

HERE = Path(__file__).parent


def pytest_collection_modifyitems(config, items):
    reason = _browser_missing_reason()
    for item in items:
        if not Path(str(item.fspath)).is_relative_to(HERE) or "browser" not in item.fixturenames:
            continue
        item.add_marker(pytest.mark.browser)
        if reason and os.environ.get("TRENDAUDIT_REQUIRE_BROWSER") != "1":
            item.add_marker(pytest.mark.skip(reason=reason))
