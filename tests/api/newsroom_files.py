"""Files as newsrooms receive them, made for the tests (invented data): a year-by-month spreadsheet with notes
above the table, a table of several series, and a local server on loopback that serves them from a link."""

from __future__ import annotations

import contextlib
import http.server
import math
import threading
from collections.abc import Iterator

from ingest.sheet_files import xlsx_bytes

MONTHS = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"]
XLSX_TYPE = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"


def level(year: int, month: int, cycle: float = 0.0) -> float:
    """An invented monthly value: a trend, a deterministic wiggle and, optionally, a calendar-month cycle."""
    k = 12 * (year - 1980) + month - 1
    return round(0.002 * k + 0.15 * math.sin(1.3 * k) + cycle * math.cos(2 * math.pi * (month - 1) / 12), 4)


def wide_rows(cycle: float = 0.0) -> list[list]:
    """Notes above a year-by-month table with an annual column, as agencies publish them."""
    rows = [["Invented monthly index of a made-up province"], ["Units: index points; provisional after 2019"], [],
            ["Year"] + MONTHS + ["Annual"]]
    for year in range(1980, 2021):
        values = [level(year, m, cycle) for m in range(1, 13)]
        rows.append([year] + values + [round(sum(values) / 12, 4)])
    return rows + [[], ["Compiled for the tests"]]


def long_rows() -> list[list]:
    return [["year", "rain", "sunshine", "wind"]] + [
        [year, round(0.01 * (year - 1960) + 0.2 * math.sin(1.1 * year), 4), round(5 + 0.3 * math.cos(0.7 * year), 4),
         round(2 + 0.01 * (year - 1960) + 0.1 * math.sin(2.1 * year), 4)] for year in range(1960, 2021)]


class DataHandler(http.server.BaseHTTPRequestHandler):
    """Serves ``files``; lists every path asked for in ``seen``; ``/held`` answers only once ``release`` is set
    (after setting ``arrived``), so a test can look at the service while a fetch waits."""

    files: dict[str, tuple[str, bytes]] = {}
    seen: list[str]
    arrived: threading.Event
    release: threading.Event

    def log_message(self, *args) -> None:  # keep the test output clean
        pass

    def do_GET(self) -> None:  # noqa: N802 (the standard library's name)
        self.seen.append(self.path)
        if self.path == "/held":
            self.arrived.set()
            self.release.wait(30)
            self.path = "/weather.csv"
        if self.path == "/moved":
            self.send_response(302)
            self.send_header("Location", "/index.xlsx")
            self.send_header("Content-Length", "0")
            self.end_headers()
            return
        kind, body = self.files.get(self.path, ("text/plain", b"no"))
        self.send_response(200 if self.path in self.files else 404)
        self.send_header("Content-Type", kind)
        self.send_header("Content-Length", str(len(body)))
        self.end_headers()
        self.wfile.write(body)


def newsroom_files() -> dict[str, tuple[str, bytes]]:
    return {"/weather.csv": ("text/csv", csv_of(long_rows()).encode()),
            "/index.xlsx": (XLSX_TYPE, xlsx_bytes({"I": wide_rows()}))}


def csv_of(rows: list[list]) -> str:
    return "\n".join(",".join(str(c) for c in row) for row in rows) + "\n"


class Served(str):
    """The server's address, with what its handler saw and the events of ``/held``."""

    seen: list[str]
    arrived: threading.Event
    release: threading.Event


@contextlib.contextmanager
def serving(files: dict[str, tuple[str, bytes]]) -> Iterator[Served]:
    """A local HTTP server on loopback serving ``files`` (path to content type and bytes); yields its address."""
    state = {"files": files, "seen": [], "arrived": threading.Event(), "release": threading.Event()}
    handler = type("Handler", (DataHandler,), state)
    httpd = http.server.ThreadingHTTPServer(("127.0.0.1", 0), handler)
    httpd.daemon_threads = True
    thread = threading.Thread(target=httpd.serve_forever, kwargs={"poll_interval": 0.05}, daemon=True)
    thread.start()
    address = Served(f"http://127.0.0.1:{httpd.server_address[1]}")
    address.seen, address.arrived, address.release = state["seen"], state["arrived"], state["release"]
    try:
        yield address
    finally:
        address.release.set()
        httpd.shutdown()
        httpd.server_close()


