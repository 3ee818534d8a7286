"""Whole server processes: two sharing one PostgreSQL, and a SIGKILL in the middle of a stream of creates."""

from __future__ import annotations

import threading

import httpx
import pytest

from .conftest import as_read_back, audit_body, without_timeline
from .servers import Server

pytestmark = pytest.mark.slow  # each test starts real server processes (a few seconds each)


def test_two_servers_share_one_postgresql(postgres_url, tmp_path):
    first = Server(postgres_url, tmp_path / "first.log")
    second = Server(postgres_url, tmp_path / "second.log")
    try:
        created = httpx.post(first.url + "/api/v1/audits", json=audit_body(), timeout=60)
        assert created.status_code == 201, created.text
        body = created.json()
        read = httpx.get(second.url + f"/api/v1/audits/{body['id']}", timeout=30)
        assert read.status_code == 200
        assert without_timeline(read.json()) == as_read_back(body)
        assert body["id"] in [i["id"] for i in httpx.get(second.url + "/api/v1/audits", timeout=30).json()["items"]]
        deleted = httpx.delete(second.url + f"/api/v1/audits/{body['id']}",
                               headers={"X-Owner-Token": body["owner_token"]}, timeout=30)
        assert deleted.status_code == 204
        assert httpx.get(first.url + f"/api/v1/audits/{body['id']}", timeout=30).status_code == 404
    finally:
        first.stop()
        second.stop()


def test_serve_binds_to_loopback_and_says_it_is_open(database_url, tmp_path):
    server = Server(database_url, tmp_path / "server.log")
    try:
        assert "the service is open" in server.log()
        assert "127.0.0.1" in server.log()
    finally:
        server.stop()


def _create_until_stopped(url: str, stop: threading.Event, acknowledged: dict, lock: threading.Lock) -> None:
    with httpx.Client(timeout=60) as client:
        while not stop.is_set():
            try:
                response = client.post(url + "/api/v1/audits", json=audit_body())
            except httpx.HTTPError:
                return  # the server died under us: this request was never acknowledged
            if response.status_code == 201:
                body = response.json()
                with lock:
                    acknowledged[body["id"]] = body


def test_every_acknowledged_audit_survives_a_sigkill(database_url, tmp_path):
    server = Server(database_url, tmp_path / "before.log")
    acknowledged: dict[str, dict] = {}
    lock = threading.Lock()
    stop = threading.Event()
    clients = [threading.Thread(target=_create_until_stopped, args=(server.url, stop, acknowledged, lock))
               for _ in range(3)]
    for thread in clients:
        thread.start()
    try:
        while True:
            with lock:
                if len(acknowledged) >= 8:
                    break
            if not any(t.is_alive() for t in clients):
                pytest.fail("the creating clients stopped early: " + server.log())
            threading.Event().wait(0.02)
        server.kill()  # while the three clients still have requests in flight
    finally:
        stop.set()
        for thread in clients:
            thread.join(timeout=60)
        server.stop()

    restarted = Server(database_url, tmp_path / "after.log")
    try:
        with lock:
            expected = dict(acknowledged)
        assert len(expected) >= 8
        for audit_id, body in expected.items():
            response = httpx.get(restarted.url + f"/api/v1/audits/{audit_id}", timeout=30)
            assert response.status_code == 200, audit_id
            assert without_timeline(response.json()) == as_read_back(body)
    finally:
        restarted.stop()
