"""The charts repository: each stored record's drawn charts, kept beside it.

Drawing a report's charts costs far more than rendering its page, and a stored record never
changes, so the charts are drawn once (in the background after the record is stored, or on the
first view) and kept here as labelled SVG text, one row per chart. Rows name the drawing code that
made them (``renderer``); a reader asks for its own and gets nothing from another, so a new release
draws its charts again instead of showing an old style. This is a cache of what the record already
holds: losing a row only costs a redraw, so a write that cannot be made (the record was deleted
while its charts were drawn, or another process kept the same charts first) is dropped quietly.
"""

from __future__ import annotations

import logging
from collections.abc import Mapping

import sqlalchemy as sa
from sqlalchemy import Engine
from sqlalchemy.exc import IntegrityError

from app.store.engine import write_options
from app.store.faults import store_faults

log = logging.getLogger("trendaudit.store")

charts_table = sa.table(
    "charts", sa.column("record_id", sa.String), sa.column("name", sa.String), sa.column("renderer", sa.String),
    sa.column("svg", sa.Text),
)


class ChartRepository:
    def __init__(self, engine: Engine) -> None:
        self.engine = engine

    @store_faults
    def load(self, record_id: str, renderer: str) -> dict[str, str]:
        """The record's charts drawn by ``renderer``, by name (empty if none are kept)."""
        t = charts_table
        query = sa.select(t.c.name, t.c.svg).where((t.c.record_id == record_id) & (t.c.renderer == renderer))
        with self.engine.connect() as connection:
            return {row.name: row.svg for row in connection.execute(query)}

    @store_faults
    def keep(self, record_id: str, renderer: str, charts: Mapping[str, str]) -> None:
        """Replaces the record's kept charts with ``charts`` in one transaction."""
        t = charts_table
        rows = [{"record_id": record_id, "name": name, "renderer": renderer, "svg": svg} for name, svg in charts.items()]
        try:
            with self.engine.connect().execution_options(**write_options(self.engine)) as connection:
                with connection.begin():
                    connection.execute(t.delete().where(t.c.record_id == record_id))
                    if rows:
                        connection.execute(t.insert(), rows)
        except IntegrityError:
            # The record is gone, or a concurrent writer kept its charts a moment earlier: nothing is lost.
            log.debug("charts for %s not kept: the record was deleted or its charts were kept meanwhile", record_id)

    @store_faults
    def count(self, record_id: str) -> int:
        t = charts_table
        with self.engine.connect() as connection:
            return int(connection.execute(sa.select(sa.func.count()).where(t.c.record_id == record_id)).scalar_one())
