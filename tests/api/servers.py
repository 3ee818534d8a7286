"""Real server processes for the scale-out and durability tests: `python -m app.cli serve` on a free port."""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
from contextlib import closing
from pathlib import Path

import httpx

from app.settings import PROJECT_ROOT

STARTUP_SECONDS = 60


def free_port() -> int:
    with closing(socket.socket(socket.AF_INET, socket.SOCK_STREAM)) as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


class Server:
    def __init__(self, database_url: str, log_path: Path, **settings: str) -> None:
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        env = {k: v for k, v in os.environ.items() if not k.startswith("TRENDAUDIT_")}
        env.update({"TRENDAUDIT_DATABASE_URL": database_url, "TRENDAUDIT_DEFAULT_SIMULATIONS": "200",
                    **{f"TRENDAUDIT_{k.upper()}": v for k, v in settings.items()}})
        self.log_path = log_path
        self._log = open(log_path, "ab")
        self.process = subprocess.Popen([sys.executable, "-m", "app.cli", "serve", "--port", str(self.port)],
                                        cwd=PROJECT_ROOT, env=env, stdout=self._log, stderr=subprocess.STDOUT)
        self._wait_until_up()

    def _wait_until_up(self) -> None:
        deadline = time.monotonic() + STARTUP_SECONDS
        while time.monotonic() < deadline:
            if self.process.poll() is not None:
                raise RuntimeError(f"server exited with {self.process.returncode}: {self.log()}")
            try:
                if httpx.get(self.url + "/healthz", timeout=1).status_code == 200:
                    return
            except httpx.HTTPError:
                pass
            time.sleep(0.1)
        self.stop()
        raise RuntimeError(f"server did not answer within {STARTUP_SECONDS} s: {self.log()}")

    def log(self) -> str:
        self._log.flush()
        return self.log_path.read_text(errors="replace")[-3000:]

    def kill(self) -> None:
        """SIGKILL: no shutdown hooks, no flushing; what was committed must survive this."""
        self.process.send_signal(signal.SIGKILL)
        self.process.wait(timeout=30)
        self._log.close()

    def stop(self) -> None:
        stop_process(self.process)
        if not self._log.closed:
            self._log.close()


def stop_process(process: subprocess.Popen) -> None:
    """SIGTERM, then SIGKILL if it has not ended within 15 s."""
    if process.poll() is None:
        process.terminate()
        try:
            process.wait(timeout=15)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait(timeout=15)
