"""Files the pages need, served by the app itself (no CDN): the stylesheet, the script, the icon; and each
report chart (of any kind of record, routed by ``app.web.records``) as a downloadable SVG or PNG drawn from
the stored document."""

from __future__ import annotations

import re

from fastapi import APIRouter, Request
from fastapi.responses import FileResponse, Response

from app.dependencies import get_runtime
from app.errors import Location, NotFound
from app.report.card import CARD_FORMATS, card_file
from app.report.chart_cache import MEDIA_TYPES, chart_file
from app.report.sharing import absolute
from app.service.records import RecordKind, read_record, record_body
from app.settings import shipped_dir

router = APIRouter(include_in_schema=False)

STATIC_TYPES = {"css": "text/css; charset=utf-8", "js": "text/javascript; charset=utf-8", "svg": "image/svg+xml"}
STATIC_NAME = re.compile(r"[a-z0-9][a-z0-9-]*\.(css|js|svg)")
CHART_FILE = re.compile(r"([a-z]+)\.(svg|png)")
STATIC_MAX_AGE = 3600  # an hour: a new release's stylesheet reaches readers the same day


@router.get("/static/{name}")
def static_file(name: str) -> FileResponse:
    match = STATIC_NAME.fullmatch(name)
    path = shipped_dir("static") / name
    if match is None or not path.is_file():
        raise NotFound(f"no file '{name[:60]}'", location=Location(field="name"), fix="Check the address")
    return FileResponse(path, media_type=STATIC_TYPES[match.group(1)],
                        headers={"Cache-Control": f"public, max-age={STATIC_MAX_AGE}",
                                 "X-Content-Type-Options": "nosniff"})


def chart_response(request: Request, kind: RecordKind, record_id: str, filename: str) -> Response:
    match = CHART_FILE.fullmatch(filename)
    if match is None:
        raise NotFound(f"no chart file '{filename[:60]}'", location=Location(field="chart"),
                       fix="Ask for NAME.svg or NAME.png, e.g. series.svg")
    name, fmt = match.groups()
    runtime = get_runtime(request)
    record = read_record(runtime.audits, kind, record_id)
    body = chart_file(record.id, record.result_document, name, fmt, kind.charts, runtime.chart_shelf(record.id))
    return Response(body, media_type=MEDIA_TYPES[fmt], headers={
        "Content-Disposition": f'inline; filename="trendaudit-{record.id}-{name}.{fmt}"'})
    # Cache-Control (private, no-store) and the security headers: app.security, on every answer


def card_response(request: Request, kind: RecordKind, record_id: str, fmt: str, shape: str) -> Response:
    """The record's verdict card (wide or square) as SVG or PNG, or its text alternative."""
    runtime = get_runtime(request)
    record = read_record(runtime.audits, kind, record_id)
    permalink = absolute(record_body(kind, record, runtime.settings)["report_url"], str(request.base_url))
    body = card_file(kind.charts.kind, record.id, record.title, record.result_document, permalink, shape, fmt)
    suffix = "" if shape == "wide" else f"-{shape}"
    return Response(body, media_type=CARD_FORMATS[fmt], headers={
        "Content-Disposition": f'inline; filename="trendaudit-{record.id}-card{suffix}.{fmt}"'})
