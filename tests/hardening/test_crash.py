"""Crashes: the server SIGKILLed three times while creates and deletes are in flight, on SQLite and PostgreSQL.

tests/api/test_servers.py already kills a server once during creates and reads every acknowledged audit
back. This goes further: deletes run alongside the creates, the server dies three times over the same
database, and after the last restart every stored row is read straight from the database and checked
whole, so a row that was half written (or committed without its answer reaching the client) would show.
"""

from __future__ import annotations

import json
import random
import re
import threading
import time

import httpx
import pytest
import sqlalchemy as sa

from api.conftest import as_read_back, audit_body, invented_series, without_timeline
from api.servers import Server
from app.vocabulary import VERDICT_CODES
from app.store.engine import make_engine, sqlite_path

pytestmark = pytest.mark.slow  # four server starts and three kills per database

ROUNDS = 3
ACKS_PER_ROUND = 5
HEX64 = re.compile(r"[0-9a-f]{64}")


class Traffic:
    """Creates on three threads and deletes on one, until told to stop or the server dies under them."""

    def __init__(self) -> None:
        self.lock = threading.Lock()
        self.created: dict[str, dict] = {}
        self.deleted: set[str] = set()
        self.unanswered_deletes: set[str] = set()  # sent when the server died: done or not, nobody was told
        self.stop = threading.Event()

    def create(self, url: str, seed: int) -> None:
        rng = random.Random(seed)
        with httpx.Client(timeout=60) as http:
            while not self.stop.is_set():
                body = audit_body(series={**invented_series(seed=rng.randrange(10**6)), "label": "Anomaly"})
                try:
                    response = http.post(url + "/api/v1/audits", json=body)
                except httpx.HTTPError:
                    return  # the server died: this create was never acknowledged
                if response.status_code == 201:
                    with self.lock:
                        self.created[response.json()["id"]] = response.json()

    def delete(self, url: str, seed: int) -> None:
        rng = random.Random(seed)
        with httpx.Client(timeout=60) as http:
            while not self.stop.is_set():
                with self.lock:
                    live = [i for i in self.created if i not in self.deleted]
                if len(live) < 3:
                    time.sleep(0.05)
                    continue
                audit_id = rng.choice(live)
                try:
                    response = http.delete(url + f"/api/v1/audits/{audit_id}",
                                           headers={"X-Owner-Token": self.created[audit_id]["owner_token"]})
                except httpx.HTTPError:
                    with self.lock:
                        self.unanswered_deletes.add(audit_id)
                    return
                if response.status_code == 204:
                    with self.lock:
                        self.deleted.add(audit_id)
                time.sleep(0.2)

    def acknowledged(self) -> int:
        with self.lock:
            return len(self.created)


def _round(database_url: str, log, traffic: Traffic, round_number: int) -> None:
    server = Server(database_url, log)
    traffic.stop.clear()
    threads = [threading.Thread(target=traffic.create, args=(server.url, 10 * round_number + i)) for i in range(3)]
    threads.append(threading.Thread(target=traffic.delete, args=(server.url, round_number)))
    target = traffic.acknowledged() + ACKS_PER_ROUND
    try:
        for thread in threads:
            thread.start()
        deadline = time.monotonic() + 120
        while traffic.acknowledged() < target:
            assert time.monotonic() < deadline, "no progress: " + server.log()
            time.sleep(0.02)
        server.kill()  # with creates, and perhaps a delete, in flight
    finally:
        traffic.stop.set()
        for thread in threads:
            thread.join(timeout=60)
        server.stop()


def _stored_rows(database_url: str) -> list[dict]:
    engine = make_engine(database_url)
    try:
        with engine.connect() as connection:
            if engine.dialect.name == "sqlite":
                assert connection.exec_driver_sql("PRAGMA integrity_check").scalar() == "ok"
            return [dict(row) for row in connection.execute(sa.text("SELECT * FROM audits")).mappings()]
    finally:
        engine.dispose()


def _assert_whole(row: dict) -> None:
    """A stored row is complete: every column filled, documents parsed, summary and result agree."""
    documents = {name: row[name] for name in ("summary", "input_document", "result_document")}
    for name, value in documents.items():  # SQLite hands JSON back as text when read without the table's types
        if isinstance(value, str):
            documents[name] = json.loads(value)
    result, summary, given = documents["result_document"], documents["summary"], documents["input_document"]
    assert row["kind"] == "audit" and row["title"] and row["created_at"] is not None
    assert HEX64.fullmatch(row["input_sha256"]) and HEX64.fullmatch(row["owner_token_sha256"])
    assert result["verdict"]["code"] in VERDICT_CODES and result["seed"] == row["seed"]
    assert summary["verdict"]["code"] == result["verdict"]["code"]
    assert len(given["series"]["time"]) == len(given["series"]["value"]) == summary["n"]
    assert result["inputs"]["sha256"] == row["input_sha256"]


def test_three_kills_lose_nothing_acknowledged_and_leave_no_half_written_row(database_url, tmp_path):
    traffic = Traffic()
    for number in range(ROUNDS):
        _round(database_url, tmp_path / f"round-{number}.log", traffic, number)

    restarted = Server(database_url, tmp_path / "after.log")
    try:
        with httpx.Client(base_url=restarted.url, timeout=60) as http:
            for audit_id, body in traffic.created.items():
                response = http.get(f"/api/v1/audits/{audit_id}")
                if audit_id in traffic.unanswered_deletes - traffic.deleted and response.status_code == 404:
                    continue  # the delete was done as the server died, before its answer went out
                if audit_id in traffic.deleted:
                    assert response.status_code == 404, audit_id  # an acknowledged delete stays done
                else:
                    assert response.status_code == 200, audit_id
                    assert without_timeline(response.json()) == as_read_back(body)
    finally:
        restarted.stop()

    rows = _stored_rows(database_url)
    stored = {row["id"] for row in rows}
    for row in rows:
        _assert_whole(row)
    assert set(traffic.created) - traffic.deleted - traffic.unanswered_deletes <= stored
    assert not stored & traffic.deleted
    unacknowledged = stored - set(traffic.created)  # committed, but the answer died with the server
    print(f"\n{sqlite_path(database_url) and 'SQLite' or 'PostgreSQL'}: {len(traffic.created)} creates and "
          f"{len(traffic.deleted)} deletes acknowledged over {ROUNDS} kills; {len(rows)} rows stored, all whole; "
          f"{len(unacknowledged)} committed without their answer")
    assert len(traffic.created) >= ROUNDS * ACKS_PER_ROUND and traffic.deleted
