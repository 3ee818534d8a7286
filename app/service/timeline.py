"""The verdict timeline of a stored audit, kept in its document: worked out in the background just after the audit
is stored, or in the compute pool when it is asked for before that.

Its cuts run on worker processes (``timeline_processes`` of them, shared by the whole server process and started
on first use). Threads do not serve here: most of a cut is the noise models' likelihood search, plain Python that
holds the interpreter lock. Measured on this 2-core machine, 60 cuts of the 140-point annual benchmark record: one
after another 3.6 s, two threads 4.5 s, two processes 1.8 s; of the 1,800-point monthly record 6.4, 5.8 and 3.8 s.
"""

from __future__ import annotations

import asyncio
import dataclasses
import logging
import multiprocessing
import threading
import weakref
from collections.abc import Callable
from concurrent.futures import Future, ProcessPoolExecutor, ThreadPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from datetime import date
from typing import Any

from app.audit import AuditOptions, Claim
from app.audit.serialize import jsonable
from app.audit.timeline import audit_timeline
from app.errors import ClaimError, Location
from app.service.audits import AuditJob
from app.service.payloads import series_from_payload
from app.service.pool import ComputePool
from app.store import AuditRepository

TIMELINE_KEY = "timeline"
log = logging.getLogger("trendaudit")
BACKGROUND_QUEUE = 64  # timelines waiting to be worked out in the background; past it, made on demand
IDLE_POLL_SECONDS = 1.0


def check_made_on(value: str | None, field: str = "claim.made_on") -> str | None:
    """The day the claim was made, as an ISO date ("YYYY-MM-DD"), or None."""
    if value is None or value == "":
        return None
    try:
        return date.fromisoformat(str(value).strip()).isoformat()
    except ValueError:
        raise ClaimError(f"'{str(value)[:40]}' is not a date", location=Location(field=field),
                         fix="Write the day the claim was made as YYYY-MM-DD, e.g. 2012-06-01") from None


def with_made_on(job: AuditJob, made_on: str | None) -> AuditJob:
    """The job with the day the claim was made kept in its stored claim."""
    made_on = check_made_on(made_on)
    if made_on is None:
        return job
    claim = {**job.input_document["claim"], "made_on": made_on}
    return dataclasses.replace(job, input_document={**job.input_document, "claim": claim})


_cut_processes: ProcessPoolExecutor | None = None
_cut_processes_lock = threading.Lock()


def cut_processes(count: int) -> ProcessPoolExecutor | None:
    """The worker processes timeline cuts run on, started on first use; None when ``count`` is below two."""
    global _cut_processes
    if count < 2:
        return None
    with _cut_processes_lock:
        if _cut_processes is None:
            # forkserver: a clean process forks the workers, never this threaded server; it loads the engine once.
            context = multiprocessing.get_context("forkserver")
            context.set_forkserver_preload(["app.audit.timeline"])
            _cut_processes = ProcessPoolExecutor(max_workers=count, mp_context=context)
        return _cut_processes


def _discard_cut_processes(broken: ProcessPoolExecutor) -> None:
    global _cut_processes
    with _cut_processes_lock:
        if _cut_processes is broken:
            _cut_processes = None
    broken.shutdown(wait=False, cancel_futures=True)


def timeline_document(input_document: dict[str, Any], before_each: Callable[[], None] | None = None,
                      processes: int = 0) -> dict[str, Any]:
    """The timeline of the audit these inputs describe (CPU-bound: run it in the compute pool), its cuts on
    ``processes`` worker processes (in this thread when fewer than two)."""
    stored_claim = input_document["claim"]
    claim = Claim(start=float(stored_claim["start"]), end=float(stored_claim["end"]), kind=stored_claim["kind"])
    options = AuditOptions(**input_document["options"])
    series = series_from_payload(input_document["series"])
    made_on = stored_claim.get("made_on")
    executor = cut_processes(processes)
    try:
        timeline = audit_timeline(series, claim, options, made_on=made_on, before_each=before_each,
                                  executor=executor, in_flight=processes)
    except BrokenProcessPool:  # a worker died (killed, out of memory): start afresh next time, finish this one here
        log.warning("a timeline worker process died; this timeline is worked out in the server process")
        _discard_cut_processes(executor)
        timeline = audit_timeline(series, claim, options, made_on=made_on, before_each=before_each)
    return jsonable(timeline)


def keep_timeline(audits: AuditRepository, record_id: str, input_document: dict[str, Any],
                  before_each: Callable[[], None] | None = None, processes: int = 0) -> dict[str, Any]:
    """Computes the stored audit's timeline and keeps it in the audit's document."""
    document = timeline_document(input_document, before_each, processes)
    audits.update({record_id: {TIMELINE_KEY: document}})
    return document


class TimelineKeeper:
    """Works out each new audit's timeline on one background thread, a cut at a time and only while the compute
    pool is idle, so it never slows an audit someone waits for (a 60-cut timeline of a long monthly record takes
    far longer than the audit). A reader of a timeline still being worked out waits for it; one never started
    (the queue was full, or the record predates timelines) is computed in the compute pool and kept."""

    def __init__(self, pool: ComputePool, processes: int = 0, queue: int = BACKGROUND_QUEUE) -> None:
        self.pool = pool
        self.processes = processes
        self.queue = queue
        self._executor = ThreadPoolExecutor(max_workers=1, thread_name_prefix="trendaudit-timeline")
        self._running: dict[str, Future] = {}
        self._lock = threading.Lock()

    def _give_way(self) -> None:
        while not self.pool.wait_idle(IDLE_POLL_SECONDS):
            if self.pool.closed:
                raise ServerStopping()
        if self.pool.closed:
            raise ServerStopping()

    def start(self, audits: AuditRepository, record_id: str, input_document: dict[str, Any]) -> bool:
        """After an audit is stored: queues its timeline; False when the queue is full (it is made on demand)."""
        with self._lock:
            if record_id in self._running or len(self._running) >= self.queue:
                return False
            try:
                future = self._executor.submit(keep_timeline, audits, record_id, input_document, self._give_way,
                                                self.processes)
            except RuntimeError:  # shut down: the server is stopping
                return False
            self._running[record_id] = future
        future.add_done_callback(lambda done: self._finished(record_id, done))
        return True

    def _finished(self, record_id: str, future: Future) -> None:
        with self._lock:
            self._running.pop(record_id, None)
        if not future.cancelled() and future.exception() is not None \
                and not isinstance(future.exception(), ServerStopping):
            log.warning("the timeline of %s was not kept: %s", record_id, future.exception())

    async def get(self, audits: AuditRepository, record_id: str, kind: str) -> dict[str, Any]:
        """The stored audit's timeline: as kept, or once the one under way ends, or computed in the pool now."""
        with self._lock:
            running = self._running.get(record_id)
        if running is not None:
            try:
                return await asyncio.wrap_future(running)
            except Exception:  # noqa: BLE001 - it failed in the background: compute it here, saying why if it fails
                pass
        record = await asyncio.to_thread(audits.get, record_id, kind)
        kept = record.result_document.get(TIMELINE_KEY)
        if kept is not None:
            return kept
        return await self.pool.run(keep_timeline, audits, record.id, record.input_document, None, self.processes)

    def shutdown(self) -> None:
        self._executor.shutdown(wait=False, cancel_futures=True)


class ServerStopping(Exception):
    """Raised between cuts when the server stops: the timeline is left to be made on demand."""


KEEPERS: "weakref.WeakKeyDictionary[ComputePool, TimelineKeeper]" = weakref.WeakKeyDictionary()
_KEEPERS_LOCK = threading.Lock()


def timeline_keeper(pool: ComputePool, processes: int = 0) -> TimelineKeeper:
    """One keeper per compute pool (that is, per server process); its cuts run on ``processes`` worker processes."""
    with _KEEPERS_LOCK:
        keeper = KEEPERS.get(pool)
        if keeper is None:
            keeper = KEEPERS[pool] = TimelineKeeper(pool, processes)
        return keeper
