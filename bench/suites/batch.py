"""Batches: 1,000 annual-series audits as one batch (100 with --quick), run by one worker and then by two.

On PostgreSQL (``TRENDAUDIT_TEST_DATABASE_URL``, a private schema) the web process only enqueues and
`trendaudit worker` processes run the items, as deployed; without it, the SQLite web process runs them on
``batch_workers`` threads. Figures: the wall time from the 202 to the last item with one worker and with two
(scaling), the throughput with two against the ceiling (the cores kept busy with nothing but audits: cores over
the mean single-audit compute time, measured in this process on a sample of the same items), and a desk audit's
latency (``POST /api/v1/audits``, answered in the web process) while the batch runs against idle.
"""

from __future__ import annotations

import os
import secrets
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from urllib.parse import quote

import httpx

from app.settings import PROJECT_ROOT, Settings
from bench import series
from bench.figures import Figure, at_least, at_most, context
from bench.suites.http import _free_port

SCALING_TARGET = 1.8  # our requirement: two workers finish a batch at least 1.8 times as fast as one
CEILING_TARGET = 0.85  # and keep the cores 85% as busy as audits alone could
DESK_TARGET = 2.0  # a desk audit while a batch runs takes at most twice its idle time
STARTUP_SECONDS = 60
SIMULATIONS = 500


def _items(count: int) -> list[dict]:
    """Annual series of 60 years (1965-2024) from the benchmarks' warming shape, each with its own noise."""
    items = []
    for k in range(count):
        data = series.annual(seed=1_000 + k)
        keep = data.time >= 1965
        items.append({"series": {"time": [int(t) for t in data.time[keep]],
                                 "value": [round(float(v), 4) for v in data.value[keep]], "label": f"bench {k}"},
                      "claim": {"start": 1998, "end": 2012, "kind": "pause"},
                      "options": {"simulations": SIMULATIONS, "noise": "ar1"}})
    return items


def _desk_payload() -> dict:
    data = series.annual()
    return {"title": "desk", "series": {"time": [int(t) for t in data.time], "value": data.value.tolist()},
            "claim": {"start": 1998, "end": 2012, "kind": "pause"}, "options": {"seed": 1}}


def _process(args: list[str], env: dict[str, str], log: Path) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, "-m", "app.cli", *args], cwd=PROJECT_ROOT, env=env,
                            stdout=open(log, "ab"), stderr=subprocess.STDOUT)


def _stop(process: subprocess.Popen) -> None:
    process.terminate()
    try:
        process.wait(20)
    except subprocess.TimeoutExpired:
        process.kill()
        process.wait()


class _Setup:
    """A web process and ``workers`` workers on a store of their own."""

    def __init__(self, directory: Path, workers: int, postgres: str | None) -> None:
        port = _free_port()
        self.url = f"http://127.0.0.1:{port}"
        env = {k: v for k, v in os.environ.items() if not k.startswith("TRENDAUDIT_")}
        env.update({"TRENDAUDIT_ANONYMOUS_RATE_LIMIT": "1000000/minute", "TRENDAUDIT_DRAW_CHARTS_AHEAD": "false",
                    "OPENBLAS_NUM_THREADS": "1"})
        self.schema = None
        if postgres:
            self.admin_url, self.schema = postgres, "ta_bench_" + secrets.token_hex(6)
            _admin(postgres, f'CREATE SCHEMA "{self.schema}"')
            separator = "&" if "?" in postgres else "?"
            env["TRENDAUDIT_DATABASE_URL"] = f"{postgres}{separator}options={quote(f'-csearch_path={self.schema}')}"
        else:
            env["TRENDAUDIT_DATABASE_URL"] = f"sqlite:///{directory / f'bench{workers}.sqlite3'}"
            env["TRENDAUDIT_BATCH_WORKERS"] = str(workers)
        self.processes = [_process(["serve", "--port", str(port)], env, directory / "web.log")]
        _wait_up(self.url, self.processes[0])
        if postgres:
            self.processes += [_process(["worker"], env, directory / f"worker{n}.log") for n in range(workers)]
            _wait_workers(env["TRENDAUDIT_DATABASE_URL"], workers)  # started and listening: their start-up
            # (imports, connecting) is not the batch's time

    def close(self) -> None:
        for process in self.processes:
            _stop(process)
        if self.schema:
            _admin(self.admin_url, f'DROP SCHEMA IF EXISTS "{self.schema}" CASCADE')


def _admin(url: str, statement: str) -> None:
    import sqlalchemy as sa

    engine = sa.create_engine(url)
    with engine.begin() as connection:
        connection.execute(sa.text(statement))
    engine.dispose()


def _wait_workers(url: str, workers: int) -> None:
    import sqlalchemy as sa

    engine = sa.create_engine(url)
    deadline = time.monotonic() + STARTUP_SECONDS
    try:
        while time.monotonic() < deadline:
            with engine.connect() as connection:
                if connection.execute(sa.text("SELECT COUNT(*) FROM procrastinate_workers")).scalar_one() >= workers:
                    return
            time.sleep(0.2)
    finally:
        engine.dispose()
    raise RuntimeError("the workers did not start")


def _wait_up(url: str, process: subprocess.Popen) -> None:
    deadline = time.monotonic() + STARTUP_SECONDS
    while time.monotonic() < deadline:
        if process.poll() is not None:
            raise RuntimeError(f"the server exited with {process.returncode}")
        try:
            if httpx.get(url + "/healthz", timeout=1).status_code == 200:
                return
        except httpx.HTTPError:
            time.sleep(0.2)
    raise RuntimeError("the server did not start")


def _desk_latency(client: httpx.Client, payload: dict, count: int) -> float:
    times = []
    for _ in range(count):
        started = time.perf_counter()
        client.post("/api/v1/audits", json=payload).raise_for_status()
        times.append(time.perf_counter() - started)
    return statistics.median(times)


def _run_batch(client: httpx.Client, items: list[dict], during=None) -> float:
    """Wall seconds from the 202 to the last item; ``during`` runs once the batch is going."""
    started = time.perf_counter()
    answer = client.post("/api/v1/batches", json={"items": items})
    answer.raise_for_status()
    location = answer.headers["location"]
    if during is not None:
        during()
    deadline = time.monotonic() + 1_800
    while not (state := client.get(location).json())["finished"]:
        if time.monotonic() > deadline:
            raise RuntimeError("the batch did not finish within 30 minutes")
        time.sleep(0.2)
    if state["counts"]["done"] != len(items):
        raise RuntimeError(f"the batch ended with {state['counts']}")
    return time.perf_counter() - started


def _mean_single_seconds(items: list[dict], sample: int) -> float:
    from app.api.audits import job_from_item
    from app.service.audits import compute_document

    settings = Settings()
    chosen = items[:: max(1, len(items) // sample)][:sample]
    compute_document(job_from_item(chosen[0], settings))  # imports and caches
    started = time.process_time()
    for item in chosen:
        compute_document(job_from_item(item, settings))
    return (time.process_time() - started) / len(chosen)


def run(quick: bool) -> list[Figure]:
    count, desk = (100, 2) if quick else (1_000, 5)
    items = _items(count)
    postgres = os.environ.get("TRENDAUDIT_BENCH_DATABASE_URL") or os.environ.get("TRENDAUDIT_TEST_DATABASE_URL")
    how = "PostgreSQL, worker processes" if postgres else "SQLite, web-process workers"
    walls, latency = {}, {}
    payload = _desk_payload()
    with tempfile.TemporaryDirectory(prefix="trendaudit-bench-") as directory:
        for workers in (1, 2):
            setup = _Setup(Path(directory), workers, postgres)
            try:
                with httpx.Client(base_url=setup.url, timeout=120) as client:
                    _run_batch(client, items[:4])  # the web process's first audits: imports, worker processes
                    walls[workers] = _run_batch(client, items)
                    if workers == 2:  # a desk audit idle, then while a second batch (half as long) runs
                        latency["idle"] = _desk_latency(client, payload, desk)
                        _run_batch(client, _items(count // 2 + 4)[4:], during=lambda: latency.setdefault(
                            "during", _desk_latency(client, payload, desk)))
            finally:
                setup.close()
    single = _mean_single_seconds(items, 20 if quick else 50)
    cores = os.cpu_count() or 1
    ceiling = cores / single  # items per second with every core auditing and nothing else
    throughput = count / walls[2]
    label = f"{count} annual audits, {how}"
    return [context(f"batch wall time, 1 worker ({label})", walls[1], "s"),
            context("batch wall time, 2 workers", walls[2], "s"),
            at_least("batch scaling, 2 workers over 1", walls[1] / walls[2], SCALING_TARGET, "x"),
            at_least("batch throughput / ceiling (cores / single-audit CPU time)", throughput / ceiling,
                     CEILING_TARGET, "x", throughput_per_s=round(throughput, 2), ceiling_per_s=round(ceiling, 2),
                     single_cpu_s=round(single, 4), cores=cores),
            context("desk audit latency, idle (median)", latency["idle"], "s"),
            at_most("desk audit latency during a batch / idle", latency["during"] / latency["idle"], DESK_TARGET,
                    "x", during_s=round(latency["during"], 3), idle_s=round(latency["idle"], 3))]
