"""/api/v1/correlations: the driver-response correlation audit: create, read, list, delete, export; its page."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Depends, Header, Path, Query, Request
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import HTMLResponse, JSONResponse, Response

from app.api.bodies import require_json, validated
from app.api.correlation_service import (CorrelationJob, compute_correlation_document, correlation_body,
                                         correlation_job_from_json, correlation_links, store_correlation)
from app.api.csv_export import correlation_data_csv, csv_download
from app.api.deps import get_runtime, require_api_key
from app.api.runtime import Runtime
from app.api.schemas import CorrelationOut, CorrelationPage, CorrelationRequest
from app.api.service import list_page
from app.report.chart_sets import CORRELATION_CHARTS
from app.report.render import render_correlation_report
from app.settings import Settings
from app.store import CORRELATION
from app.store.audits import MAX_PAGE_SIZE

router = APIRouter(prefix="/api/v1/correlations", tags=["correlations"])
pages = APIRouter(tags=["reports"])

CORRELATION_ID = Path(description="The correlation audit's id, as returned on creation",
                      examples=["Vx0d3kq7b2mYtq1bq2VY8h8o"])
CREATE_BODY = {"required": True, "content": {"application/json": {
    "schema": {"$ref": "#/components/schemas/CorrelationRequest"}}}}


def _job_from_json_bytes(raw: bytes, settings: Settings) -> CorrelationJob:
    return correlation_job_from_json(validated(CorrelationRequest, raw), settings)


@router.post(
    "", status_code=201, summary="Audit a driver-response correlation claim, and store the audit",
    dependencies=[Depends(require_api_key)], openapi_extra={"requestBody": CREATE_BODY},
    responses={201: {"model": CorrelationOut, "description": "Stored; Location points at the report page",
                     "headers": {"Location": {"schema": {"type": "string"}, "description": "/correlations/{id}"}}},
               413: {"description": "Body over the upload limit (refused before reading)"},
               415: {"description": "Not JSON"},
               422: {"description": "A series, the window or the options cannot be used; 'where' says which"},
               503: {"description": "Compute pool full: retry after the Retry-After seconds"}},
)
async def create_correlation(request: Request, runtime: Runtime = Depends(get_runtime)) -> JSONResponse:
    """Send `CorrelationRequest` as JSON. On the times both series share (the driver matched to the
    response's times), the answer gives the full-record regression of response on the transformed driver,
    the correlation of levels, detrended series and differences, rolling-window correlations, and how often
    a response that follows the driver exactly, with noise like the data's, shows windows as weak.
    `owner_token` is shown once: keep it to delete the audit."""
    require_json(request)
    job = await run_in_threadpool(_job_from_json_bytes, await request.body(), runtime.settings)
    document = await runtime.pool.run(compute_correlation_document, job)
    record, owner_token = await run_in_threadpool(store_correlation, runtime.audits, job, document)
    runtime.draw_charts_ahead(record.id, CORRELATION_CHARTS)
    body = correlation_body(record, runtime.settings, owner_token=owner_token)
    return JSONResponse(body, status_code=201, headers={"Location": body["report_url"]})


@router.get("", response_model=CorrelationPage, summary="List correlation audits, newest first",
            dependencies=[Depends(require_api_key)])
def list_correlations(limit: int = Query(20, ge=1, le=MAX_PAGE_SIZE, description="Audits per page"),
                      cursor: str | None = Query(None, description="next_cursor from the previous page", max_length=64),
                      runtime: Runtime = Depends(get_runtime)) -> dict[str, Any]:
    page = runtime.audits.list(limit=limit, cursor=cursor, kind=CORRELATION)
    return list_page(page, correlation_links, runtime.settings)


@router.get("/{correlation_id}", response_model=CorrelationOut,
            summary="Read one correlation audit (no key needed: the id is the capability)",
            responses={404: {"description": "No correlation audit with that id"}})
def get_correlation(correlation_id: str = CORRELATION_ID, runtime: Runtime = Depends(get_runtime)) -> JSONResponse:
    return JSONResponse(correlation_body(runtime.audits.get(correlation_id, kind=CORRELATION), runtime.settings))


@router.delete("/{correlation_id}", status_code=204, summary="Delete a correlation audit (needs its owner token)",
               dependencies=[Depends(require_api_key)],
               responses={401: {"description": "No owner token"}, 403: {"description": "Wrong owner token"},
                          404: {"description": "No correlation audit with that id"}})
def delete_correlation(correlation_id: str = CORRELATION_ID,
                       x_owner_token: str | None = Header(None, description="The owner_token returned on creation"),
                       runtime: Runtime = Depends(get_runtime)) -> Response:
    runtime.audits.delete(correlation_id, x_owner_token, kind=CORRELATION)
    return Response(status_code=204)


@router.get("/{correlation_id}/data.csv", summary="Both series on the response's times, with the fitted response",
            response_class=Response,
            responses={200: {"content": {"text/csv": {"example": "time,time_label,response,driver,driver_transformed,"
                                                                  "fitted_response,residual,shared\n"
                                                                  "1960.5,1960,0.06,315.0,5.75,0.01,0.05,1\n..."}}}})
def correlation_data(correlation_id: str = CORRELATION_ID, runtime: Runtime = Depends(get_runtime)) -> Response:
    record = runtime.audits.get(correlation_id, kind=CORRELATION)
    return csv_download(correlation_data_csv(record.input_document, record.result_document), record.id)


@pages.get("/correlations/{correlation_id}", response_class=HTMLResponse, summary="The correlation audit's report page")
def correlation_report(correlation_id: str = CORRELATION_ID, runtime: Runtime = Depends(get_runtime)) -> HTMLResponse:
    record = runtime.audits.get(correlation_id, kind=CORRELATION)
    source = (record.input_document or {}).get("source")
    return HTMLResponse(render_correlation_report(correlation_body(record, runtime.settings), source=source,
                                                  shelf=runtime.chart_shelf(record.id)))
