"""The pages every kind of stored record has, built once: its report, the page shown once after creating it
(with the owner token), deleting it from the browser, and its charts as files."""

from __future__ import annotations

from fastapi import APIRouter, Depends, Path, Query, Request
from fastapi.responses import HTMLResponse, Response

from app.dependencies import get_runtime
from app.service.records import AUDITS, COMPARISONS, CORRELATIONS, RecordKind
from app.service.runtime import Runtime
from app.web.assets import card_response, chart_response
from app.web.owners import created_page, delete_page
from app.web.reports import report_page

router = APIRouter(include_in_schema=False)
reports = APIRouter(tags=["reports"])  # the report pages are part of the documented service


def add_record_pages(kind: RecordKind, summary: str) -> None:
    record_id_param = Path(alias=kind.id_name, description=f"The {kind.noun}'s id, as returned on creation",
                           examples=[kind.id_example])
    base = f"{kind.report_path}/{{{kind.id_name}}}"

    @reports.get(base, response_class=HTMLResponse, summary=summary, operation_id=f"{kind.kind}_report")
    def report(request: Request, record_id: str = record_id_param,
               runtime: Runtime = Depends(get_runtime)) -> HTMLResponse:
        return report_page(runtime, kind, record_id, str(request.base_url))

    @router.get(f"{base}/created", response_class=HTMLResponse, response_model=None)
    async def created(request: Request, record_id: str = record_id_param) -> Response:
        return await created_page(request, kind, record_id)

    @router.post(f"{base}/delete", response_class=HTMLResponse, response_model=None)
    async def delete(request: Request, record_id: str = record_id_param) -> Response:
        return await delete_page(request, kind, record_id)

    @router.get(f"{base}/charts/{{filename}}")
    def chart(request: Request, filename: str, record_id: str = record_id_param) -> Response:
        """One chart of a stored record, drawn from its document (no key needed: the link is the capability)."""
        return chart_response(request, kind, record_id, filename)

    shape_param = Query("wide", description="wide: 1200 x 675 pixels; square: 1080 x 1080")

    def card_route(fmt: str):
        def card(request: Request, record_id: str = record_id_param, shape: str = shape_param) -> Response:
            """The verdict card to embed beside a published piece (svg, png) or its text alternative (txt)."""
            return card_response(request, kind, record_id, fmt, shape)
        return card

    for fmt in ("svg", "png", "txt"):
        router.add_api_route(f"{base}/card.{fmt}", card_route(fmt), methods=["GET"], response_class=Response)


add_record_pages(AUDITS, "The audit's report page")
add_record_pages(CORRELATIONS, "The correlation audit's report page")
add_record_pages(COMPARISONS, "The comparison's page: one claim on several datasets")
