"""Batches and their items: the durable record of every job, written before a batch is accepted.

An item's status moves ``queued`` -> ``running`` -> ``done`` (its audit stored) or ``failed`` (its problem
stored); ``cancelled`` when its batch was cancelled first. Which process runs it is the job queue's business
on PostgreSQL (the queue library keeps its own jobs); on SQLite the web process claims items here with a lease
(``claim``), so items of a process that died are taken up again once their lease ends.
"""

from __future__ import annotations

import hmac
import secrets
from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime, timedelta, timezone
from typing import Any

import sqlalchemy as sa
from sqlalchemy import Engine

from app.errors import AccessDenied, Location, NotFound
from app.store.audits import OWNER_TOKEN_BYTES, _utc, audits_table, new_audit_id, token_digest
from app.store.engine import write_options
from app.store.faults import store_faults

QUEUED, RUNNING, DONE, FAILED, CANCELLED = "queued", "running", "done", "failed", "cancelled"
STATUSES = (QUEUED, RUNNING, DONE, FAILED, CANCELLED)
FINISHED = (DONE, FAILED, CANCELLED)
UNFINISHED = (QUEUED, RUNNING)

batches_table = sa.table(
    "batches", sa.column("id", sa.String), sa.column("created_at", sa.DateTime(timezone=True)),
    sa.column("owner_token_sha256", sa.String), sa.column("requester", sa.String),
    sa.column("item_count", sa.Integer), sa.column("cancelled", sa.Boolean),
)
items_table = sa.table(
    "batch_items", sa.column("id", sa.String), sa.column("batch_id", sa.String), sa.column("position", sa.Integer),
    sa.column("priority", sa.Integer), sa.column("request", sa.JSON), sa.column("status", sa.String),
    sa.column("attempts", sa.Integer), sa.column("claimed_by", sa.String),
    sa.column("lease_until", sa.DateTime(timezone=True)), sa.column("started_at", sa.DateTime(timezone=True)),
    sa.column("finished_at", sa.DateTime(timezone=True)), sa.column("audit_id", sa.String),
    sa.column("problem", sa.JSON), sa.column("seconds", sa.Float),
)


@dataclass(frozen=True)
class BatchCounts:
    batch_id: str
    created_at: datetime
    item_count: int
    cancelled: bool
    counts: dict[str, int]  # per status
    mean_seconds: float | None  # compute time per finished item


@dataclass(frozen=True)
class Item:
    id: str
    batch_id: str
    position: int
    request: dict[str, Any]
    status: str
    attempts: int
    owner_token_sha256: str
    audit_id: str | None = None
    problem: dict[str, Any] | None = None


@dataclass(frozen=True)
class Finished:
    id: str
    position: int
    status: str
    audit_id: str | None
    problem: dict[str, Any] | None
    finished_at: datetime
    summary: dict[str, Any] | None  # the stored audit's summary (its verdict), when done


def _now() -> datetime:
    return datetime.now(timezone.utc)


class BatchRepository:
    def __init__(self, engine: Engine) -> None:
        self.engine = engine

    def _write(self):
        return self.engine.connect().execution_options(**write_options(self.engine))

    @store_faults
    def create(self, requests: list[dict[str, Any]], *, requester: str, priorities: list[int],
               enqueue: Callable[[Any, list[str], list[int]], None] | None = None) -> tuple[str, list[str], str]:
        """Keeps a batch and all its items (each with its priority) in one transaction: (batch id, item ids in
        order, owner token). ``enqueue`` is called with the driver's connection inside that transaction (a job
        queue in the same database puts its jobs in with the items, or neither is kept)."""
        owner_token = secrets.token_urlsafe(OWNER_TOKEN_BYTES)
        batch_id, now = new_audit_id(), _now()
        item_ids = [new_audit_id() for _ in requests]
        with self._write() as connection, connection.begin():
            connection.execute(batches_table.insert().values(
                id=batch_id, created_at=now, owner_token_sha256=token_digest(owner_token), requester=requester,
                item_count=len(requests), cancelled=False))
            connection.execute(items_table.insert(), [
                {"id": item_id, "batch_id": batch_id, "position": position, "priority": priority,
                 "request": request, "status": QUEUED, "attempts": 0}
                for position, (item_id, request, priority) in enumerate(zip(item_ids, requests, priorities))])
            if enqueue is not None:
                enqueue(connection.connection.dbapi_connection, item_ids, priorities)
        return batch_id, item_ids, owner_token

    @store_faults
    def in_flight(self, requester: str) -> int:
        """Items queued or running for batches this requester sent."""
        i, b = items_table, batches_table
        query = (sa.select(sa.func.count()).select_from(i.join(b, b.c.id == i.c.batch_id))
                 .where(b.c.requester == requester, i.c.status.in_(UNFINISHED)))
        with self.engine.connect() as connection:
            return int(connection.execute(query).scalar_one())

    @store_faults
    def counts(self, batch_id: str) -> BatchCounts:
        b, i = batches_table, items_table
        with self.engine.connect() as connection:
            batch = connection.execute(sa.select(b.c.created_at, b.c.item_count, b.c.cancelled)
                                       .where(b.c.id == batch_id)).mappings().first()
            if batch is None:
                raise _not_found(batch_id)
            rows = connection.execute(sa.select(i.c.status, sa.func.count(), sa.func.avg(i.c.seconds))
                                      .where(i.c.batch_id == batch_id).group_by(i.c.status)).all()
        counts = {status: 0 for status in STATUSES}
        counts.update({status: int(n) for status, n, _ in rows})
        done_mean = [float(mean) for status, _, mean in rows if status == DONE and mean is not None]
        return BatchCounts(batch_id=batch_id, created_at=_utc(batch["created_at"]), item_count=batch["item_count"],
                           cancelled=bool(batch["cancelled"]), counts=counts,
                           mean_seconds=done_mean[0] if done_mean else None)

    @store_faults
    def item(self, item_id: str) -> Item | None:
        i, b = items_table, batches_table
        query = (sa.select(i.c.id, i.c.batch_id, i.c.position, i.c.request, i.c.status, i.c.attempts,
                           b.c.owner_token_sha256, i.c.audit_id, i.c.problem).select_from(i.join(b, b.c.id == i.c.batch_id))
                 .where(i.c.id == item_id))
        with self.engine.connect() as connection:
            row = connection.execute(query).mappings().first()
        return None if row is None else Item(**row)

    @store_faults
    def start(self, item_id: str, claimed_by: str | None = None) -> Item | None:
        """Marks an item running (one more attempt); None when it is gone or already finished."""
        i = items_table
        with self._write() as connection, connection.begin():
            changed = connection.execute(
                i.update().where(i.c.id == item_id, i.c.status.in_(UNFINISHED))
                .values(status=RUNNING, attempts=i.c.attempts + 1, started_at=_now(),
                        **({"claimed_by": claimed_by} if claimed_by else {}))).rowcount
        return self.item(item_id) if changed else None

    @store_faults
    def finish(self, item_id: str, *, audit_id: str | None = None, problem: dict[str, Any] | None = None,
               seconds: float | None = None) -> None:
        """Done with its audit, or failed with its problem; an item finished already is left as it is."""
        i = items_table
        with self._write() as connection, connection.begin():
            connection.execute(
                i.update().where(i.c.id == item_id, i.c.status.in_(UNFINISHED))
                .values(status=DONE if audit_id else FAILED, audit_id=audit_id, problem=problem,
                        finished_at=_now(), seconds=seconds, lease_until=None))

    @store_faults
    def claim(self, claimed_by: str, limit: int, lease_seconds: float, min_priority: int | None = None) -> list[str]:
        """SQLite's queue: takes up to ``limit`` items, queued or running under a lease that ended (a process
        that died), highest priority first, and leases them to ``claimed_by``."""
        i, now = items_table, _now()
        free = (i.c.status == QUEUED) | ((i.c.status == RUNNING) & (i.c.lease_until < now))
        query = sa.select(i.c.id).where(free)
        if min_priority is not None:
            query = query.where(i.c.priority >= min_priority)
        query = query.order_by(i.c.priority.desc(), i.c.position, i.c.batch_id).limit(limit)
        with self._write() as connection, connection.begin():
            ids = list(connection.execute(query).scalars())
            if ids:
                connection.execute(i.update().where(i.c.id.in_(ids)).values(
                    status=RUNNING, claimed_by=claimed_by, lease_until=now + timedelta(seconds=lease_seconds)))
        return ids

    @store_faults
    def renew(self, claimed_by: str, item_ids: list[str], lease_seconds: float) -> None:
        i = items_table
        if not item_ids:
            return
        with self._write() as connection, connection.begin():
            connection.execute(i.update().where(i.c.id.in_(item_ids), i.c.claimed_by == claimed_by,
                                                i.c.status == RUNNING)
                               .values(lease_until=_now() + timedelta(seconds=lease_seconds)))

    @store_faults
    def finished(self, batch_id: str, since: datetime | None, limit: int = 500) -> list[Finished]:
        """Finished items in the order they finished, from ``since`` on (inclusive)."""
        i, a = items_table, audits_table
        query = (sa.select(i.c.id, i.c.position, i.c.status, i.c.audit_id, i.c.problem, i.c.finished_at, a.c.summary)
                 .select_from(i.outerjoin(a, a.c.id == i.c.audit_id))
                 .where(i.c.batch_id == batch_id, i.c.status.in_(FINISHED), i.c.finished_at.is_not(None)))
        if since is not None:
            query = query.where(i.c.finished_at >= since)
        query = query.order_by(i.c.finished_at, i.c.position).limit(limit)
        with self.engine.connect() as connection:
            rows = connection.execute(query).mappings().all()
        return [Finished(**{**row, "finished_at": _utc(row["finished_at"])}) for row in rows]

    @store_faults
    def cancel(self, batch_id: str, owner_token: str | None) -> int:
        """Cancels what has not started; returns how many items were cancelled."""
        i, b = items_table, batches_table
        with self._write() as connection, connection.begin():
            self._check_owner(connection, batch_id, owner_token)
            connection.execute(b.update().where(b.c.id == batch_id).values(cancelled=True))
            return connection.execute(i.update().where(i.c.batch_id == batch_id, i.c.status == QUEUED)
                                      .values(status=CANCELLED, finished_at=_now())).rowcount

    @store_faults
    def delete(self, batch_id: str, owner_token: str | None) -> list[str]:
        """Deletes the batch, its items and the audits they stored; returns the deleted audits' ids."""
        i, b, a = items_table, batches_table, audits_table
        with self._write() as connection, connection.begin():
            self._check_owner(connection, batch_id, owner_token)
            audit_ids = [x for x in connection.execute(sa.select(i.c.audit_id).where(i.c.batch_id == batch_id))
                         .scalars() if x]
            for start in range(0, len(audit_ids), 500):
                connection.execute(a.delete().where(a.c.id.in_(audit_ids[start:start + 500])))
            connection.execute(i.delete().where(i.c.batch_id == batch_id))
            connection.execute(b.delete().where(b.c.id == batch_id))
        return audit_ids

    def _check_owner(self, connection, batch_id: str, owner_token: str | None) -> None:
        b = batches_table
        where = Location(field="X-Owner-Token")
        stored = connection.execute(sa.select(b.c.owner_token_sha256).where(b.c.id == batch_id)
                                    .with_for_update()).scalar()
        if stored is None:
            raise _not_found(batch_id)
        if not owner_token:
            raise AccessDenied("changing a batch needs its owner token", location=where,
                               fix="Send the owner_token you received when the batch was created in the "
                                   "X-Owner-Token header")
        if not hmac.compare_digest(stored.encode(), token_digest(owner_token).encode()):
            raise AccessDenied("the owner token does not match this batch", missing_credentials=False,
                               location=where, fix="Send the owner_token returned when this batch was created")


def _not_found(batch_id: str) -> NotFound:
    shown = batch_id if len(batch_id) <= 64 else batch_id[:64] + "..."
    return NotFound(f"no batch or job with id '{shown}'", location=Location(field="id"),
                    fix="Check the link; a deleted batch is gone for good")
