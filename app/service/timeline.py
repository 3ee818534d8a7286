"""The verdict timeline of a stored audit: computed in the compute pool with the audit, kept in its document.

A record stored before timelines existed gets its timeline computed (in the pool) the first time it is
asked for, and kept from then on.
"""

from __future__ import annotations

import asyncio
import dataclasses
from datetime import date
from typing import Any

from app.audit import AuditOptions, Claim
from app.audit.serialize import jsonable
from app.audit.timeline import audit_timeline
from app.errors import ClaimError, Location
from app.service.audits import AuditJob, compute_document
from app.service.payloads import series_from_payload
from app.store import AuditRepository

TIMELINE_KEY = "timeline"


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


def compute_audit_with_timeline(job: AuditJob) -> dict[str, Any]:
    """The audit's document with its timeline, computed in one pool task from the same inputs and seed."""
    document = compute_document(job)
    inputs = {**job.input_document, "options": {**job.input_document["options"], "seed": document.get("seed")}}
    return {**document, TIMELINE_KEY: timeline_document(inputs)}


async def record_timeline(audits: AuditRepository, pool, record_id: str, kind: str) -> dict[str, Any]:
    """The stored audit's timeline; computed in the pool and kept if the record predates timelines."""
    record = await asyncio.to_thread(audits.get, record_id, kind)
    kept = record.result_document.get(TIMELINE_KEY)
    if kept is not None:
        return kept
    document = await pool.run(timeline_document, record.input_document)
    await asyncio.to_thread(audits.update, {record.id: {TIMELINE_KEY: document}})
    return document
