"""Files the pages need, served by the app itself (no CDN): the stylesheet, the script, the icon, and each
report chart (a pause audit's or a correlation audit's) as a downloadable SVG or PNG drawn from the stored
document."""

from __future__ import annotations

import re

from fastapi import APIRouter, Request
from fastapi.responses import FileResponse, Response

from app.errors import Location, NotFound
from app.report.chart_cache import MEDIA_TYPES, chart_file
from app.report.chart_sets import AUDIT_CHARTS, CORRELATION_CHARTS, ChartSet
from app.settings import PROJECT_ROOT
from app.store import AUDIT, CORRELATION
from app.web.responses import runtime_of

router = APIRouter(include_in_schema=False)

STATIC_DIR = PROJECT_ROOT / "static"
STATIC_TYPES = {"css": "text/css; charset=utf-8", "js": "text/javascript; charset=utf-8", "svg": "image/svg+xml"}
STATIC_NAME = re.compile(r"[a-z0-9][a-z0-9-]*\.(css|js|svg)")
CHART_FILE = re.compile(r"([a-z]+)\.(svg|png)")
STATIC_MAX_AGE = 3600  # an hour: a new release's stylesheet reaches readers the same day


@router.get("/static/{name}")
def static_file(name: str) -> FileResponse:
    match = STATIC_NAME.fullmatch(name)
    path = STATIC_DIR / name
    if match is None or not path.is_file():
        raise NotFound(f"no file '{name[:60]}'", location=Location(field="name"), fix="Check the address")
    return FileResponse(path, media_type=STATIC_TYPES[match.group(1)],
                        headers={"Cache-Control": f"public, max-age={STATIC_MAX_AGE}",
                                 "X-Content-Type-Options": "nosniff"})


def _chart_response(request: Request, record_id: str, filename: str, kind: str, charts: ChartSet) -> Response:
    match = CHART_FILE.fullmatch(filename)
    if match is None:
        raise NotFound(f"no chart file '{filename[:60]}'", location=Location(field="chart"),
                       fix="Ask for NAME.svg or NAME.png, e.g. series.svg")
    name, fmt = match.groups()
    runtime = runtime_of(request)
    record = runtime.audits.get(record_id, kind=kind)
    body = chart_file(record.id, record.result_document, name, fmt, charts, runtime.chart_shelf(record.id))
    return Response(body, media_type=MEDIA_TYPES[fmt], headers={
        "Content-Disposition": f'inline; filename="trendaudit-{record.id}-{name}.{fmt}"',
        "Cache-Control": "public, max-age=86400"})  # security headers: app.security, on every answer


@router.get("/audits/{audit_id}/charts/{filename}")
def chart_download(audit_id: str, filename: str, request: Request) -> Response:
    """One chart of a stored audit, drawn from its document (no key needed: the link is the capability)."""
    return _chart_response(request, audit_id, filename, AUDIT, AUDIT_CHARTS)


@router.get("/correlations/{correlation_id}/charts/{filename}")
def correlation_chart_download(correlation_id: str, filename: str, request: Request) -> Response:
    """One chart of a stored driver-response audit, drawn from its document."""
    return _chart_response(request, correlation_id, filename, CORRELATION, CORRELATION_CHARTS)
