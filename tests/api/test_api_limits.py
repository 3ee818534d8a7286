"""Limits at the edge: 413 before parsing, 503 with Retry-After past the pool's bound, the time limit."""

from __future__ import annotations

import asyncio
import json
import threading
import time

import pytest

import app.service.creating as audits_module
from app.errors import LimitExceeded, ServiceBusy
from app.service.pool import ComputePool

from .conftest import assert_problem, audit_body


def test_declared_oversized_body_is_refused_before_parsing(make_client):
    client = make_client(max_upload_bytes=1000)
    # Not even valid JSON: were it parsed, the answer would be a 422, not a 413.
    response = client.post("/api/v1/audits", content=b"{" * 5000, headers={"Content-Type": "application/json"})
    body = assert_problem(response, 413, "body")
    assert "1,000 bytes" in body["detail"]


def test_streamed_oversized_body_without_length_is_refused(make_client):
    client = make_client(max_upload_bytes=1000)

    def chunks():
        for _ in range(10):
            yield b"{" * 300

    response = client.post("/api/v1/audits", content=chunks(), headers={"Content-Type": "application/json"})
    assert "content-length" not in {k.lower() for k in response.request.headers}
    assert_problem(response, 413, "body")


def test_oversized_multipart_upload_is_413(make_client):
    client = make_client(max_upload_bytes=2000)
    response = client.post("/api/v1/audits", data={"claim_start": "1998", "claim_end": "2010"},
                           files={"file": ("big.csv", "year,value\n" + "2000,1\n" * 1000, "text/csv")})
    assert_problem(response, 413, "body")


def test_body_under_the_limit_is_read_normally(make_client):
    body = json.dumps(audit_body()).encode()
    client = make_client(max_upload_bytes=len(body))
    assert client.post("/api/v1/audits", content=body, headers={"Content-Type": "application/json"}).status_code == 201


def test_trend_endpoint_is_limited_too(make_client):
    client = make_client(max_upload_bytes=100)
    response = client.post("/api/v1/trend", json={"series": {"time": list(range(100)), "value": list(range(100))}})
    assert_problem(response, 413, "body")


@pytest.fixture
def blocked_compute(monkeypatch):
    """Replaces the audit computation by one that waits for the test's signal, so the pool can be filled."""
    release = threading.Event()
    started = threading.Semaphore(0)
    real = audits_module.compute_document

    def waiting(job):
        started.release()
        release.wait(timeout=30)
        return real(job)

    monkeypatch.setattr(audits_module, "compute_document", waiting)
    yield started, release
    release.set()


def test_past_the_pool_bound_requests_get_503_with_retry_after(make_client, blocked_compute):
    started, release = blocked_compute
    client = make_client(compute_workers=1, compute_queue=0)
    results = {}

    def first_request():
        results["first"] = client.post("/api/v1/audits", json=audit_body())

    thread = threading.Thread(target=first_request)
    thread.start()
    try:
        assert started.acquire(timeout=30)  # the only slot is now taken
        busy = client.post("/api/v1/audits", json=audit_body())
        body = assert_problem(busy, 503, "request")
        assert int(busy.headers["retry-after"]) > 0
        assert busy.headers["connection"] == "close"  # the retry may reach another server process
        trend = client.post("/api/v1/trend", json={"series": {"time": list(range(1990, 2020)),
                                                             "value": [0.1 * i for i in range(30)]}})
        assert_problem(trend, 503)
    finally:
        release.set()
        thread.join(timeout=60)
    assert results["first"].status_code == 201
    # Once the slot is free again, work is accepted.
    assert client.post("/api/v1/audits", json=audit_body()).status_code == 201


DEADLINE_SECONDS = 30.0  # generous: a busy machine is slow, not wrong


async def until(condition, what: str) -> None:
    """Polls ``condition`` until it holds or the generous deadline passes."""
    give_up = time.monotonic() + DEADLINE_SECONDS
    while not condition():
        assert time.monotonic() < give_up, f"{what} never happened"
        await asyncio.sleep(0.01)


def test_pool_bound_counts_running_and_queued_work():
    pool = ComputePool(workers=1, queue=1, timeout_seconds=30)
    release = threading.Event()

    async def scenario():
        first = asyncio.ensure_future(pool.run(release.wait, 30))
        second = asyncio.ensure_future(pool.run(release.wait, 30))
        await until(lambda: pool.in_use == 2, "both tasks taking their slots")
        with pytest.raises(ServiceBusy):
            await pool.run(lambda: None)
        release.set()
        await asyncio.gather(first, second)
        assert pool.in_use == 0
        assert await pool.run(lambda: 42) == 42

    try:
        asyncio.run(scenario())
    finally:
        release.set()
        pool.shutdown()


def test_time_limit_ends_the_request_but_keeps_the_slot_until_the_work_ends():
    pool = ComputePool(workers=1, queue=0, timeout_seconds=0.1)
    release = threading.Event()

    async def scenario():
        with pytest.raises(LimitExceeded, match="longer than"):
            await pool.run(release.wait, 30)
        # The thread still runs, so the slot is still taken: the bound on concurrent work holds.
        assert pool.in_use == 1
        with pytest.raises(ServiceBusy):
            await pool.run(lambda: None)
        release.set()
        await until(lambda: pool.in_use == 0, "the slot coming back once the work ended")

    try:
        asyncio.run(scenario())
    finally:
        release.set()
        pool.shutdown()


def test_request_over_the_time_limit_is_a_clear_problem(make_client, blocked_compute):
    started, release = blocked_compute
    client = make_client(request_timeout_seconds=0.2)
    body = assert_problem(client.post("/api/v1/audits", json=audit_body()), 422, "options.simulations")
    assert "0.2 seconds" in body["detail"]
    release.set()
