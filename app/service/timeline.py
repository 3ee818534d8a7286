"""The verdict timeline of a stored audit: computed in the compute pool just after the audit is stored, and kept
in its document.

A record whose timeline is not kept (stored before timelines existed, or while the pool was full) gets it
computed in the pool the first time it is asked for, and kept from then on.
"""

from __future__ import annotations

import asyncio
import dataclasses
import logging
import weakref
from datetime import date
from typing import Any

from app.audit import AuditOptions, Claim
from app.audit.serialize import jsonable
from app.audit.timeline import audit_timeline
from app.errors import ClaimError, Location
from app.service.audits import AuditJob
from app.service.payloads import series_from_payload
from app.store import AuditRepository

TIMELINE_KEY = "timeline"
log = logging.getLogger("trendaudit")


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


def timeline_document(input_document: dict[str, Any]) -> dict[str, Any]:
    """The timeline of the audit these inputs describe (CPU-bound: run it in the compute pool)."""
    stored_claim = input_document["claim"]
    claim = Claim(start=float(stored_claim["start"]), end=float(stored_claim["end"]), kind=stored_claim["kind"])
    options = AuditOptions(**input_document["options"])
    timeline = audit_timeline(series_from_payload(input_document["series"]), claim, options,
                              made_on=stored_claim.get("made_on"))
    return jsonable(timeline)


def keep_timeline(audits: AuditRepository, record_id: str, input_document: dict[str, Any]) -> dict[str, Any]:
    """Computes the stored audit's timeline and keeps it in the audit's document (runs in the compute pool, so a
    request that stops waiting does not lose it)."""
    document = timeline_document(input_document)
    audits.update({record_id: {TIMELINE_KEY: document}})
    return document


class TimelineKeeper:
    """Timelines being computed in this process, so a reader waits for the one under way instead of starting
    another. The audit is answered first: a 60-cut timeline of a long monthly record takes far longer."""

    def __init__(self) -> None:
        self._running: dict[str, asyncio.Task] = {}

    def start(self, audits: AuditRepository, pool, record_id: str, input_document: dict[str, Any]) -> None:
        """After an audit is stored: its timeline is computed in the pool in the background."""
        if record_id not in self._running:
            task = asyncio.ensure_future(pool.run(keep_timeline, audits, record_id, input_document))
            self._running[record_id] = task
            task.add_done_callback(lambda done: self._finished(record_id, done))

    def _finished(self, record_id: str, task: asyncio.Task) -> None:
        self._running.pop(record_id, None)
        if not task.cancelled() and task.exception() is not None:
            log.warning("the timeline of %s was not kept: %s", record_id, task.exception())

    async def get(self, audits: AuditRepository, pool, record_id: str, kind: str) -> dict[str, Any]:
        """The stored audit's timeline: as kept, or once the computation under way ends, or computed now."""
        running = self._running.get(record_id)
        if running is not None:
            try:
                return await asyncio.shield(running)
            except Exception:  # noqa: BLE001 - it failed or was refused in the background: compute it here
                pass
        record = await asyncio.to_thread(audits.get, record_id, kind)
        kept = record.result_document.get(TIMELINE_KEY)
        if kept is not None:
            return kept
        return await pool.run(keep_timeline, audits, record.id, record.input_document)


KEEPERS: "weakref.WeakKeyDictionary[Any, TimelineKeeper]" = weakref.WeakKeyDictionary()


def timeline_keeper(pool) -> TimelineKeeper:
    """One keeper per compute pool (that is, per server process)."""
    keeper = KEEPERS.get(pool)
    if keeper is None:
        keeper = KEEPERS[pool] = TimelineKeeper()
    return keeper
