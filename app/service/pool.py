"""The bounded compute pool: CPU-bound audits run here, off the event loop.

Threads, not processes: numpy, scipy and the vectorised simulations release the GIL for most of an
audit, a thread needs no pickling of the series or re-import of scipy per task, and a worker can use
the settings and code already loaded. Measured on the project's shared 2-core machine (four audits of
the 900-point monthly sample at 2,000 simulations, five runs under other load): one after another
4.0-5.0 s, two threads 2.7-5.3 s, two processes 3.3-6.6 s. Processes showed no dependable gain, so
the simpler threads stay. ``compute_workers`` threads run at once and ``compute_queue``
more may wait; a request past that bound is refused at once with 503 and Retry-After instead of
piling up behind the others.

A thread cannot be killed, so the per-request time limit ends the *request* (the caller gets a clear
problem) while the computation runs to its end in the background. Its slot is released only when it
really finishes, so the bound on concurrent work holds even for requests that timed out.
"""

from __future__ import annotations

import asyncio
import threading
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from typing import TypeVar

from app.errors import LimitExceeded, Location, ServiceBusy

T = TypeVar("T")
RETRY_AFTER_SECONDS = 5


class ComputePool:
    def __init__(self, workers: int, queue: int, timeout_seconds: float) -> None:
        if workers < 1 or queue < 0:
            raise ValueError("the compute pool needs at least one worker and a queue of zero or more")
        self.capacity = workers + queue
        self.workers = workers
        self.timeout_seconds = timeout_seconds
        self._executor = ThreadPoolExecutor(max_workers=workers, thread_name_prefix="trendaudit-compute")
        self._slots = threading.BoundedSemaphore(self.capacity)
        self._lock = threading.Lock()
        self._in_use = 0
        self._idle = threading.Event()
        self._idle.set()
        self.closed = False  # set when the server stops: background work waiting for an idle pool gives up

    @property
    def in_use(self) -> int:
        """Tasks running or waiting, including timed-out ones still finishing."""
        return self._in_use

    def wait_idle(self, timeout: float) -> bool:
        """Waits up to ``timeout`` seconds for a moment with no task running or waiting; True if there is one.
        Background work (drawing charts ahead) asks this first, so it never slows an audit someone waits for."""
        return self._idle.wait(timeout)

    def has_room(self) -> bool:
        """Whether a task would start at once: queued batch items start only then, behind people's audits."""
        return self._in_use < self.workers

    def _take(self) -> bool:
        if not self._slots.acquire(blocking=False):
            return False
        with self._lock:
            self._in_use += 1
            self._idle.clear()
        return True

    def _give_back(self, _future=None) -> None:
        with self._lock:
            self._in_use -= 1
            if self._in_use == 0:
                self._idle.set()
        self._slots.release()

    async def run(self, function: Callable[..., T], *args) -> T:
        if not self._take():
            raise ServiceBusy(f"all {self.capacity} compute slots are taken", retry_after=RETRY_AFTER_SECONDS,
                              location=Location(field="request"),
                              fix=f"Send the same request again in {RETRY_AFTER_SECONDS} seconds")
        try:
            future = self._executor.submit(function, *args)
        except BaseException:
            self._give_back()
            raise
        future.add_done_callback(self._give_back)
        try:
            return await asyncio.wait_for(asyncio.wrap_future(future), self.timeout_seconds)
        except asyncio.TimeoutError:
            raise LimitExceeded(
                f"the computation took longer than this service's limit of {self.timeout_seconds:g} seconds",
                location=Location(field="options.simulations"),
                fix="Ask for fewer simulations, or audit a shorter or coarser (e.g. annual) series") from None

    def shutdown(self) -> None:
        self.closed = True
        self._executor.shutdown(wait=False, cancel_futures=True)
