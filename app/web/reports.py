"""The report page of a stored record, for every kind of record: drawn from the stored document alone."""

from __future__ import annotations

from fastapi.responses import HTMLResponse

from app.report.render import render_correlation_report, render_report
from app.service.records import AUDITS, CORRELATIONS, RecordKind, read_record, record_body
from app.service.runtime import Runtime

RENDERERS = {AUDITS.kind: render_report, CORRELATIONS.kind: render_correlation_report}


def report_page(runtime: Runtime, kind: RecordKind, record_id: str, base_url: str = "") -> HTMLResponse:
    """``base_url`` (the address the request came to) makes link previews absolute when no public address is set."""
    record = read_record(runtime.audits, kind, record_id)
    source = (record.input_document or {}).get("source")
    return HTMLResponse(RENDERERS[kind.kind](record_body(kind, record, runtime.settings), source=source, base_url=base_url,
                                             shelf=runtime.chart_shelf(record.id)))
