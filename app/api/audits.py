"""/api/v1/audits: create (JSON or a CSV upload), read, list, delete, export; and the report page."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Depends, Header, Path, Query, Request
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import HTMLResponse, JSONResponse, Response
from starlette.datastructures import FormData, UploadFile

from app.api.bodies import is_json, media_type, validated
from app.api.covariates import column_names
from app.api.csv_export import audit_data_csv, csv_download
from app.api.deps import get_runtime, require_api_key
from app.api.runtime import Runtime
from app.api.schemas import AuditOut, AuditPage, AuditRequest
from app.api.service import (AuditJob, audit_body, audit_links, audit_options, compute_document,
                             job_from_csv, job_from_json, list_page, make_claim, rename_fields, store_audit)
from app.errors import InputError, Location, SeriesFormatError, UnsupportedMediaType
from app.report.chart_sets import AUDIT_CHARTS
from app.report.render import render_report
from app.settings import Settings
from app.store import AUDIT
from app.store.audits import MAX_PAGE_SIZE

router = APIRouter(prefix="/api/v1/audits", tags=["audits"])
pages = APIRouter(tags=["reports"])

AUDIT_ID = Path(description="The audit's id, as returned on creation", examples=["q3mZ0kYtq1bq2VY8h8o0fJcL"])
FORM_FIELD_NAMES = {"claim.start": "claim_start", "claim.end": "claim_end", "claim.kind": "claim_kind",
                    **{f"options.{name}": name for name in ("confidence", "noise", "simulations", "seed",
                                                            "reference_start", "reference_end", "rate_unit")}}
OPTION_FIELDS = {"confidence": float, "noise": str, "simulations": int, "seed": int, "reference_start": float,
                 "reference_end": float, "rate_unit": str}

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
                raise SeriesFormatError("no CSV file in the field 'file'", location=Location(field="file"),
                                        fix="Attach the CSV as the form field 'file'")
            data = await upload.read()
            return await run_in_threadpool(_job_from_form, form, data, upload.filename, settings)
    raise UnsupportedMediaType(f"the body is '{kind or 'untyped'}'", location=Location(field="Content-Type"),
                               fix="Send application/json, or multipart/form-data with the CSV in the field 'file'")


def _job_from_json_bytes(raw: bytes, settings: Settings) -> AuditJob:
    return job_from_json(validated(AuditRequest, raw), settings)


def _job_from_form(form: FormData, data: bytes, filename: str | None, settings: Settings) -> AuditJob:
    try:
        claim = make_claim(_required(form, "claim_start"), _required(form, "claim_end"),
                           _text(form, "claim_kind") or "pause", prefix="claim_")
        options = audit_options({name: _number(form, name, kind) if kind is not str else _text(form, name)
                                 for name, kind in OPTION_FIELDS.items()}, settings)
        return job_from_csv(
            data, claim=claim, options=options, settings=settings, title=_text(form, "title") or "",
            time_column=_text(form, "time_column"), value_column=_text(form, "value_column"),
            decimal_comma=_flag(form, "decimal_comma"), missing_sentinels=_sentinels(form),
            source={"name": _text(form, "source_name"), "url": _text(form, "source_url"),
                    "notes": _text(form, "source_notes")},
            filename=filename, covariate_columns=_texts(form, "covariate_columns"),
            covariate_max_lag=_number(form, "covariate_max_lag", int))
    except InputError as error:
        raise rename_fields(error, FORM_FIELD_NAMES) from None


def _text(form: FormData, name: str) -> str | None:
    value = form.get(name)
    if isinstance(value, UploadFile):
        raise InputError(f"'{name}' should be a text field, not a file", location=Location(field=name),
                         fix=f"Send '{name}' as a plain form field")
    value = (value or "").strip()
    return value or None


def _texts(form: FormData, name: str) -> tuple[str, ...]:
    """A field that may be repeated, each copy holding one name or several separated by commas."""
    for value in form.getlist(name):
        if isinstance(value, UploadFile):
            raise InputError(f"'{name}' should be a text field, not a file", location=Location(field=name),
                             fix=f"Send '{name}' as a plain form field")
    return column_names(form.getlist(name))


def _required(form: FormData, name: str) -> str:
    text = _text(form, name)
    if text is None:
        raise InputError(f"'{name}' is missing", location=Location(field=name),
                         fix=f"Fill in '{name}' (a decimal year such as 1998, or a month such as 1998-03)")
    return text


def _number(form: FormData, name: str, kind: type) -> Any:
    text = _text(form, name)
    if text is None:
        return None
    try:
        return kind(text)
    except ValueError:
        wanted = "a whole number" if kind is int else "a number"
        raise InputError(f"'{text[:40]}' is not {wanted}", location=Location(field=name),
                         fix=f"Write '{name}' as {wanted}, e.g. {'12345' if kind is int else '1998.5'}") from None


def _flag(form: FormData, name: str) -> bool:
    text = (_text(form, name) or "false").lower()
    if text not in ("true", "false", "1", "0", "yes", "no", "on", "off"):
        raise InputError(f"'{text[:40]}' is not true or false", location=Location(field=name),
                         fix=f"Send '{name}' as true or false")
    return text in ("true", "1", "yes", "on")


def _sentinels(form: FormData) -> tuple[float, ...]:
    text = _text(form, "missing_sentinels")
    if text is None:
        return ()
    try:
        return tuple(float(part) for part in text.split(",") if part.strip())
    except ValueError:
        raise InputError("missing_sentinels must be numbers separated by commas",
                         location=Location(field="missing_sentinels"), fix="Write them as e.g. -999,-99.99") from None


@router.post(
    "", status_code=201, summary="Audit a claim about a series, and store the audit",
    dependencies=[Depends(require_api_key)], openapi_extra={"requestBody": CREATE_BODY},
    responses={201: {"model": AuditOut, "description": "Stored; Location points at the report page",
                     "headers": {"Location": {"schema": {"type": "string"}, "description": "/audits/{id}"}}},
               413: {"description": "Body over the upload limit (refused before reading)"},
               415: {"description": "Neither JSON nor multipart/form-data"},
               422: {"description": "The series, claim or options cannot be used; 'where' says which"},
               503: {"description": "Compute pool full: retry after the Retry-After seconds"}},
)
async def create_audit(request: Request, runtime: Runtime = Depends(get_runtime)) -> JSONResponse:
    """Send JSON (`AuditRequest`) or a multipart form with a CSV in `file`. The answer holds
    `owner_token` once: keep it to delete the audit. The audit is stored before the answer is sent."""
    job = await job_from_request(request, runtime.settings)
    document = await runtime.pool.run(compute_document, job)
    record, owner_token = await run_in_threadpool(store_audit, runtime.audits, job, document)
    runtime.draw_charts_ahead(record.id, AUDIT_CHARTS)
    body = audit_body(record, runtime.settings, owner_token=owner_token)
    return JSONResponse(body, status_code=201, headers={"Location": audit_links(record.id, runtime.settings)
                                                        ["report_url"]})


@router.get("", response_model=AuditPage, summary="List audits, newest first",
            dependencies=[Depends(require_api_key)])
def list_audits(limit: int = Query(20, ge=1, le=MAX_PAGE_SIZE, description="Audits per page"),
                cursor: str | None = Query(None, description="next_cursor from the previous page", max_length=64),
                runtime: Runtime = Depends(get_runtime)) -> dict[str, Any]:
    return list_page(runtime.audits.list(limit=limit, cursor=cursor, kind=AUDIT), audit_links, runtime.settings)


@router.get("/{audit_id}", response_model=AuditOut, response_model_exclude_none=False,
            summary="Read one audit (no key needed: the id is the capability)",
            responses={404: {"description": "No audit with that id"}})
def get_audit(audit_id: str = AUDIT_ID, runtime: Runtime = Depends(get_runtime)) -> JSONResponse:
    return JSONResponse(audit_body(runtime.audits.get(audit_id, kind=AUDIT), runtime.settings))


@router.delete("/{audit_id}", status_code=204, summary="Delete an audit (needs its owner token)",
               dependencies=[Depends(require_api_key)],
               responses={401: {"description": "No owner token"}, 403: {"description": "Wrong owner token"},
                          404: {"description": "No audit with that id"}})
def delete_audit(audit_id: str = AUDIT_ID,
                 x_owner_token: str | None = Header(None, description="The owner_token returned on creation"),
                 runtime: Runtime = Depends(get_runtime)) -> Response:
    runtime.audits.delete(audit_id, x_owner_token, kind=AUDIT)
    return Response(status_code=204)


@router.get("/{audit_id}/data.csv", summary="The audited data with the long-term trend line and residuals",
            response_class=Response,
            responses={200: {"content": {"text/csv": {"example": "time,time_label,value,long_term_trend,residual,"
                                                                  "in_reference,in_window\n1970.5,1970,-0.31,..."}}}})
def audit_data(audit_id: str = AUDIT_ID, runtime: Runtime = Depends(get_runtime)) -> Response:
    record = runtime.audits.get(audit_id, kind=AUDIT)
    return csv_download(audit_data_csv(record.input_document, record.result_document), record.id)


@pages.get("/audits/{audit_id}", response_class=HTMLResponse, summary="The audit's report page")
def audit_report(audit_id: str = AUDIT_ID, runtime: Runtime = Depends(get_runtime)) -> HTMLResponse:
    record = runtime.audits.get(audit_id, kind=AUDIT)
    source = (record.input_document or {}).get("source")
    return HTMLResponse(render_report(audit_body(record, runtime.settings), source=source,
                                      shelf=runtime.chart_shelf(record.id)))
