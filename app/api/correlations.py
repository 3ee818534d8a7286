"""/api/v1/correlations: the driver-response correlation audit: create, read, list, delete, export."""

from __future__ import annotations

from fastapi import APIRouter, Depends, Request
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import JSONResponse

from app.api.bodies import require_json, validated
from app.api.deps import require_api_key
from app.api.records import Resource, add_record_routes
from app.api.schemas import CorrelationOut, CorrelationPage, CorrelationRequest
from app.dependencies import get_runtime
from app.service.correlations import CorrelationJob, correlation_job_from_json
from app.service.creating import create_record
from app.service.records import CORRELATIONS, record_body
from app.service.runtime import Runtime
from app.settings import Settings

router = APIRouter(prefix="/api/v1/correlations", tags=["correlations"])

CREATE_BODY = {"required": True, "content": {"application/json": {
    "schema": {"$ref": "#/components/schemas/CorrelationRequest"}}}}


def _job_from_json_bytes(raw: bytes, settings: Settings) -> CorrelationJob:
    return correlation_job_from_json(validated(CorrelationRequest, raw), settings)


@router.post(
    "", status_code=201, summary="Audit a driver-response correlation claim, and store the audit",
    dependencies=[Depends(require_api_key)], openapi_extra={"requestBody": CREATE_BODY},
    responses={201: {"model": CorrelationOut, "description": "Stored; Location points at the API resource",
                     "headers": {"Location": {"schema": {"type": "string"},
                                              "description": "/api/v1/correlations/{id}"}}},
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
    record, owner_token, _document = await create_record(runtime, CORRELATIONS, job)
    body = record_body(CORRELATIONS, record, runtime.settings, owner_token=owner_token)
    return JSONResponse(body, status_code=201, headers={"Location": body["url"]})


add_record_routes(router, Resource(
    CORRELATIONS, noun="correlation audit", out_model=CorrelationOut, page_model=CorrelationPage,
    csv_summary="Both series on the response's times, with the fitted response",
    csv_example="time,time_label,response,driver,driver_transformed,fitted_response,residual,shared\n"
                "1960.5,1960,0.06,315.0,5.75,0.01,0.05,1\n..."))
