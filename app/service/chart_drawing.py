"""Drawing a new record's charts in the background, so its report opens without drawing them.

A report page costs a few milliseconds to template and a few hundred to draw its charts, so the
charts are drawn once, after the record is stored, on one background thread, and kept in the store
(``app.store.charts``). That thread only draws while this process's compute pool is idle, and checks
again before each chart: under a stream of audit requests it waits, so it never takes time from an
audit somebody is waiting for (measured: drawing at once, whatever the load, cut the service's
throughput under 16 clients from about 10 to 6 audits a second). The queue of records waiting to be
drawn holds only their ids (the drawer reads each record from the store when its turn comes), so a
batch of hundreds of audits is drawn once the batch is over; past the bound a record is simply not
drawn ahead, and its first view draws (and keeps) the charts itself.

A view that arrives while its record is still queued takes the work over (the queued job is
cancelled); one that arrives while the drawing is under way stops it at the next chart, keeps what
was drawn, and draws only the rest.
"""

from __future__ import annotations

import logging
import threading
from collections.abc import Callable
from concurrent.futures import CancelledError, Future, ThreadPoolExecutor
from concurrent.futures import TimeoutError as FutureTimeout
from dataclasses import dataclass, field
from typing import Any

from app.errors import NotFound
from app.report.chart_cache import ChartShelf, complete_charts
from app.report.chart_sets import ChartSet

log = logging.getLogger("trendaudit")

WAIT_FOR_RUNNING_SECONDS = 30.0  # one chart takes well under a second, even on a loaded machine
IDLE_CHECK_SECONDS = 0.25  # how often a paused drawing looks again for an idle pool, or for a view taking over


def _always_idle(_timeout: float) -> bool:
    return True


@dataclass
class _Job:
    record_id: str
    charts: ChartSet
    taken_over: threading.Event = field(default_factory=threading.Event)


class ChartDrawer:
    def __init__(self, shelf: ChartShelf, read: Callable[[str], dict[str, Any]], queue: int, enabled: bool = True,
                 wait_idle: Callable[[float], bool] = _always_idle) -> None:
        """``read(record_id)`` gives the stored record's result document (raising NotFound once it is deleted);
        ``wait_idle(seconds)`` waits up to that long for the compute pool to be idle and says whether it is."""
        self.shelf = shelf
        self._read = read
        self.queue = queue
        self.enabled = enabled and queue > 0
        self._wait_idle = wait_idle
        self._executor = ThreadPoolExecutor(max_workers=1, thread_name_prefix="trendaudit-charts")
        self._pending: dict[str, tuple[_Job, Future]] = {}
        self._lock = threading.Lock()
        self.skipped = 0  # records not drawn ahead because the queue was full

    def submit(self, record_id: str, charts: ChartSet) -> bool:
        """Queues the stored record's charts to be drawn and kept; False when drawing ahead is off or the queue
        is full."""
        if not self.enabled:
            return False
        job = _Job(record_id, charts)
        with self._lock:
            if len(self._pending) >= self.queue:
                self.skipped += 1
                return False
            try:
                future = self._executor.submit(self._draw, job)
            except RuntimeError:  # shut down: the server is stopping
                return False
            self._pending[record_id] = (job, future)
        future.add_done_callback(lambda _f: self._forget(record_id, future))
        return True

    def _draw(self, job: _Job) -> None:
        try:
            if not self._when_idle(job):
                return
            # Charts a view already kept are not drawn again; the pool is asked again before each chart.
            complete_charts(job.record_id, self._read(job.record_id), job.charts, self.shelf,
                            may_draw=lambda: self._when_idle(job))
        except NotFound:
            pass  # deleted before its turn came: nothing to draw
        except Exception:  # a chart that cannot be drawn will say so, clearly, when its report is viewed
            log.exception("drawing the charts of %s ahead of its first view failed", job.record_id)

    def _when_idle(self, job: _Job) -> bool:
        """Waits for the compute pool to be idle; False if a view took the work over meanwhile."""
        while not job.taken_over.is_set():
            if self._wait_idle(IDLE_CHECK_SECONDS):
                return not job.taken_over.is_set()
        return False

    def _forget(self, record_id: str, future: Future) -> None:
        with self._lock:
            if record_id in self._pending and self._pending[record_id][1] is future:
                del self._pending[record_id]

    def settle(self, record_id: str) -> None:
        """Before a view of ``record_id``: cancels its drawing if still queued, else stops it at the next chart
        (what was drawn is kept) and returns once it has stopped."""
        with self._lock:
            job, future = self._pending.get(record_id, (None, None))
        if future is None or future.cancel():
            return
        job.taken_over.set()
        try:
            future.result(timeout=WAIT_FOR_RUNNING_SECONDS)
        except (CancelledError, FutureTimeout):
            pass  # the view draws for itself

    def wait_until_drawn(self, timeout: float = WAIT_FOR_RUNNING_SECONDS) -> None:
        """Waits until every queued drawing has ended (tests and benchmarks use it)."""
        with self._lock:
            futures = [future for _job, future in self._pending.values()]
        for future in futures:
            try:
                future.result(timeout=timeout)
            except (CancelledError, FutureTimeout):
                pass

    def shutdown(self) -> None:
        # Queued drawings are dropped (a view draws them later), one under way is told to stop at its next
        # chart, and the call returns once it has, so nothing writes to a database that is being closed.
        with self._lock:
            jobs = [job for job, _future in self._pending.values()]
        for job in jobs:
            job.taken_over.set()
        self._executor.shutdown(wait=True, cancel_futures=True)
