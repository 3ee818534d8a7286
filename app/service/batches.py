"""Batches of audits: accept (every item kept as a durable job before the answer), progress, results in the order
they finished, cancel, delete; and one audit asked for asynchronously, which is a batch of one run first.

Items are requests as ``POST /api/v1/audits`` takes them (already checked against its schema by the front end);
each becomes an ordinary stored audit with its own permanent link, its seed derived from its inputs as any
audit's is. How items get run is ``app.service.jobs``'s business.
"""

from __future__ import annotations

import hashlib
import json
import time
from collections.abc import Iterator
from dataclasses import dataclass
from datetime import datetime, timedelta, timezone
from typing import Any

from app.errors import LimitExceeded, Location, NotFound, TooMuchInFlight
from app.service.jobs import BATCH, INTERACTIVE, job_path
from app.service.records import AUDITS, utc_text
from app.service.runtime import Runtime
from app.store.batches import CANCELLED, DONE, FAILED, QUEUED, RUNNING, UNFINISHED, Finished

BATCHES_PATH = "/api/v1/batches"
# Fairness between keys: a key's items past this many in flight queue one priority step lower each, so a small
# batch from one key is not stuck behind the whole of another key's large one (highest priority runs first).
FAIR_SHARE_ITEMS = 100
POLL_SECONDS = 0.5
# Items finishing together may commit out of their finish times' order: a stream re-reads this far back.
REREAD = timedelta(seconds=60)


@dataclass(frozen=True)
class Accepted:
    batch_id: str
    item_ids: list[str]
    owner_token: str


def requester(key: str | None, client: str) -> str:
    """Who a batch counts against for the in-flight limit: the API key, or the client when no key is used;
    kept only as a digest."""
    return hashlib.sha256((f"key:{key}" if key else f"client:{client}").encode()).hexdigest()


def check_item_count(count: int, settings_limit: int, field: str = "items") -> None:
    if count < 1:
        raise LimitExceeded("the batch holds no items", location=Location(field=field),
                            fix="Send at least one audit request")
    if count > settings_limit:
        raise LimitExceeded(f"the batch holds {count:,} items; the limit is {settings_limit:,}",
                            location=Location(field=field), fix=f"Split it into batches of {settings_limit:,} or fewer")


def accept(runtime: Runtime, requests: list[dict[str, Any]], who: str, *, interactive: bool = False) -> Accepted:
    """Keeps the items (durable) and hands them to the job queue; refuses past the key's in-flight limit."""
    settings = runtime.settings
    check_item_count(len(requests), settings.max_batch_items)
    if runtime.jobs is None:
        raise NotFound("this process runs no jobs", location=Location(field="request"))
    runtime.audits.check_writable()
    in_flight = runtime.batches.in_flight(who)
    if in_flight + len(requests) > settings.max_items_in_flight_per_key:
        raise TooMuchInFlight(
            f"{in_flight:,} items of yours are queued or running; {len(requests):,} more would pass the limit of "
            f"{settings.max_items_in_flight_per_key:,}", retry_after=60, location=Location(field="items"),
            fix="Wait for your earlier batches to finish, or send fewer items")
    priorities = [INTERACTIVE if interactive else BATCH - (in_flight + position) // FAIR_SHARE_ITEMS
                  for position in range(len(requests))]
    batch_id, item_ids, owner_token = runtime.batches.create(requests, requester=who, priorities=priorities,
                                                             enqueue=runtime.jobs.enqueue)
    runtime.jobs.wake()
    return Accepted(batch_id, item_ids, owner_token)


def batch_links(batch_id: str, base: str) -> dict[str, str]:
    return {"self": f"{base}{BATCHES_PATH}/{batch_id}", "results": f"{base}{BATCHES_PATH}/{batch_id}/results"}


def batch_status(runtime: Runtime, batch_id: str) -> dict[str, Any]:
    """Counts per status and an estimate of the time left, at the rate items have finished so far."""
    state = runtime.batches.counts(batch_id)
    counts = state.counts
    finished = counts[DONE] + counts[FAILED]
    left = counts[QUEUED] + counts[RUNNING]
    elapsed = (datetime.now(timezone.utc) - state.created_at).total_seconds()
    estimate = None if left == 0 else (round(left * elapsed / finished, 1) if finished else None)
    return {"id": batch_id, "created_at": utc_text(state.created_at), "items": state.item_count,
            "cancelled": state.cancelled, "finished": left == 0,
            "counts": {"queued": counts[QUEUED], "running": counts[RUNNING], "done": counts[DONE],
                       "failed": counts[FAILED], "cancelled": counts[CANCELLED]},
            "seconds_left_estimate": 0.0 if left == 0 else estimate,
            "links": batch_links(batch_id, runtime.settings.public_base_url.rstrip("/"))}


def key_numbers(document: dict[str, Any]) -> dict[str, Any]:
    """What a results line carries of an audit: its verdict and the numbers behind it (slopes per year)."""
    window, long_term = document.get("window") or {}, document.get("long_term") or {}
    return {"seed": document.get("seed"), "window_slope": window.get("slope"), "window_p_value": window.get("p_value"),
            "long_term_slope": long_term.get("slope"),
            "change_p_value": (document.get("trend_change") or {}).get("p_value_adjusted"),
            "spell_probability": (document.get("spell") or {}).get("probability"),
            "years_to_detect": (document.get("detectability") or {}).get("years_to_detect")}


def result_line(runtime: Runtime, item: Finished) -> dict[str, Any]:
    head = {"item": item.position, "job": item.id, "status": item.status, "finished_at": utc_text(item.finished_at)}
    if item.status != DONE:
        problem = item.problem or {"type": "/problems/cancelled", "title": "Cancelled", "status": 409,
                                   "detail": "the batch was cancelled before this item ran",
                                   "instance": job_path(item.id)}
        return {**head, "problem": problem}
    record = runtime.audits.get(item.audit_id)
    document = record.result_document
    verdict = document.get("verdict") or {}
    return {**head, "id": record.id, "links": AUDITS.link_set(record.id, document, runtime.settings),
            "verdict": {"code": verdict.get("code"), "headline": verdict.get("headline")},
            "numbers": key_numbers(document)}


def dumps_line(line: dict[str, Any]) -> str:
    return json.dumps(line, separators=(",", ":")) + "\n"


def results(runtime: Runtime, batch_id: str, *, follow: bool = True) -> Iterator[dict[str, Any]]:
    """The finished items in the order they finished; with ``follow``, waits (polling the store, up to
    ``results_follow_seconds``) for the rest."""
    runtime.batches.counts(batch_id)  # not found before the stream starts
    sent: set[str] = set()
    watermark: datetime | None = None
    deadline = time.monotonic() + runtime.settings.results_follow_seconds
    while True:
        state = runtime.batches.counts(batch_id)  # read first: what finished before it is in the next read
        fresh = [item for item in runtime.batches.finished(batch_id, watermark and watermark - REREAD)
                 if item.id not in sent]
        for item in fresh:
            sent.add(item.id)
            watermark = max(watermark or item.finished_at, item.finished_at)
            yield result_line(runtime, item)
        if fresh:
            continue  # there may be more than one read's worth
        if sum(state.counts[s] for s in UNFINISHED) == 0 or not follow or time.monotonic() > deadline:
            return
        time.sleep(POLL_SECONDS)


def job_status(runtime: Runtime, item_id: str) -> dict[str, Any]:
    """One job (an item, or an audit asked for asynchronously): its status, and its audit or problem."""
    item = runtime.batches.item(item_id)
    if item is None:
        raise NotFound(f"no job with id '{item_id[:64]}'", location=Location(field="id"),
                       fix="Check the link; a job of a deleted batch is gone")
    body: dict[str, Any] = {"id": item.id, "status": item.status, "batch": item.batch_id, "item": item.position,
                            "url": job_path(item.id)}
    if item.status == DONE and item.audit_id:
        body["audit"] = AUDITS.links(item.audit_id, runtime.settings)
        body["audit_id"] = item.audit_id
    elif item.status == FAILED:
        body["problem"] = item.problem
    return body


def cancel(runtime: Runtime, batch_id: str, owner_token: str | None) -> dict[str, Any]:
    runtime.batches.cancel(batch_id, owner_token)
    return batch_status(runtime, batch_id)


def delete(runtime: Runtime, batch_id: str, owner_token: str | None) -> int:
    """Deletes the batch and the audits it stored (they share its owner token); how many audits went."""
    return len(runtime.batches.delete(batch_id, owner_token))
