"""The HTML report of a stored audit: served through the app as a reader meets it, and its charts' drawing.

An audit is stored through the service's own path (job, compute, store), its charts drawn ahead by
the runtime's background drawer, exactly as after ``POST /api/v1/audits``. The target figure is then
``GET /audits/{id}`` through the ASGI app in this process (no network): reading the record and its
kept charts from the database (SQLite in a temporary folder) and rendering the page, with the
process's chart cache emptied before each request, as a server that has never shown this report.
Beside it: drawing the charts from the document (what happens once per audit, in the background),
and a repeat view from the process's cache.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

from fastapi.testclient import TestClient

from app.service.audits import compute_document, prepare_job, store_audit
from app.audit import AuditOptions
from app.main import create_app
from app.report.chart_cache import clear_chart_cache, draw_charts
from app.report.chart_sets import AUDIT_CHARTS
from app.settings import Settings
from app.service.claims import ClaimInput
from bench import series
from bench.figures import Figure, at_most, context
from bench.timing import measure

TARGET_S = 0.3


def _stored_audit(client: TestClient, make_series) -> tuple[str, dict]:
    runtime = client.app.state.runtime.get()
    job = prepare_job(title="Benchmark", series=make_series(), claim=ClaimInput(series.CLAIM.kind, series.CLAIM.start, series.CLAIM.end), options=AuditOptions(seed=7),
                      source={}, ingest={"format": "json"}, settings=runtime.settings)
    document = compute_document(job)
    record, _ = store_audit(runtime.audits, job, document)
    runtime.draw_charts_ahead(record.id, AUDIT_CHARTS)
    runtime.drawer.wait_until_drawn()
    return record.id, document


def _view(client: TestClient, audit_id: str, cold: bool) -> None:
    if cold:
        clear_chart_cache()
    response = client.get(f"/audits/{audit_id}")
    if response.status_code != 200 or response.text.count('role="img"') < 5:
        raise RuntimeError(f"the report did not render: {response.status_code}")


def run(quick: bool) -> list[Figure]:
    figures = []
    repeats = 5 if quick else 11
    with tempfile.TemporaryDirectory() as folder:
        settings = Settings(database_url=f"sqlite:///{Path(folder) / 'bench.sqlite3'}", api_keys="")
        with TestClient(create_app(settings)) as client:
            for name, make in (("annual", series.annual), ("monthly", series.monthly)):
                audit_id, document = _stored_audit(client, make)
                first = measure(lambda: _view(client, audit_id, cold=True), repeats)
                again = measure(lambda: _view(client, audit_id, cold=False), repeats)
                drawing = measure(lambda: draw_charts(document, AUDIT_CHARTS), 3 if quick else 7)
                figures.append(at_most(f"report page, {name} audit, stored with its charts, first view in a process",
                                       first.median, TARGET_S, "s", min_s=round(first.minimum, 4)))
                figures.append(context(f"report page, {name} audit, repeat view (process cache)",
                                       again.median * 1000, "ms"))
                figures.append(context(f"drawing the {name} audit's charts (once, in the background after storing)",
                                       drawing.median, "s", cpu_s=round(drawing.cpu_median, 4)))
    clear_chart_cache()
    return figures
