"""Rendering the HTML report of a stored audit: charts drawn (first view) and from the chart cache."""

from __future__ import annotations

import itertools
import json

from app.audit import AuditOptions, audit_document, run_audit
from app.report.render import render_report
from bench import series
from bench.figures import Figure, at_most, context
from bench.timing import measure

TARGET_S = 0.3


def _stored(document_json: str, audit_id: str) -> dict:
    """The API's body for a stored audit (what the store gives back, after a JSON round trip)."""
    return {"id": audit_id, "kind": "audit", "title": "Benchmark", "created_at": "2026-01-01T00:00:00Z",
            **json.loads(document_json)}


def run(quick: bool) -> list[Figure]:
    figures = []
    for name, make in (("annual", series.annual), ("monthly", series.monthly)):
        document = json.dumps(audit_document(run_audit(make(), series.CLAIM, AuditOptions(seed=7))))
        fresh = (f"bench{name}{i:017d}" for i in itertools.count())  # a new id misses the chart cache
        first = measure(lambda: render_report(_stored(document, next(fresh))), 5 if quick else 11)
        cached = measure(lambda: render_report(_stored(document, "benchcached000000000000")), 5 if quick else 11)
        figures.append(at_most(f"report rendering, {name} audit, first view (charts drawn)", first.median, TARGET_S,
                               "s", min_s=round(first.minimum, 4)))
        figures.append(context(f"report rendering, {name} audit, charts cached", cached.median * 1000, "ms"))
    return figures
