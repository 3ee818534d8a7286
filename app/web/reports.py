"""The report page of a stored record, for every kind of record: drawn from the stored document alone."""

from __future__ import annotations

from fastapi.responses import HTMLResponse

from app.report.render import render_comparison, render_correlation_report, render_report
from app.service.records import AUDITS, COMPARISONS, CORRELATIONS, RecordKind, read_record, record_body
from app.service.revisions import chain, chain_on_delete
from app.service.runtime import Runtime

RENDERERS = {AUDITS.kind: render_report, CORRELATIONS.kind: render_correlation_report,
             COMPARISONS.kind: render_comparison}


def report_page(runtime: Runtime, kind: RecordKind, record_id: str, base_url: str = "") -> HTMLResponse:
    """``base_url`` (the address the request came to) makes link previews absolute when no public address is set."""
    record = read_record(runtime.audits, kind, record_id)
    source = (record.input_document or {}).get("source")
    body = record_body(kind, record, runtime.settings)
    if kind is COMPARISONS:  # its one chart is drawn in HTML
        return HTMLResponse(render_comparison(body, source=source, base_url=base_url))
    may_draw = runtime.views_may_draw()  # a view that draws nothing leaves any drawing ahead of it to go on
    charts = {"shelf": runtime.chart_shelf(record.id) if may_draw else runtime.charts, "draw_missing": may_draw}
    if kind is AUDITS:  # an audit shows the chain of revisions it belongs to
        versions = {**chain(runtime.audits, record), "on_delete": chain_on_delete(record.result_document)}
        return HTMLResponse(render_report(body, source=source, base_url=base_url, chain=versions, **charts))
    return HTMLResponse(render_correlation_report(body, source=source, base_url=base_url, **charts))
