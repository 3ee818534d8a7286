"""Durable jobs: running one batch item, and the two ways items reach a process that runs them.

    accepted item (kept in batch_items) ──┬─ SQLite:     LocalJobs, threads of the web process, leases in the store
                                          └─ PostgreSQL: a procrastinate job; `trendaudit worker` processes run it

Either way one ``ItemRunner.run`` does the work: the item's request is read as ``POST /api/v1/audits`` reads it,
computed, and stored with the item's id as its job key, which is unique in the store, so an item whose job runs
twice (a worker killed after storing, before saying so) is stored once and the second run returns the first's
audit. An input the audit cannot use fails the item with its problem document, never the batch; an unexpected
fault is retried, up to ``job_attempts`` runs.

On PostgreSQL the queue is procrastinate's (its own tables in the same database): no second server, no
broker, jobs deferred by a plain INSERT, workers anywhere that reach the database, and a dead worker's jobs
found by its missing heartbeat and retried (``retry_stalled``).
"""

from __future__ import annotations

import asyncio
import logging
import secrets
import socket
import threading
import time
from collections.abc import Callable
import multiprocessing
import os
from concurrent.futures import ProcessPoolExecutor, ThreadPoolExecutor
from typing import Any

from sqlalchemy.engine import make_url

from app.errors import RetryLater, TrendAuditError, problem_body, problem_for_error
from app.service.audits import AuditJob, compute_document, store_audit
from app.service.pool import ComputePool
from app.settings import Settings
from app.store import AuditRepository, BatchRepository
from app.store.batches import DONE, FAILED
from app.store.engine import is_sqlite
from app.store.migrations import ensure_queue_schema

log = logging.getLogger("trendaudit.jobs")
QUEUE = "trendaudit"
TASK = "trendaudit.run_item"
INTERACTIVE, BATCH = 10, 0  # priorities: one person's audit goes before any script's batch item
ItemReader = Callable[[dict[str, Any], Settings], AuditJob]


def job_path(item_id: str) -> str:
    return f"/api/v1/jobs/{item_id}"


class ItemRunner:
    """Runs one item to its end: stored once, or failed with a problem document."""

    def __init__(self, audits: AuditRepository, batches: BatchRepository, settings: Settings,
                 read_item: ItemReader, claimed_by: str | None = None,
                 compute: Callable[[AuditJob], dict[str, Any]] = compute_document) -> None:
        self.audits, self.batches, self.settings = audits, batches, settings
        self.read_item, self.claimed_by, self.compute = read_item, claimed_by, compute

    def run(self, item_id: str) -> str | None:
        """The item's status once run (None: gone, cancelled or finished before). Raises to be retried."""
        item = self.batches.start(item_id, self.claimed_by)
        if item is None:
            return None
        stored = self.audits.find_by_job_key(item.id)
        if stored is not None:  # stored by an earlier run that did not live to say so
            self.batches.finish(item.id, audit_id=stored.id)
            return DONE
        started = time.perf_counter()
        try:
            job = self.read_item(item.request, self.settings)
            document = self.compute(job)
            record, _ = store_audit(self.audits, job, document, job_key=item.id,
                                    owner_token_sha256=item.owner_token_sha256)
        except RetryLater:
            if item.attempts >= self.settings.job_attempts:
                self.batches.finish(item.id, problem=problem_for_error(_gave_up(item.attempts), job_path(item.id))[1])
                return FAILED
            raise
        except TrendAuditError as error:
            self.batches.finish(item.id, problem=problem_for_error(error, job_path(item.id))[1])
            return FAILED
        except Exception:
            log.exception("batch item %s failed on attempt %d", item.id, item.attempts)
            if item.attempts >= self.settings.job_attempts:
                self.batches.finish(item.id, problem=problem_body(
                    status=500, title="Internal error", slug="internal", instance=job_path(item.id),
                    detail=f"the audit failed unexpectedly {item.attempts} times; it was not stored"))
                return FAILED
            raise
        self.batches.finish(item.id, audit_id=record.id, seconds=time.perf_counter() - started)
        return DONE


def _gave_up(attempts: int) -> RetryLater:
    return RetryLater(f"the store could not keep the audit in {attempts} attempts",
                      fix="Send the item again in a new batch later")


class LocalJobs:
    """SQLite: the web process runs items, ``batch_workers`` at a time: each is read and stored by a thread of the
    web process and computed in a process of its own (a short annual audit is mostly Python, so threads would
    contend for the interpreter with each other and with the desk's audits; measured in bench/README.md). A batch
    item starts only while the interactive compute pool has a free worker, so a person's audit never waits behind a
    batch; an item is leased in the store, and the lease renewed while it runs, so after a restart (or in a second
    process) the items a dead process held are taken up again once their lease ends."""

    def __init__(self, runner: ItemRunner, batches: BatchRepository, pool: ComputePool, settings: Settings,
                 poll_seconds: float = 1.0) -> None:
        self.name = "web-" + secrets.token_hex(6)
        runner.claimed_by = self.name
        self.runner, self.batches, self.pool = runner, batches, pool
        self.workers = max(1, settings.batch_workers)
        self.lease = settings.job_lease_seconds
        self.poll_seconds = min(poll_seconds, self.lease / 3)
        self._executor = ThreadPoolExecutor(max_workers=self.workers, thread_name_prefix="trendaudit-batch")
        # Started with the first item ("spawn": a fresh interpreter, never a fork of this threaded process).
        self._processes = ProcessPoolExecutor(max_workers=self.workers, mp_context=multiprocessing.get_context("spawn"),
                                              initializer=_end_with_parent, initargs=(os.getpid(),))
        runner.compute = lambda job: self._processes.submit(compute_document, job).result()
        self._running: set[str] = set()
        self._lock = threading.Lock()
        self._wake = threading.Event()
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._loop, name="trendaudit-batch-dispatch", daemon=True)
        self._thread.start()

    def enqueue(self, connection, item_ids: list[str], priorities: list[int]) -> None:
        """Nothing to add: the kept items are this queue."""

    def wake(self) -> None:
        self._wake.set()  # new items are kept: look now rather than at the next poll

    def _loop(self) -> None:
        renewed = time.monotonic()
        while not self._stop.is_set():
            try:
                self._dispatch()
                if time.monotonic() - renewed > self.lease / 3:
                    with self._lock:
                        running = list(self._running)
                    self.batches.renew(self.name, running, self.lease)
                    renewed = time.monotonic()
            except Exception:  # a store fault: try again at the next poll
                log.exception("batch dispatch failed; trying again")
            self._wake.wait(self.poll_seconds)
            self._wake.clear()

    def _dispatch(self) -> None:
        with self._lock:
            free = self.workers - len(self._running)
        if free <= 0:
            return
        # Interactive jobs always; batch items only while a person's audit would still start at once.
        ids = self.batches.claim(self.name, free, self.lease,
                                 min_priority=None if self.pool.has_room() else INTERACTIVE)
        for item_id in ids:
            with self._lock:
                self._running.add(item_id)
            self._executor.submit(self._run, item_id)

    def _run(self, item_id: str) -> None:
        try:
            self.runner.run(item_id)
        except Exception:  # left running under its lease: taken up again when the lease ends
            log.exception("batch item %s will be retried", item_id)
        finally:
            with self._lock:
                self._running.discard(item_id)
            self._wake.set()

    def close(self) -> None:
        self._stop.set()
        self._wake.set()
        self._executor.shutdown(wait=False, cancel_futures=True)
        self._processes.shutdown(wait=False, cancel_futures=True)


def _end_with_parent(parent: int) -> None:
    """In a compute process: end when the web process that started it is gone (killed, it cannot say so)."""
    def watch() -> None:
        while os.getppid() == parent:
            time.sleep(1.0)
        os._exit(0)

    threading.Thread(target=watch, name="trendaudit-parent-watch", daemon=True).start()


def conninfo(settings: Settings) -> str:
    """The libpq address of the store (its search_path and other options kept), for the job queue."""
    return make_url(settings.database_url).set(drivername="postgresql").render_as_string(hide_password=False)


def queue_app(settings: Settings, *, worker: bool, run: Callable[[str], Any] | None = None):
    """The procrastinate app on the store's database, with the one task; ``run`` is what a worker does."""
    import procrastinate

    connector = (procrastinate.PsycopgConnector(conninfo=conninfo(settings)) if worker
                 else procrastinate.SyncPsycopgConnector(conninfo=conninfo(settings)))
    app = procrastinate.App(connector=connector)

    @app.task(name=TASK, queue=QUEUE,
              retry=procrastinate.RetryStrategy(max_attempts=settings.job_attempts, wait=1))
    def run_item(item_id: str) -> None:
        if run is None:
            raise RuntimeError("this process only enqueues")
        run(item_id)

    return app


def ensure_queue(engine, settings: Settings) -> None:
    """The job queue's tables, applied once per database (PostgreSQL only)."""
    from procrastinate.schema import SchemaManager

    ensure_queue_schema(engine, SchemaManager.get_schema(), "procrastinate_jobs")


class QueuedJobs:
    """PostgreSQL: the web process only enqueues, in the transaction that keeps the items; workers run them."""

    def __init__(self, engine, settings: Settings) -> None:
        ensure_queue(engine, settings)
        self.app = queue_app(settings, worker=False)

    def enqueue(self, connection, item_ids: list[str], priorities: list[int]) -> None:
        """One job per item, deferred on the store's own connection (``connection``, psycopg's, in its open
        transaction): the items and their jobs are committed together."""
        task = self.app.tasks[TASK]
        jobs = [task.configure(priority=priority).make_new_job(item_id=item_id)
                for item_id, priority in zip(item_ids, priorities)]
        for start in range(0, len(jobs), 1_000):
            self.app.job_manager.batch_defer_jobs(jobs[start:start + 1_000], connection=connection)

    def wake(self) -> None:
        """Workers hear of new jobs from the database itself (LISTEN/NOTIFY)."""

    def close(self) -> None:
        """Nothing held: jobs are deferred on the store's connections."""


def start_jobs(engine, audits: AuditRepository, batches: BatchRepository, pool: ComputePool, settings: Settings,
               read_item: ItemReader | None):
    """The web process's way of getting items run, by its store; None when it serves no batches."""
    if read_item is None:
        return None
    if is_sqlite(engine):
        return LocalJobs(ItemRunner(audits, batches, settings, read_item), batches, pool, settings)
    return QueuedJobs(engine, settings)


async def retry_stalled(app, settings: Settings) -> None:
    """Every heartbeat, the jobs of workers silent for ``worker_stalled_seconds`` (killed, cut off) go back in
    the queue; their items run again, and a stored one is found by its key."""
    while True:
        await asyncio.sleep(settings.worker_heartbeat_seconds)
        try:
            for job in await app.job_manager.get_stalled_jobs(seconds_since_heartbeat=settings.worker_stalled_seconds):
                log.warning("retrying job %s of a stalled worker", job.id)
                await app.job_manager.retry_job(job)
        except Exception:
            log.exception("looking for stalled jobs failed; trying again")


def worker_name() -> str:
    return f"worker-{socket.gethostname()[:40]}-{os.getpid()}"


def run_worker(settings: Settings, read_item: ItemReader, concurrency: int) -> None:
    """``trendaudit worker``: runs queued items until stopped (SIGINT or SIGTERM finish the running ones)."""
    from app.service.startup import open_store

    engine = open_store(settings)
    if is_sqlite(engine):
        raise TrendAuditError("workers need PostgreSQL; with SQLite the web process runs batch items itself")
    ensure_queue(engine, settings)
    runner = ItemRunner(AuditRepository(engine), BatchRepository(engine), settings, read_item,
                        claimed_by=worker_name())  # kept with each item it runs, for operators
    app = queue_app(settings, worker=True, run=runner.run)

    async def main() -> None:
        async with app.open_async():
            stalled = asyncio.create_task(retry_stalled(app, settings))
            try:
                await app.run_worker_async(queues=[QUEUE], concurrency=concurrency, wait=True,
                                           update_heartbeat_interval=settings.worker_heartbeat_seconds,
                                           stalled_worker_timeout=settings.worker_stalled_seconds,
                                           fetch_job_polling_interval=min(5.0, settings.worker_heartbeat_seconds),
                                           delete_jobs="successful")
            finally:
                stalled.cancel()

    try:
        asyncio.run(main())
    finally:
        engine.dispose()
