"""/api/v1/audits: create (JSON or a CSV upload), read, list, delete, export."""

from __future__ import annotations

from fastapi import APIRouter, Depends, Request
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import JSONResponse
from starlette.datastructures import UploadFile

from app.api.batches import accept_one, wants_async
from app.api.bodies import is_json, media_type, validated
from app.api.deps import require_api_key
from app.api.records import Resource, add_record_routes
from app.api.schemas import AuditOut, AuditPage, AuditRequest
from app.dependencies import get_runtime
from app.errors import Location, SeriesFormatError, UnsupportedMediaType
from app.service.audits import AuditJob, job_from_json
from app.service.creating import create_record
from app.service.forms import job_from_form
from app.service.records import AUDITS, record_body
from app.service.runtime import Runtime
from app.service.timeline import with_made_on
from app.settings import Settings

router = APIRouter(prefix="/api/v1/audits", tags=["audits"])

CREATE_BODY = {
    "required": True,
    "content": {
        "application/json": {"schema": {"$ref": "#/components/schemas/AuditRequest"}},
        "multipart/form-data": {"schema": {"$ref": "#/components/schemas/MultipartAuditForm"},
                                "encoding": {"file": {"contentType": "text/csv"}}},
    },
}


async def job_from_request(request: Request, settings: Settings) -> AuditJob:
    """Reads the body without blocking, then parses it in a worker thread: a 5 MB CSV takes a moment."""
    kind = media_type(request)
    if is_json(kind):
        raw = await request.body()
        return await run_in_threadpool(_job_from_json_bytes, raw, settings)
    if kind == "multipart/form-data":
        async with request.form(max_files=1, max_fields=60) as form:
            upload = form.get("file")
            if not isinstance(upload, UploadFile):
                if isinstance(form.get("data_url"), str) and form.get("data_url").strip():
                    return await run_in_threadpool(job_from_form, form, None, None, settings)
                raise SeriesFormatError("no data file in the field 'file'", location=Location(field="file"),
                                        fix="Attach the file (CSV, text, .xlsx or .ods) as the form field 'file', "
                                            "or give a link to it as 'data_url'")
            data = await upload.read()
            return await run_in_threadpool(job_from_form, form, data, upload.filename, settings)
    raise UnsupportedMediaType(f"the body is '{kind or 'untyped'}'", location=Location(field="Content-Type"),
                               fix="Send application/json, or multipart/form-data with the file in the field 'file'")


def _job_from_json_bytes(raw: bytes, settings: Settings) -> AuditJob:
    return _job_from_request(validated(AuditRequest, raw), settings)


def _job_from_request(request: AuditRequest, settings: Settings) -> AuditJob:
    return with_made_on(job_from_json(request, settings), request.claim.made_on)


def job_from_item(item: dict, settings: Settings) -> AuditJob:
    """A batch item (kept as its audit request) read as this route reads a JSON body: how jobs read items."""
    return _job_from_request(AuditRequest.model_validate(item), settings)


def _checked_item(raw: bytes, settings: Settings) -> dict:
    """An audit asked for asynchronously: checked now as far as it can be without computing (422 at once)."""
    request = validated(AuditRequest, raw)
    _job_from_request(request, settings)
    return request.model_dump(mode="json", exclude_unset=True)


@router.post(
    "", status_code=201, summary="Audit a claim about a series, and store the audit",
    dependencies=[Depends(require_api_key)], openapi_extra={"requestBody": CREATE_BODY},
    responses={202: {"description": "With 'Prefer: respond-async' (JSON): queued as a job, ahead of any batch; "
                                    "Location is the job (GET /api/v1/jobs/{id})",
                     "headers": {"Location": {"schema": {"type": "string"}, "description": "/api/v1/jobs/{id}"},
                                 "Preference-Applied": {"schema": {"type": "string"}}}},
               201: {"model": AuditOut, "description": "Stored; Location points at the API resource",
                     "headers": {"Location": {"schema": {"type": "string"},
                                              "description": "/api/v1/audits/{id}"}}},
               413: {"description": "Body over the upload limit (refused before reading)"},
               415: {"description": "Neither JSON nor multipart/form-data"},
               422: {"description": "The series, claim or options cannot be used; 'where' says which"},
               503: {"description": "Compute pool full: retry after the Retry-After seconds"}},
)
async def create_audit(request: Request, runtime: Runtime = Depends(get_runtime)) -> JSONResponse:
    """Send JSON (`AuditRequest`) or a multipart form with a CSV in `file`. The answer holds
    `owner_token` once: keep it to delete the audit. The audit is stored before the answer is sent; with
    `Prefer: respond-async` (RFC 7240, JSON bodies) it is queued as a job instead, ahead of any batch, and the
    answer is 202 with the job's link in Location."""
    if wants_async(request) and is_json(media_type(request)):
        item = await run_in_threadpool(_checked_item, await request.body(), runtime.settings)
        return await accept_one(request, runtime, item)
    job = await job_from_request(request, runtime.settings)
    record, owner_token, _document = await create_record(runtime, AUDITS, job)
    body = record_body(AUDITS, record, runtime.settings, owner_token=owner_token)
    return JSONResponse(body, status_code=201, headers={"Location": body["url"]})


add_record_routes(router, Resource(
    AUDITS, noun="audit", out_model=AuditOut,
    page_model=AuditPage, csv_summary="The audited data with the long-term trend line and residuals",
    csv_example="time,time_label,value,long_term_trend,residual,in_reference,in_window\n1970.5,1970,-0.31,..."))
