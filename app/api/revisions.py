"""/api/v1/audits/{id}/revisions (re-audit the same claim on a new version of the series) and
/api/v1/audits/{id}/timeline (the verdict as each year was added)."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Depends, Header, Path, Request
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import JSONResponse

from app.api.bodies import form_upload, is_json, media_type, validated
from app.api.history_schemas import RevisionRequest, TimelineOut
from app.api.schemas import AuditOut, AuditRequest, ClaimIn, OptionsIn
from app.dependencies import get_runtime
from app.errors import Location, UnsupportedMediaType
from app.service.forms import form_text
from app.service.audits import AuditJob, job_from_json
from app.service.records import AUDITS, read_record, record_body
from app.service.revising import create_revision, revision_job_from_csv
from app.service.revisions import check_may_revise, revised_inputs
from app.service.runtime import Runtime
from app.service.timeline import with_made_on
from app.settings import Settings

router = APIRouter(prefix="/api/v1/audits", tags=["audits"])
AUDIT_ID = Path(alias="audit_id", description="The audit's id, as returned on creation",
                examples=[AUDITS.id_example])
REVISION_BODY = {"required": True, "content": {
    "application/json": {"schema": {"$ref": "#/components/schemas/RevisionRequest"}},
    "multipart/form-data": {"schema": {"type": "object", "required": ["file"], "properties": {
        "file": {"type": "string", "format": "binary"}, "title": {"type": "string"},
        "time_column": {"type": "string"}, "value_column": {"type": "string"}}}}}}


def _revision_from_json(raw: bytes, parent: Any, settings: Settings) -> AuditJob:
    body = validated(RevisionRequest, raw)
    claim, options = revised_inputs(parent)
    request = AuditRequest(title=body.title or parent.title, series=body.series, source=body.source,
                           ingest=body.ingest, claim=ClaimIn(**{
                               **{k: v for k, v in claim.items() if k in ClaimIn.model_fields},
                               # the edges as the audit being revised was given them, not as resolved
                               "start": claim.get("start_given", claim["start"]),
                               "end": claim.get("end_given", claim["end"])}),
                           options=OptionsIn(**{k: options.get(k) for k in OptionsIn.model_fields}))
    return with_made_on(job_from_json(request, settings), claim.get("made_on"))


async def revision_job(request: Request, parent: Any, settings: Settings) -> AuditJob:
    kind = media_type(request)
    if is_json(kind):
        return await run_in_threadpool(_revision_from_json, await request.body(), parent, settings)
    if kind == "multipart/form-data":
        async with request.form(max_files=1, max_fields=60) as form:
            upload = form_upload(form, "file of the new version of the series")
            data = await upload.read()
            texts = {name: form_text(form, name) for name in ("title", "time_column", "value_column")}
        return await run_in_threadpool(lambda: revision_job_from_csv(
            parent, data, settings=settings, filename=upload.filename, title=texts["title"] or "",
            time_column=texts["time_column"], value_column=texts["value_column"]))
    raise UnsupportedMediaType(f"the body is '{kind or 'untyped'}'", location=Location(field="Content-Type"),
                               fix="Send application/json, or multipart/form-data with the file in the field 'file'")


def _bearer(authorization: str | None) -> str | None:
    if authorization and authorization.lower().startswith("bearer "):
        return authorization[7:].strip() or None
    return None


@router.post("/{audit_id}/revisions", status_code=201, openapi_extra={"requestBody": REVISION_BODY},
             summary="Re-audit the same claim on a new version of the series (needs the owner token or a key)",
             responses={201: {"model": AuditOut, "description": "The revision, stored and linked both ways"},
                        401: {"description": "Neither the owner token nor an API key"},
                        403: {"description": "Wrong owner token"}, 404: {"description": "No audit with that id"}})
async def revise_audit(request: Request, audit_id: str = AUDIT_ID,
                       x_owner_token: str | None = Header(None, description="The revised audit's owner_token"),
                       authorization: str | None = Header(None, include_in_schema=False),
                       runtime: Runtime = Depends(get_runtime)) -> JSONResponse:
    """Send the new version of the series (JSON `RevisionRequest`, or a multipart form with the file in `file`).
    The claim, options and seed are the revised audit's, so what differs comes from the data. The answer
    holds `revision_of` and `changes` (points added, removed and revised, with the periods and the largest
    revision; the verdict and key numbers before and after); the revised audit lists it in `revisions`."""
    settings = runtime.settings
    parent = await run_in_threadpool(read_record, runtime.audits, AUDITS, audit_id)
    await run_in_threadpool(check_may_revise, runtime.audits, parent.id, x_owner_token, _bearer(authorization),
                            settings, AUDITS.kind)
    job = await revision_job(request, parent, settings)
    record, owner_token, _document = await create_revision(runtime, parent, job)
    body = record_body(AUDITS, record, settings, owner_token=owner_token)
    return JSONResponse(body, status_code=201, headers={"Location": body["report_url"]})


@router.get("/{audit_id}/timeline", response_model=TimelineOut,
            summary="The verdict as each year was added, and on the day the claim was made",
            responses={404: {"description": "No audit with that id"}})
async def timeline(audit_id: str = AUDIT_ID, runtime: Runtime = Depends(get_runtime)) -> JSONResponse:
    """The claim audited with the data cut at each year end from the claim's end to the record's end (at most
    60 cuts, each with a seed derived from the audit's), and, when `claim.made_on` was given, with the data as
    they stood that day. Worked out in the background just after the audit is stored (while no audit is
computing), and kept with it; asked for before it is ready, the answer waits for it."""
    return JSONResponse(await runtime.timelines.get(runtime.audits, audit_id, AUDITS.kind))
