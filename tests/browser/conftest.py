"""A real server and a real headless Chromium: Debian's /usr/bin/chromium driven by Playwright, no download.

The server is the app as uvicorn serves it, in a subprocess on a free loopback port, with a private
SQLite file and small simulation counts. Without chromium the tests are skipped, saying why, unless
TRENDAUDIT_REQUIRE_BROWSER=1 (CI sets it): then a missing browser is a failure.
"""

from __future__ import annotations

import os
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from pathlib import Path

import httpx
import pytest

from app.settings import PROJECT_ROOT

CHROMIUM = Path("/usr/bin/chromium")
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]
ARTIFACTS = PROJECT_ROOT / "test-artifacts"
SERVER_START_SECONDS = 30


def _browser_missing_reason() -> str | None:
    if not CHROMIUM.exists():
        return f"{CHROMIUM} is not installed (apt-get install chromium, or make browser-deps)"
    try:
        import playwright.sync_api  # noqa: F401
    except ImportError:
        return "the playwright Python package is not installed"
    return None


def pytest_collection_modifyitems(config, items):
    here = Path(__file__).parent
    mine = [item for item in items if Path(str(item.fspath)).is_relative_to(here)]
    for item in mine:
        item.add_marker(pytest.mark.browser)
    reason = _browser_missing_reason()
    if reason and mine and os.environ.get("TRENDAUDIT_REQUIRE_BROWSER") != "1":
        for item in mine:
            item.add_marker(pytest.mark.skip(reason=reason))


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


@pytest.fixture(scope="session")
def server(tmp_path_factory) -> Iterator[str]:
    port = _free_port()
    folder = tmp_path_factory.mktemp("desk-server")
    env = {**os.environ, "TRENDAUDIT_DATABASE_URL": f"sqlite:///{folder / 'desk.sqlite3'}",
           "TRENDAUDIT_DEFAULT_SIMULATIONS": "200", "TRENDAUDIT_API_KEYS": "", "PYTHONUNBUFFERED": "1"}
    log = open(folder / "server.log", "w")
    process = subprocess.Popen([sys.executable, "-m", "uvicorn", "app.main:app", "--host", "127.0.0.1",
                                "--port", str(port), "--log-level", "warning"],
                               cwd=PROJECT_ROOT, env=env, stdout=log, stderr=subprocess.STDOUT)
    base = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + SERVER_START_SECONDS
        while True:
            try:
                if httpx.get(f"{base}/healthz", timeout=1.0).status_code == 200:
                    break
            except httpx.HTTPError:
                pass
            if process.poll() is not None or time.monotonic() > deadline:
                raise RuntimeError(f"the server did not start: {(folder / 'server.log').read_text()[-2000:]}")
            time.sleep(0.2)
        yield base
    finally:
        process.terminate()
        try:
            process.wait(timeout=10)
        except subprocess.TimeoutExpired:
            process.kill()
        log.close()


@pytest.fixture(scope="module")
def browser():
    # Module scope, not session: while Playwright's sync API is open it holds a running asyncio loop in
    # this thread, and any later test that calls asyncio.run() would fail.
    reason = _browser_missing_reason()
    if reason:
        pytest.fail(f"TRENDAUDIT_REQUIRE_BROWSER=1 but {reason}")
    from playwright.sync_api import sync_playwright

    with sync_playwright() as playwright:
        # launch() gives every run a fresh, throw-away user-data directory.
        chromium = playwright.chromium.launch(executable_path=str(CHROMIUM), args=CHROMIUM_ARGS)
        yield chromium
        chromium.close()


class ConsoleWatch:
    """Every console error and uncaught page error seen while a test ran."""

    def __init__(self) -> None:
        self.errors: list[str] = []

    def on_console(self, message) -> None:
        if message.type == "error":
            self.errors.append(f"console: {message.text}")

    def on_page_error(self, error) -> None:
        self.errors.append(f"page error: {error}")


@pytest.fixture
def console() -> ConsoleWatch:
    return ConsoleWatch()


@pytest.fixture
def page(browser, console):
    context = browser.new_context(viewport={"width": 1100, "height": 900})
    new_page = context.new_page()
    new_page.on("console", console.on_console)
    new_page.on("pageerror", console.on_page_error)
    yield new_page
    context.close()
    assert console.errors == [], console.errors


@pytest.fixture(scope="session")
def artifacts() -> Path:
    ARTIFACTS.mkdir(exist_ok=True)
    return ARTIFACTS


@pytest.fixture(scope="session")
def stored_report(server) -> str:
    """One audit made through the API, for the tests that only read a report."""
    years = list(range(1950, 2025))
    values = [round(0.015 * (y - 1950) + 0.12 * ((y * 7) % 5 - 2) / 2, 3) for y in years]
    answer = httpx.post(f"{server}/api/v1/audits", timeout=120, json={
        "title": "Browser test: a pause since 1998?", "series": {"time": years, "value": values,
                                                               "label": "Invented anomaly", "units": "°C"},
        "claim": {"start": 1998, "end": 2013, "kind": "pause"}, "options": {"simulations": 200, "seed": 3}})
    assert answer.status_code == 201, answer.text
    return f"{server}{answer.json()['report_url']}"
