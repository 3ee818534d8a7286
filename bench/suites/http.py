"""The service under load: 16 clients creating audits against uvicorn with 2 workers, on loopback.

Each client posts the annual audit (140 points, default 2,000 simulations) again and again until the
time is up. Back-pressure (503 with Retry-After, the bounded compute pool saying "busy") is counted
apart from errors: it is the service working as designed. A client told to wait waits (at most a
second, so a short run still measures something) before it asks again, as a polite client would.
"""

from __future__ import annotations

import os
import socket
import subprocess
import sys
import tempfile
import threading
import time
from contextlib import closing
from pathlib import Path

import httpx
import numpy as np

from app.settings import PROJECT_ROOT
from bench import series
from bench.figures import Figure, at_most, context

CLIENTS = 16
WORKERS = 2
P95_TARGET_S = 3.0
MAX_WAIT_S = 1.0
STARTUP_SECONDS = 60


def _free_port() -> int:
    with closing(socket.socket(socket.AF_INET, socket.SOCK_STREAM)) as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def _payload() -> dict:
    data = series.annual()
    return {"title": "benchmark", "series": {"time": [int(t) for t in data.time], "value": data.value.tolist(),
                                              "units": "°C"},
            "claim": {"start": 1998, "end": 2012, "kind": "pause"}, "options": {"seed": 1}}


class _Server:
    def __init__(self, directory: Path) -> None:
        self.port = _free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        env = {k: v for k, v in os.environ.items() if not k.startswith("TRENDAUDIT_")}
        env["TRENDAUDIT_DATABASE_URL"] = f"sqlite:///{directory / 'bench.sqlite3'}"
        # Every benchmark client is 127.0.0.1 without a key: one client, as the per-client allowance sees it.
        env["TRENDAUDIT_ANONYMOUS_RATE_LIMIT"] = "1000000/minute"
        self.log = open(directory / "server.log", "wb")
        self.process = subprocess.Popen([sys.executable, "-m", "app.cli", "serve", "--port", str(self.port),
                                         "--workers", str(WORKERS)], cwd=PROJECT_ROOT, env=env,
                                        stdout=self.log, stderr=subprocess.STDOUT)
        deadline = time.monotonic() + STARTUP_SECONDS
        while time.monotonic() < deadline:
            if self.process.poll() is not None:
                raise RuntimeError(f"the server exited with {self.process.returncode}")
            try:
                if httpx.get(self.url + "/healthz", timeout=1).status_code == 200:
                    return
            except httpx.HTTPError:
                time.sleep(0.2)
        self.stop()
        raise RuntimeError("the server did not start")

    def stop(self) -> None:
        self.process.terminate()
        try:
            self.process.wait(20)
        except subprocess.TimeoutExpired:
            self.process.kill()
            self.process.wait()
        self.log.close()


def _client(url: str, payload: dict, deadline: float, results: list, lock: threading.Lock) -> None:
    with httpx.Client(timeout=120) as client:
        while time.monotonic() < deadline:
            started = time.monotonic()
            wait = 0.0
            try:
                response = client.post(url + "/api/v1/audits", json=payload)
                status = response.status_code
                if status == 503:
                    wait = min(float(response.headers.get("Retry-After", 1)), MAX_WAIT_S)
            except httpx.HTTPError as error:
                status = type(error).__name__
            with lock:
                results.append((status, time.monotonic() - started))
            time.sleep(wait)


def run(quick: bool) -> list[Figure]:
    seconds = 5.0 if quick else 20.0
    payload = _payload()
    with tempfile.TemporaryDirectory(prefix="trendaudit-bench-") as directory:
        server = _Server(Path(directory))
        try:
            with httpx.Client(timeout=120) as warm:  # each worker imports and connects on its first audits
                for _ in range(2 * WORKERS):
                    warm.post(server.url + "/api/v1/audits", json=payload).raise_for_status()
            results: list = []
            lock = threading.Lock()
            started = time.monotonic()
            threads = [threading.Thread(target=_client, args=(server.url, payload, started + seconds, results, lock))
                       for _ in range(CLIENTS)]
            for thread in threads:
                thread.start()
            for thread in threads:
                thread.join()
            elapsed = time.monotonic() - started
        finally:
            server.stop()
    created = np.array([latency for status, latency in results if status == 201])
    busy = sum(1 for status, _ in results if status == 503)
    errors = [status for status, _ in results if status not in (201, 503)]
    p50 = float(np.percentile(created, 50)) if created.size else float("inf")
    p95 = float(np.percentile(created, 95)) if created.size else float("inf")
    label = f"{CLIENTS} clients, {WORKERS} workers, {seconds:g} s"
    return [context(f"HTTP throughput ({label})", created.size / elapsed, "req/s", created=int(created.size),
                    elapsed_s=round(elapsed, 2)),
            context("HTTP latency p50", p50, "s"),
            at_most("HTTP latency p95", p95, P95_TARGET_S, "s"),
            Figure("HTTP errors (other than 503 back-pressure)", float(len(errors)), "count", "= 0", not errors,
                   {"statuses": sorted(set(map(str, errors)))} if errors else {}),
            context("HTTP 503 back-pressure answers", float(busy), "count")]
