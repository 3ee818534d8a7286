"""What one server process holds: its settings, the database engine and repositories, the compute pool and the
chart drawer.

Built at start-up (the lifespan) and, should a test drive the app without running the lifespan,
on first use. Holds no audit state of its own, so any number of processes can share one database.
"""

from __future__ import annotations

import logging
import threading
from dataclasses import dataclass
from typing import Any

from sqlalchemy import Engine

from app.report.chart_cache import ChartShelf, prepared_charts
from app.report.chart_sets import ChartSet
from app.service.chart_drawing import ChartDrawer
from app.service.guessing import ClientAllowance, KeyGuessing
from app.service.pool import ComputePool
from app.service.startup import check_keys, open_store
from app.service.timeline import TimelineKeeper, timeline_keeper
from app.settings import Settings
from app.service.jobs import ItemReader, start_jobs
from app.store import AuditRepository, BatchRepository, ChartRepository

log = logging.getLogger("trendaudit")


@dataclass
class Runtime:
    settings: Settings
    engine: Engine
    audits: AuditRepository
    charts: ChartRepository
    pool: ComputePool
    drawer: ChartDrawer
    guessing: KeyGuessing
    anonymous: ClientAllowance
    batches: BatchRepository | None = None
    jobs: Any = None  # LocalJobs (SQLite) or QueuedJobs (PostgreSQL): how accepted items get run

    @property
    def timelines(self) -> TimelineKeeper:
        """Works out stored audits' verdict timelines (one keeper per compute pool)."""
        return timeline_keeper(self.pool, self.settings.timeline_processes)

    def draw_charts_ahead(self, record_id: str, charts: ChartSet) -> None:
        """After a record is stored: its charts are drawn in the background, so its report opens at once."""
        self.drawer.submit(record_id, charts)

    def draw_charts_now(self, record_id: str, document: dict[str, Any], charts: ChartSet) -> None:
        """Draws and keeps a new record's charts while someone waits for its page anyway (the desk)."""
        prepared_charts(record_id, document, charts, self.charts)

    def views_may_draw(self) -> bool:
        """Whether a page view may draw the charts not drawn yet: only while no audit is computing. Under load a
        report opens at once without them, and the browser fetches each from its address (drawn when asked for):
        drawn in the view, they took a median 12 s a page under 32 clients on two cores."""
        return self.pool.wait_idle(0)

    def chart_shelf(self, record_id: str) -> ChartShelf:
        """Where a view of ``record_id`` finds its kept charts, once any drawing of them in flight has ended."""
        self.drawer.settle(record_id)
        return self.charts

    def close(self) -> None:
        if self.jobs is not None:
            self.jobs.close()
        self.pool.shutdown()
        self.timelines.shutdown()
        self.drawer.shutdown()
        self.engine.dispose()


def start_runtime(settings: Settings, read_item: ItemReader | None = None) -> Runtime:
    """``read_item`` reads a stored batch item as its front end reads a request; without it no jobs run here."""
    check_keys(settings)
    engine = open_store(settings)
    if not settings.api_key_list:
        log.warning("No API keys set (TRENDAUDIT_API_KEYS): creating, listing and deleting audits is open to "
                    "anyone who can reach this server")
    audits, charts = AuditRepository(engine), ChartRepository(engine)
    pool = ComputePool(settings.compute_workers, settings.compute_queue, settings.request_timeout_seconds)
    drawer = ChartDrawer(charts, lambda record_id: audits.get(record_id).result_document, settings.chart_queue,
                         enabled=settings.draw_charts_ahead, wait_idle=pool.wait_idle)
    batches = BatchRepository(engine)
    return Runtime(settings=settings, engine=engine, audits=audits, charts=charts, pool=pool, drawer=drawer,
                   guessing=KeyGuessing(settings.key_guess_limit),
                   anonymous=ClientAllowance(settings.anonymous_rate_limit, "requests without a key"),
                   batches=batches, jobs=start_jobs(engine, audits, batches, pool, settings, read_item))


class RuntimeHolder:
    """Starts the runtime once per app, however many requests arrive together."""

    def __init__(self, settings: Settings, read_item: ItemReader | None = None) -> None:
        self.settings = settings
        self.read_item = read_item
        self._runtime: Runtime | None = None
        self._lock = threading.Lock()

    def get(self) -> Runtime:
        if self._runtime is None:
            with self._lock:
                if self._runtime is None:
                    self._runtime = start_runtime(self.settings, self.read_item)
        return self._runtime

    def close(self) -> None:
        with self._lock:
            if self._runtime is not None:
                self._runtime.close()
                self._runtime = None
