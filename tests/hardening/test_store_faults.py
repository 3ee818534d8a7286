"""Store faults are fast, clear and recoverable: 503 with Retry-After naming the cause in general words, found
before any audit is computed, /healthz alive throughout, /readyz saying the store is not, and service resumed
without a restart once the store is back. Nothing acknowledged is lost."""

from __future__ import annotations

import time

import httpx
import pytest
from sqlalchemy import event

import app.service.creating as creating

from api.conftest import assert_problem, as_read_back, audit_body, without_timeline
from api.servers import Server
from .tcp_proxy import TcpProxy

KEY = "store-faults-key-0123456789"
TIMEOUT = 2.0  # TRENDAUDIT_STORE_TIMEOUT_SECONDS for these tests


def _break_sqlite(engine, pragma: str):
    """Every new connection gets ``pragma``; the pool is emptied so none of the old ones is used again."""

    def on_connect(dbapi_connection, _record):
        dbapi_connection.execute(pragma)

    event.listen(engine, "connect", on_connect)
    engine.dispose()
    return lambda: (event.remove(engine, "connect", on_connect), engine.dispose())


def _store_problem(answer, cause: str) -> dict:
    body = assert_problem(answer, 503, "store")
    assert cause in body["detail"] and int(answer.headers["retry-after"]) > 0
    assert "/" not in body["detail"] and "sqlite" not in body["detail"].lower()  # no path, no driver words
    return body


def _never_compute(monkeypatch):
    def computed(_job):
        raise AssertionError("the audit was computed although the store could not keep it")

    monkeypatch.setattr(creating, "compute_document", computed)


@pytest.fixture
def sqlite_client(make_settings, tmp_path):
    from fastapi.testclient import TestClient

    from app.main import create_app

    with TestClient(create_app(make_settings(f"sqlite:///{tmp_path / 'faults.sqlite3'}"))) as client:
        yield client


@pytest.mark.parametrize("pragma, cause", [("PRAGMA query_only = 1", "read-only"), ("", "full")])
def test_a_sqlite_store_that_cannot_write_is_a_503_before_computing(sqlite_client, monkeypatch, pragma, cause):
    """A read-only directory or a full disk gave 500s on every create, after computing the audit. (Tests run as
    root, which file modes do not stop, so the store is made read-only by SQLite's query_only, and full by
    capping its pages: SQLite then raises the same errors.)"""
    kept = sqlite_client.post("/api/v1/audits", json=audit_body())
    assert kept.status_code == 201
    engine = sqlite_client.app.state.runtime.get().engine
    if cause == "full":  # no room beyond the pages it has
        pragma = f"PRAGMA max_page_count = {engine.connect().exec_driver_sql('PRAGMA page_count').scalar_one()}"
    repair = _break_sqlite(engine, pragma)
    with monkeypatch.context() as patched:
        _never_compute(patched)
        _store_problem(sqlite_client.post("/api/v1/audits", json=audit_body()), cause)
        _store_problem(sqlite_client.get("/readyz"), cause)
        assert sqlite_client.get("/healthz").status_code == 200
    assert sqlite_client.get(f"/api/v1/audits/{kept.json()['id']}").status_code == 200  # reads still work
    repair()
    assert sqlite_client.get("/readyz").status_code == 200
    assert sqlite_client.post("/api/v1/audits", json=audit_body()).status_code == 201


def test_a_write_that_fails_anyway_is_a_503_not_a_500(sqlite_client, monkeypatch):
    """The writable check passed, then the disk filled: the insert's own fault is a 503 as well."""
    runtime = sqlite_client.app.state.runtime.get()
    monkeypatch.setattr(runtime.audits, "check_writable", lambda: None, raising=False)
    pages = runtime.engine.connect().exec_driver_sql("PRAGMA page_count").scalar_one()
    repair = _break_sqlite(runtime.engine, f"PRAGMA max_page_count = {pages}")
    _store_problem(sqlite_client.post("/api/v1/audits", json=audit_body()), "full")
    repair()


def _timed(call):
    started = time.monotonic()
    answer = call()
    return answer, time.monotonic() - started


@pytest.mark.slow
@pytest.mark.postgres
def test_postgres_refused_blackholed_and_restored(postgres_url, tmp_path):
    """PostgreSQL refusing gave generic 500s (creates after computing) while /healthz said 200; a silent one
    made requests hang 30-90 s and starved /healthz. Through a proxy on loopback: refused, blackholed, back."""
    proxy = TcpProxy(5432)
    url = postgres_url.replace("127.0.0.1:5432", f"127.0.0.1:{proxy.port}")
    server = Server(url, tmp_path / "server.log", api_keys=KEY, store_timeout_seconds=str(TIMEOUT),
                    draw_charts_ahead="false")
    key = {"Authorization": f"Bearer {KEY}"}
    figures = {}
    try:
        with httpx.Client(base_url=server.url, timeout=60) as http:
            acknowledged = {}
            for _ in range(3):
                made = http.post("/api/v1/audits", json=audit_body(), headers=key)
                assert made.status_code == 201
                acknowledged[made.json()["id"]] = made.json()
            some_id = next(iter(acknowledged))
            for fault, cause in ((proxy.refuse, "the database"), (proxy.blackhole, "the database")):
                fault()
                for name, call in (("read", lambda: http.get(f"/api/v1/audits/{some_id}")),
                                   ("list", lambda: http.get("/api/v1/audits", headers=key)),
                                   ("create", lambda: http.post("/api/v1/audits", json=audit_body(), headers=key)),
                                   ("ready", lambda: http.get("/readyz"))):
                    answer, seconds = _timed(call)
                    _store_problem(answer, cause)
                    health, health_seconds = _timed(lambda: http.get("/healthz"))
                    assert health.status_code == 200
                    figures[(fault.__name__, name)] = (round(seconds, 2), round(health_seconds * 1000, 1))
                    assert seconds < 4 * TIMEOUT + 2, (fault.__name__, name, seconds)
                proxy.restore()
                deadline = time.monotonic() + 30
                while http.get("/readyz").status_code != 200:  # recovery without a restart
                    assert time.monotonic() < deadline, "the service did not recover"
                figures[(fault.__name__, "recovered after")] = round(30 - (deadline - time.monotonic()), 2)
                made = http.post("/api/v1/audits", json=audit_body(), headers=key)
                assert made.status_code == 201
                acknowledged[made.json()["id"]] = made.json()
            for audit_id, body in acknowledged.items():
                stored = http.get(f"/api/v1/audits/{audit_id}").json()
                assert without_timeline(stored) == as_read_back(body)
        print("\nPostgreSQL faults (seconds to answer, /healthz ms):", figures)
    finally:
        server.stop()
        proxy.close()
