"""Drawing a new record's charts in the background, so its report opens without drawing them.

A report page costs a few milliseconds to template and a few hundred to draw its charts, so the
charts are drawn once, after the record is stored, on one background thread, and kept in the store
(``app.store.charts``). The thread is separate from the compute pool on purpose: chart drawing must
never take a slot an audit request is waiting for, and it is the first work to give way. The queue of
records waiting to be drawn is bounded; past it a record is simply not drawn ahead, and its first
view draws (and keeps) the charts itself.

A view that arrives while its record is still waiting in the queue takes the work over (the queued
job is cancelled); one that arrives while the drawing runs waits for it rather than drawing twice.
"""

from __future__ import annotations

import logging
import threading
from concurrent.futures import CancelledError, Future, ThreadPoolExecutor
from concurrent.futures import TimeoutError as FutureTimeout
from typing import Any

from app.report.chart_cache import ChartShelf, prepared_charts
from app.report.chart_sets import ChartSet

log = logging.getLogger("trendaudit")

WAIT_FOR_RUNNING_SECONDS = 30.0  # a drawing under way normally ends in well under a second


class ChartDrawer:
    def __init__(self, shelf: ChartShelf, queue: int, enabled: bool = True) -> None:
        self.shelf = shelf
        self.queue = queue
        self.enabled = enabled and queue > 0
        self._executor = ThreadPoolExecutor(max_workers=1, thread_name_prefix="trendaudit-charts")
        self._pending: dict[str, Future] = {}
        self._lock = threading.Lock()
        self.skipped = 0  # records not drawn ahead because the queue was full

    def submit(self, record_id: str, document: dict[str, Any], charts: ChartSet) -> bool:
        """Queues the record's charts to be drawn and kept; False when drawing ahead is off or the queue is full."""
        if not self.enabled:
            return False
        with self._lock:
            if len(self._pending) >= self.queue:
                self.skipped += 1
                return False
            try:
                future = self._executor.submit(self._draw, record_id, document, charts)
            except RuntimeError:  # shut down: the server is stopping
                return False
            self._pending[record_id] = future
        future.add_done_callback(lambda _f: self._forget(record_id, future))
        return True

    def _draw(self, record_id: str, document: dict[str, Any], charts: ChartSet) -> None:
        try:
            prepared_charts(record_id, document, charts, self.shelf)
        except Exception:  # a chart that cannot be drawn will say so, clearly, when its report is viewed
            log.exception("drawing the charts of %s ahead of its first view failed", record_id)

    def _forget(self, record_id: str, future: Future) -> None:
        with self._lock:
            if self._pending.get(record_id) is future:
                del self._pending[record_id]

    def settle(self, record_id: str) -> None:
        """Before a view of ``record_id``: takes over a drawing still queued, or waits for one under way."""
        with self._lock:
            future = self._pending.get(record_id)
        if future is None or future.cancel():
            return
        try:
            future.result(timeout=WAIT_FOR_RUNNING_SECONDS)
        except (CancelledError, FutureTimeout):
            pass  # the view draws for itself

    def wait_idle(self, timeout: float = WAIT_FOR_RUNNING_SECONDS) -> None:
        """Waits until every queued drawing has ended (tests and benchmarks use it)."""
        with self._lock:
            futures = list(self._pending.values())
        for future in futures:
            try:
                future.result(timeout=timeout)
            except (CancelledError, FutureTimeout):
                pass

    def shutdown(self) -> None:
        # Queued drawings are dropped (a view draws them later); one under way is let finish so it never
        # writes to a database that is being closed.
        self._executor.shutdown(wait=True, cancel_futures=True)
