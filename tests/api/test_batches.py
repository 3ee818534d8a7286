"""Batches as durable jobs: the API in process, then real processes killed mid-batch (SQLite: the web process
restarted; PostgreSQL: a web process and two `trendaudit worker` processes, one SIGKILLed). Every item must end
done exactly once, each result equal to the same audit run singly with the same seed."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time

import httpx
import numpy as np
import pytest
import sqlalchemy as sa
from fastapi.testclient import TestClient

from app.api.audits import job_from_item
from app.main import create_app
from app.service.audits import compute_document
from app.service.batches import key_numbers
from app.settings import PROJECT_ROOT, Settings
from .servers import Server, stop_process

DEADLINE_SECONDS = 120


def invented_items(count: int, seed: int = 20261205) -> list[dict]:
    """Annual 30-year invented series (a trend plus noise), a pause claimed over the last 12 years; few
    simulations, so an item takes a few hundredths of a second."""
    rng = np.random.default_rng(seed)
    years = list(range(1990, 2020))
    return [{"series": {"time": years, "value": [round(0.02 * i + float(e), 4)
                                                  for i, e in enumerate(rng.normal(0, 0.1, len(years)))],
                        "label": f"invented {k}"},
             "claim": {"start": 2008, "end": 2019, "kind": "pause"},
             "options": {"simulations": 100, "noise": "ar1"}} for k in range(count)]


def wait_for(condition, seconds: float = DEADLINE_SECONDS, what: str = "condition"):
    """Polls ``condition`` until it returns something true, or fails after ``seconds``."""
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        value = condition()
        if value:
            return value
        time.sleep(0.2)
    raise AssertionError(f"timed out after {seconds} s waiting for {what}")


def status(url: str, batch_id: str) -> dict:
    return httpx.get(f"{url}/api/v1/batches/{batch_id}", timeout=10).json()


def results(url: str, batch_id: str) -> list[dict]:
    answer = httpx.get(f"{url}/api/v1/batches/{batch_id}/results", params={"follow": "false"}, timeout=60)
    return [json.loads(line) for line in answer.text.splitlines() if line.strip()]


def check_exactly_once_and_equal_to_single(database_url: str, items: list[dict], lines: list[dict],
                                           compared: int = 30) -> None:
    assert sorted(line["item"] for line in lines) == list(range(len(items)))
    assert all(line["status"] == "done" for line in lines), [line for line in lines if line["status"] != "done"][:2]
    engine = sa.create_engine(database_url)
    with engine.connect() as connection:
        keys = connection.execute(sa.text("SELECT job_key, COUNT(*) FROM audits WHERE job_key IS NOT NULL "
                                          "GROUP BY job_key")).all()
        stored = connection.execute(sa.text("SELECT COUNT(*) FROM audits")).scalar_one()
    engine.dispose()
    assert len(keys) == len(items) == stored and all(n == 1 for _, n in keys)  # no duplicate stored audits
    settings = Settings()
    by_item = {line["item"]: line for line in lines}
    for position, item in enumerate(items):  # the seed of every item is the one a single audit derives
        assert by_item[position]["numbers"]["seed"] == job_from_item(item, settings).options.seed
    for position in range(0, len(items), max(1, len(items) // compared)):  # and the numbers are the same
        assert by_item[position]["numbers"] == key_numbers(compute_document(job_from_item(items[position], settings)))


# --- in process ---------------------------------------------------------------------------------------------------

@pytest.fixture
def client(settings):
    with TestClient(create_app(settings.model_copy(update={"batch_workers": 2}))) as test_client:
        yield test_client


def _finished(client, batch_id: str) -> dict:
    return wait_for(lambda: (lambda s: s if s["finished"] else None)(client.get(f"/api/v1/batches/{batch_id}").json()),
                    60, "the batch to finish")


def test_compact_forms_run_each_item_as_an_ordinary_audit_and_a_bad_item_fails_alone(client):
    items = invented_items(3)
    one_series = {"series": items[0]["series"], "options": items[0]["options"],
                  "claims": [{"start": 2008, "end": 2019}, {"start": 2004, "end": 2019, "kind": "slowdown"}]}
    many_series = {"series_list": [items[1]["series"], {"time": [2000, 2001], "value": [1, 2]}],
                   "claim": items[1]["claim"], "options": items[1]["options"]}
    for body, count in ((one_series, 2), (many_series, 2)):
        answer = client.post("/api/v1/batches", json=body)
        assert answer.status_code == 202 and answer.json()["items"] == count
        assert answer.headers["location"] == f"/api/v1/batches/{answer.json()['id']}"
        state = _finished(client, answer.json()["id"])
        lines = [json.loads(line) for line in client.get(answer.headers["location"] + "/results").text.splitlines()]
        assert len(lines) == count and state["counts"]["done"] + state["counts"]["failed"] == count
    assert [line["status"] for line in sorted(lines, key=lambda line: line["item"])] == ["done", "failed"]
    problem = next(line["problem"] for line in lines if line["status"] == "failed")
    assert problem["status"] == 422 and problem["where"] == {"field": "series.value"}
    done = next(line for line in lines if line["status"] == "done")
    stored = client.get(done["links"]["self"]).json()  # an ordinary audit, at its own permanent link
    assert stored["seed"] == done["numbers"]["seed"] and stored["verdict"]["code"] == done["verdict"]["code"]
    single = client.post("/api/v1/audits", json=items[1]).json()
    assert single["seed"] == stored["seed"] and single["window"]["slope"] == stored["window"]["slope"]


def test_limits_owner_token_cancel_delete_and_an_audit_asked_for_asynchronously(client, settings):
    too_many = {"series": invented_items(1)[0]["series"], "claims": [{"start": 2008, "end": 2019}] * 5_001}
    assert client.post("/api/v1/batches", json=too_many).status_code == 422
    assert client.post("/api/v1/batches", json={"items": []}).status_code == 422
    assert client.post("/api/v1/batches", json={"items": invented_items(1), "claim": {"start": 1, "end": 2}}
                       ).status_code == 422
    answer = client.post("/api/v1/batches", json={"items": invented_items(40)}).json()
    location = f"/api/v1/batches/{answer['id']}"
    assert client.post(location + "/cancel").status_code == 401
    assert client.post(location + "/cancel", headers={"X-Owner-Token": "wrong"}).status_code == 403
    cancelled = client.post(location + "/cancel", headers={"X-Owner-Token": answer["owner_token"]}).json()
    assert cancelled["cancelled"] and cancelled["counts"]["cancelled"] > 0
    _finished(client, answer["id"])
    lines = [json.loads(line) for line in client.get(location + "/results").text.splitlines()]
    assert len(lines) == 40 and {line["status"] for line in lines} <= {"done", "cancelled"}
    done_ids = [line["id"] for line in lines if line["status"] == "done"]
    assert client.delete(location, headers={"X-Owner-Token": answer["owner_token"]}).status_code == 204
    assert client.get(location).status_code == 404
    assert all(client.get(f"/api/v1/audits/{i}").status_code == 404 for i in done_ids)

    queued = client.post("/api/v1/audits", json=invented_items(1)[0], headers={"Prefer": "respond-async"})
    assert queued.status_code == 202 and queued.headers["preference-applied"] == "respond-async"
    job = wait_for(lambda: (lambda j: j if j["status"] == "done" else None)(client.get(queued.headers["location"]).json()),
                   60, "the job")
    assert client.get(job["audit"]["url"]).status_code == 200
    refused = client.post("/api/v1/audits", json={**invented_items(1)[0], "claim": {"start": 2030, "end": 2040}},
                          headers={"Prefer": "respond-async"})
    assert refused.status_code == 422  # what can be checked without computing is checked before the 202


def test_a_key_past_its_items_in_flight_is_refused(settings):
    limited = settings.model_copy(update={"max_items_in_flight_per_key": 5, "batch_workers": 1})
    with TestClient(create_app(limited)) as client:
        assert client.post("/api/v1/batches", json={"items": invented_items(4)}).status_code == 202
        refused = client.post("/api/v1/batches", json={"items": invented_items(4)})
        assert refused.status_code == 429 and refused.json()["type"] == "/problems/too-much-in-flight"


def test_a_small_batch_from_another_key_is_not_stuck_behind_a_large_one(settings):
    keys = ("first-key-0123456789", "second-key-0123456789")
    with TestClient(create_app(settings.model_copy(update={"api_keys": ",".join(keys), "batch_workers": 1}))) as client:
        large, small = ({"Authorization": f"Bearer {key}"} for key in keys)
        big = client.post("/api/v1/batches", json={"items": invented_items(300)}, headers=large).json()
        little = client.post("/api/v1/batches", json={"items": invented_items(3, seed=7)}, headers=small).json()
        _finished(client, little["id"])
        assert client.get(f"/api/v1/batches/{big['id']}").json()["counts"]["queued"] > 100
        client.post(f"/api/v1/batches/{big['id']}/cancel", headers={**large, "X-Owner-Token": big["owner_token"]})


# --- processes killed mid-batch -------------------------------------------------------------------------------------

def _submit(url: str, items: list[dict]) -> str:
    answer = httpx.post(f"{url}/api/v1/batches", json={"items": items}, timeout=60)
    assert answer.status_code == 202, answer.text
    return answer.json()["id"]


@pytest.mark.slow
def test_sqlite_web_process_killed_and_restarted_mid_batch(tmp_path):
    database_url = f"sqlite:///{tmp_path / 'batch.sqlite3'}"
    items = invented_items(200)
    settings = {"batch_workers": "2", "job_lease_seconds": "3", "draw_charts_ahead": "false"}
    server = Server(database_url, tmp_path / "web1.log", **settings)
    try:
        batch_id = _submit(server.url, items)
        wait_for(lambda: status(server.url, batch_id)["counts"]["done"] >= 20, what="20 items done")
        computing = children(server.process.pid)
        server.kill()
        # its compute processes end too, not left computing for no one
        wait_for(lambda: not any(os.path.exists(f"/proc/{pid}") for pid in computing), 15, "its processes to end")
    finally:
        server.stop()
    server = Server(database_url, tmp_path / "web2.log", **settings)
    try:
        wait_for(lambda: status(server.url, batch_id)["finished"], what="the batch to finish after the restart")
        lines = results(server.url, batch_id)
    finally:
        server.stop()
    check_exactly_once_and_equal_to_single(database_url, items, lines)


def children(pid: int) -> list[int]:
    """The processes ``pid`` started (Linux's /proc; none found elsewhere)."""
    found = []
    for entry in os.listdir("/proc") if os.path.isdir("/proc") else []:
        try:
            with open(f"/proc/{entry}/stat") as stat:
                if entry.isdigit() and int(stat.read().rsplit(")", 1)[1].split()[1]) == pid:
                    found.append(int(entry))
        except (OSError, ValueError, IndexError):
            continue
    return found


class Worker:
    def __init__(self, database_url: str, log_path, **settings: str) -> None:
        env = {k: v for k, v in os.environ.items() if not k.startswith("TRENDAUDIT_")}
        env.update({"TRENDAUDIT_DATABASE_URL": database_url,
                    **{f"TRENDAUDIT_{k.upper()}": v for k, v in settings.items()}})
        self._log = open(log_path, "ab")
        self.process = subprocess.Popen([sys.executable, "-m", "app.cli", "worker"], cwd=PROJECT_ROOT, env=env,
                                        stdout=self._log, stderr=subprocess.STDOUT)

    def kill(self) -> None:
        self.process.send_signal(signal.SIGKILL)
        self.process.wait(timeout=30)

    def stop(self) -> None:
        stop_process(self.process)
        self._log.close()


def running_on(database_url: str, pid: int) -> bool:
    engine = sa.create_engine(database_url)
    try:
        with engine.connect() as connection:
            return bool(connection.execute(sa.text("SELECT COUNT(*) FROM batch_items WHERE status = 'running' "
                                                   "AND claimed_by LIKE :who"), {"who": f"%-{pid}"}).scalar_one())
    finally:
        engine.dispose()


@pytest.mark.slow
@pytest.mark.postgres
def test_postgres_worker_killed_mid_batch(postgres_url, tmp_path):
    items = invented_items(200)
    settings = {"worker_heartbeat_seconds": "0.5", "worker_stalled_seconds": "2", "draw_charts_ahead": "false"}
    server = Server(postgres_url, tmp_path / "web.log", **settings)
    workers = []
    try:
        batch_id = _submit(server.url, items)  # the web process only enqueues: nothing runs yet
        assert status(server.url, batch_id)["counts"]["queued"] == 200
        workers = [Worker(postgres_url, tmp_path / f"worker{n}.log", **settings) for n in (1, 2)]
        wait_for(lambda: status(server.url, batch_id)["counts"]["done"] >= 30, what="30 items done")
        # killed while it runs an item (the item it was running is then retried by the other worker)
        wait_for(lambda: running_on(postgres_url, workers[0].process.pid), what="the first worker running an item")
        workers[0].kill()
        wait_for(lambda: status(server.url, batch_id)["finished"], what="the batch to finish with one worker")
        lines = results(server.url, batch_id)
    finally:
        for worker in workers:
            worker.stop()
        server.stop()
    check_exactly_once_and_equal_to_single(postgres_url, items, lines)


def test_the_command_line_runs_a_csv_batch_here_and_refuses_a_broken_json_lines_file(tmp_path):
    from app.cli import BATCH_CSV_COLUMNS, main

    item = invented_items(1)[0]
    rows = ["year,a,b"] + [f"{t},{v},{round(v * 2, 4)}" for t, v in zip(item["series"]["time"],
                                                                        item["series"]["value"])]
    (tmp_path / "two.csv").write_text("\n".join(rows) + "\n")
    out = tmp_path / "results.csv"
    assert main(["batch", str(tmp_path / "two.csv"), "--start", "2008", "--end", "2019", "--simulations", "100",
                 "--out", str(out)]) == 0
    lines = out.read_text().splitlines()
    assert lines[0].split(",") == list(BATCH_CSV_COLUMNS) and len(lines) == 3
    assert {line.split(",")[1] for line in lines[1:]} == {"done"}
    (tmp_path / "broken.jsonl").write_text(json.dumps(item) + "\n{not json\n")
    assert main(["batch", str(tmp_path / "broken.jsonl")]) == 2


def test_the_command_line_submits_to_a_server_and_writes_every_result(client, tmp_path, monkeypatch, capsys):
    from app.cli import main

    items = invented_items(3) + [{**invented_items(1)[0], "claim": {"start": 2030, "end": 2040}}]
    (tmp_path / "four.jsonl").write_text("".join(json.dumps(item) + "\n" for item in items))
    # the command's HTTP client, pointed at this test's app instead of a network address
    monkeypatch.setattr(httpx, "Client", lambda base_url, headers, timeout: client)
    assert main(["batch", str(tmp_path / "four.jsonl"), "--server", "http://testserver"]) == 0
    lines = [json.loads(line) for line in capsys.readouterr().out.splitlines()]
    assert sorted(line["item"] for line in lines) == [0, 1, 2, 3]
    assert [line["status"] for line in sorted(lines, key=lambda line: line["item"])] == ["done"] * 3 + ["failed"]
