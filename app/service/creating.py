"""Creating a stored record, the same for every kind and every front end: the prepared job is computed in the
compute pool, its document (written once, by the serialiser) is stored, and its charts are drawn."""

from __future__ import annotations

import asyncio
from collections.abc import Callable
from typing import Any

from app.service.audits import AuditJob, compute_document, store_audit
from app.service.comparisons import ComparisonJob, compute_comparison_document, store_comparison
from app.service.correlations import CorrelationJob, compute_correlation_document, store_correlation
from app.service.records import AUDITS, COMPARISONS, RecordKind
from app.service.runtime import Runtime
from app.store import AuditRecord


def _steps(kind: RecordKind):
    """(compute, store) for a kind of record, looked up when called."""
    if kind is AUDITS:
        return compute_document, store_audit
    if kind is COMPARISONS:
        return compute_comparison_document, store_comparison
    return compute_correlation_document, store_correlation


async def create_record(runtime: Runtime, kind: RecordKind, job: AuditJob | CorrelationJob | ComparisonJob, *,
                        draw_now: bool = False, amend: Callable[[dict[str, Any]], dict[str, Any]] | None = None
                        ) -> tuple[AuditRecord, str, dict[str, Any]]:
    """Computes ``job`` in the pool and stores it: (the record, its owner token, the result document).

    Its charts are drawn in the background once the pool is idle, or with ``draw_now`` before this returns
    (the desk, whose person waits for the created page anyway). ``amend`` adds to the document before it is
    stored (a revision's link and what changed)."""
    compute, store = _steps(kind)
    # A store that could not keep the result is found out before the work, not after it (503 at once).
    await asyncio.to_thread(runtime.audits.check_writable)
    document = await runtime.pool.run(compute, job)
    if amend is not None:
        document = amend(document)
    record, owner_token = await asyncio.to_thread(store, runtime.audits, job, document)
    if kind is AUDITS:  # the verdict as each year was added: computed next, never holding up this answer
        runtime.timelines.start(runtime.audits, record.id, record.input_document)
    if draw_now:
        await asyncio.to_thread(runtime.draw_charts_now, record.id, document, kind.charts)
    else:
        runtime.draw_charts_ahead(record.id, kind.charts)
    return record, owner_token, document
