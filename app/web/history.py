"""The desk's actions on a stored audit: re-run it with updated data, or compare it with another dataset."""

from __future__ import annotations

from fastapi import APIRouter, Path, Request
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import HTMLResponse, Response
from starlette.datastructures import UploadFile

from app.dependencies import get_runtime
from app.errors import AccessDenied, Location, SeriesFormatError, TrendAuditError
from app.service.creating import create_record
from app.service.records import AUDITS, COMPARISONS, read_record
from app.service.revising import comparison_with_file, create_revision, revision_job_from_csv
from app.service.revisions import check_may_revise
from app.web.access import KEY_COOKIE, require_access
from app.web.owners import MAX_TOKEN_CHARS, created_redirect
from app.web.problems import problem_view
from app.web.responses import html

router = APIRouter(include_in_schema=False)
AUDIT_ID = Path(alias="audit_id")
MAX_LABEL_CHARS = 200


async def _posted(request: Request) -> tuple[bytes, str | None, dict[str, str]]:
    async with request.form(max_files=1, max_fields=10) as form:
        upload = form.get("file")
        if not isinstance(upload, UploadFile) or not upload.filename:
            raise SeriesFormatError("no file was attached", location=Location(field="file"),
                                    fix="Choose the CSV file to upload")
        texts = {k: str(v)[:MAX_LABEL_CHARS] for k, v in form.multi_items() if isinstance(v, str)}
        return await upload.read(), upload.filename, texts


def _not_done(heading: str, error: TrendAuditError, back: str) -> HTMLResponse:
    problem = problem_view(error)
    return html("notice.html", status=problem.status, noindex=True, problem=problem, back=back,
                key_link=isinstance(error, AccessDenied), heading=heading, message="",
                page_title=f"{heading} - Trend Audit")


@router.post("/audits/{audit_id}/revise", response_model=None)
async def revise(request: Request, audit_id: str = AUDIT_ID) -> Response:
    runtime = get_runtime(request)
    back = AUDITS.report(audit_id)
    try:
        data, filename, texts = await _posted(request)
        parent = await run_in_threadpool(read_record, runtime.audits, AUDITS, audit_id)
        token = texts.get("owner_token", "").strip()[:MAX_TOKEN_CHARS] or None
        await run_in_threadpool(check_may_revise, runtime.audits, parent.id, token,
                                request.cookies.get(KEY_COOKIE), runtime.settings, AUDITS.kind)
        job = await run_in_threadpool(lambda: revision_job_from_csv(parent, data, settings=runtime.settings,
                                                                    filename=filename))
        record, owner_token, _ = await create_revision(runtime, parent, job, draw_now=True)
    except TrendAuditError as error:
        if isinstance(error, AccessDenied):
            error.fix = "Type the owner token shown once when this audit was created"
        return _not_done("The audit was not re-run", error, back)
    return created_redirect(request, AUDITS, record.id, owner_token)


@router.post("/audits/{audit_id}/compare", response_model=None)
async def compare(request: Request, audit_id: str = AUDIT_ID) -> Response:
    runtime = get_runtime(request)
    back = AUDITS.report(audit_id)
    try:
        require_access(request, runtime.settings, "Comparing datasets")
        data, filename, texts = await _posted(request)
        parent = await run_in_threadpool(read_record, runtime.audits, AUDITS, audit_id)
        job = await run_in_threadpool(lambda: comparison_with_file(parent, data, settings=runtime.settings,
                                                                   label=texts.get("label", ""), filename=filename))
        record, owner_token, _ = await create_record(runtime, COMPARISONS, job)
    except TrendAuditError as error:
        return _not_done("The datasets were not compared", error, back)
    return created_redirect(request, COMPARISONS, record.id, owner_token)

