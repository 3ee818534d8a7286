"""/api/v1/comparisons: one claim audited on several datasets: create, read, list, delete, export."""

from __future__ import annotations

from fastapi import APIRouter, Depends, Request
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import JSONResponse

from app.api.bodies import require_json, validated
from app.api.deps import require_api_key
from app.api.history_schemas import ComparisonOut, ComparisonPage, ComparisonRequest
from app.api.records import Resource, add_record_routes
from app.dependencies import get_runtime
from app.service.comparisons import ComparisonJob, comparison_job_from_json
from app.service.creating import create_record
from app.service.records import COMPARISONS, record_body
from app.service.runtime import Runtime
from app.settings import Settings

router = APIRouter(prefix="/api/v1/comparisons", tags=["comparisons"])

CREATE_BODY = {"required": True, "content": {"application/json": {
    "schema": {"$ref": "#/components/schemas/ComparisonRequest"}}}}


def _job_from_json_bytes(raw: bytes, settings: Settings) -> ComparisonJob:
    return comparison_job_from_json(validated(ComparisonRequest, raw), settings)


@router.post(
    "", status_code=201, summary="Audit one claim on 2 to 8 datasets, side by side, and store the comparison",
    dependencies=[Depends(require_api_key)], openapi_extra={"requestBody": CREATE_BODY},
    responses={201: {"model": ComparisonOut, "description": "Stored; Location points at the comparison page",
                     "headers": {"Location": {"schema": {"type": "string"}, "description": "/comparisons/{id}"}}},
               415: {"description": "Not JSON"},
               422: {"description": "A series, the claim or the options cannot be used; 'where' says which"},
               503: {"description": "Compute pool full: retry after the Retry-After seconds"}},
)
async def create_comparison(request: Request, runtime: Runtime = Depends(get_runtime)) -> JSONResponse:
    """Send `ComparisonRequest` as JSON. Each dataset is audited with the same options and seed; the answer
    gives per dataset the verdict, the window and long-term trends with their ranges, and `agreement`:
    whether the datasets agree, in one sentence. `owner_token` is shown once: keep it to delete it."""
    require_json(request)
    job = await run_in_threadpool(_job_from_json_bytes, await request.body(), runtime.settings)
    record, owner_token, _document = await create_record(runtime, COMPARISONS, job)
    body = record_body(COMPARISONS, record, runtime.settings, owner_token=owner_token)
    return JSONResponse(body, status_code=201, headers={"Location": body["report_url"]})


add_record_routes(router, Resource(
    COMPARISONS, noun="comparison", out_model=ComparisonOut, page_model=ComparisonPage,
    csv_summary="One row per dataset: its verdict and its trends (per year)",
    csv_example="dataset,n,verdict,window_slope,window_ci_low,window_ci_high,long_term_slope,...\n"
                "Dataset A,55,consistent_with_trend,0.012,-0.004,0.028,0.018,..."))
