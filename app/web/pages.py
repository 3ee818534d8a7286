"""The browser desk: start an audit, check what was read, run it, browse the history.

Plain HTML forms posting to plain routes, so the desk works without JavaScript. Every input problem
comes back as the same page with the message at the top (what, where, what to do) and a 4xx status;
the audit itself runs through the service's own path (``app.service.audits``) and compute pool. The
driver-and-response audit starts from the same preview (``app.web.linking``).
"""

from __future__ import annotations

import dataclasses
from typing import Any, Callable

from fastapi import APIRouter, Request
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import HTMLResponse, RedirectResponse

from app.dependencies import get_runtime
from app.errors import AccessDenied, InputError, TooManyAttempts, TrendAuditError
from app.service.audits import audit_options, job_from_file, rename_fields
from app.service.claims import SEARCH_MAX_CHARS, ClaimInput, claim_record
from app.service.forms import FORM_FIELD_NAMES
from app.service.creating import create_record
from app.service.limits import check_string_lengths
from app.service.records import AUDITS, RecordKind, list_history
from app.settings import Settings
from app.web.access import (check_key, forget_key, has_access, keys_required, remember_key, require_access,
                            safe_next, spend_anonymous)
from app.web.claim_box import ClaimReadingView, read_into_form
from app.web.forms import LINK, TREND, DeskForm, form_choices
from app.web.owners import created_redirect
from app.web.preview import PreviewView, preview_view
from app.web.problems import ProblemView, problem_view
from app.web.reading import (chosen_columns, columns_of_this_sheet, ingest_options, links_to_data, posted_form,
                             read_table, read_table_and_provenance, required, sample_filled, samples, table_text)
from app.web.responses import html, is_secure

router = APIRouter(include_in_schema=False)

HISTORY_PAGE_SIZE = 25
WINDOW_FIX = "Give the first and last year (or month) of the claimed window"


# The home page and the preview -------------------------------------------------------------------------

def desk(request: Request, *, form: DeskForm, preview: PreviewView | None = None,
         problem: ProblemView | None = None, sample: dict[str, Any] | None = None,
         claim_reading: ClaimReadingView | None = None) -> HTMLResponse:
    settings: Settings = request.app.state.settings
    return html("home.html", status=problem.status if problem else 200, form=form, preview=preview, problem=problem,
                sample=sample, claim_reading=claim_reading, samples=samples(settings), needs_key=not has_access(request, settings),
                keys_required=keys_required(settings), page_title="Trend Audit: check a claim about a trend",
                max_upload_mb=round(settings.max_upload_bytes / 2**20, 1),
                max_upload_bytes=settings.max_upload_bytes, **form_choices(settings))


async def preview_page(request: Request, form: DeskForm, problem: ProblemView | None = None) -> HTMLResponse:
    settings: Settings = request.app.state.settings
    # The page carries the table back in its form (up to the upload limit): drawn on a worker thread, not the loop.
    try:
        form = sample_filled(form, settings)
        table, sample = await run_in_threadpool(read_table, form, settings)
    except TrendAuditError as error:
        return await run_in_threadpool(lambda: desk(request, form=form, problem=problem or problem_view(error)))
    form = chosen_columns(form, table)
    form, claim_reading = read_into_form(form, table.series, settings)
    view = await run_in_threadpool(preview_view, table)
    return await run_in_threadpool(lambda: desk(request, form=form, preview=view, problem=problem, sample=sample,
                                                claim_reading=claim_reading))


@router.get("/", response_class=HTMLResponse)
async def home(request: Request, sample: str | None = None, check: str | None = None) -> HTMLResponse:
    if sample:
        return await preview_page(request, DeskForm(sample=sample[:200], check=LINK if check == LINK else TREND))
    return desk(request, form=DeskForm())


@router.post("/preview", response_class=HTMLResponse)
async def preview(request: Request) -> HTMLResponse:
    try:
        spend_anonymous(request)  # no key needed to preview, so each client has its own small allowance
        form, _ = await posted_form(request)
    except TrendAuditError as error:
        return desk(request, form=DeskForm(), problem=problem_view(error))
    return await preview_page(request, form)


# Running the audit -----------------------------------------------------------------------------------

def _job(form: DeskForm, filename: str | None, settings: Settings):
    try:
        return _desk_job(form, filename, settings)
    except InputError as error:
        raise rename_fields(error, FORM_FIELD_NAMES) from None


def _desk_job(form: DeskForm, filename: str | None, settings: Settings):
    """The desk's audit goes through the multipart form's own path: the same edges, the same record."""
    form = columns_of_this_sheet(sample_filled(form, settings))
    table, sample, provenance = read_table_and_provenance(form, settings)
    check_string_lengths({"label": form.label, "units": form.units, "source_name": form.source_name,
                          "source_url": form.source_url, "source_notes": form.source_notes},
                         settings.max_string_length)
    claim = ClaimInput(kind=form.claim_kind.strip() or "pause",
                       start=required(form.claim_start, "claim_start", WINDOW_FIX),
                       end=required(form.claim_end, "claim_end", WINDOW_FIX),
                       record=claim_record(form.claim_record_values(), settings.max_string_length))
    reference_start, reference_end = form.reference_texts()
    options = audit_options({**form.option_values(), "reference_start": reference_start or None,
                             "reference_end": reference_end or None}, settings)
    linked = links_to_data(form)
    text = None if linked else table_text(form, settings)[0]
    ingest = ingest_options(form, settings, sample)
    return job_from_file(text, claim=claim, options=options, settings=settings, title=form.title.strip(),
                         time_column=ingest.time_column, value_column=ingest.value_column,
                         decimal_comma=ingest.decimal_comma, missing_sentinels=ingest.missing_sentinels,
                         source=form.source(), filename=filename or (sample or {}).get("file"),
                         covariate_columns=form.covariate_columns, covariate_max_lag=form.covariate_lag(),
                         sheet=ingest.sheet, header_row=ingest.header_row, seasonal=form.seasonal or None,
                         data_url=form.data_url.strip() if linked else None, label=ingest.label, units=ingest.units,
                         fetched=(table, provenance) if linked and provenance else None)


async def run_desk_form(request: Request, *, check: str, make_job: Callable,
                        collection: RecordKind) -> HTMLResponse | RedirectResponse:
    """Reads the posted form, runs its audit through the service's path and compute pool, stores it, and sends
    the browser to the page that shows the owner token once; a problem comes back on the preview."""
    settings: Settings = request.app.state.settings
    try:
        require_access(request, settings, "Creating an audit")  # before the form is read: no work for strangers
        form, filename = await posted_form(request)
    except TrendAuditError as error:
        return desk(request, form=DeskForm(check=check), problem=problem_view(error))
    form = dataclasses.replace(form, check=check)
    try:
        job = await run_in_threadpool(make_job, form, filename, settings)
        # The report's charts are drawn now, while the person waits anyway, so the report opens at once.
        record, owner_token, _document = await create_record(get_runtime(request), collection, job, draw_now=True)
    except TrendAuditError as error:
        return await preview_page(request, form, problem=problem_view(error))
    return created_redirect(request, collection, record.id, owner_token)


@router.post("/audit", response_class=HTMLResponse, response_model=None)
async def create(request: Request) -> HTMLResponse | RedirectResponse:
    return await run_desk_form(request, check=TREND, make_job=_job, collection=AUDITS)


# History and access ----------------------------------------------------------------------------------

def _key_page(request: Request, error: TrendAuditError | None, next_path: str) -> HTMLResponse:
    problem = problem_view(error) if error else None
    return html("access.html", status=problem.status if problem else 200, noindex=True, problem=problem,
                next_path=safe_next(next_path), page_title="Access key - Trend Audit",
                has_key=has_access(request, request.app.state.settings) and keys_required(request.app.state.settings))


@router.get("/history", response_class=HTMLResponse)
async def history(request: Request, cursor: str | None = None, q: str | None = None) -> HTMLResponse:
    settings: Settings = request.app.state.settings
    try:
        require_access(request, settings, "Listing audits")
    except (AccessDenied, TooManyAttempts) as error:
        return _key_page(request, error, "/history")
    try:
        page = await run_in_threadpool(list_history, get_runtime(request).audits, limit=HISTORY_PAGE_SIZE,
                                       cursor=(cursor or None) and cursor[:64], q=q)
    except InputError as error:
        return html("history.html", status=problem_view(error).status, noindex=True, problem=problem_view(error),
                    items=(), next_cursor=None, page_title="History - Trend Audit", first_page=True,
                    q=(q or "")[:SEARCH_MAX_CHARS], search_max=SEARCH_MAX_CHARS)
    return html("history.html", noindex=True, problem=None, items=page.items, next_cursor=page.next_cursor,
                first_page=cursor is None, page_title="History - Trend Audit", q=q or "",
                search_max=SEARCH_MAX_CHARS)


@router.get("/access", response_class=HTMLResponse)
async def access_form(request: Request, next: str = "/") -> HTMLResponse:
    return _key_page(request, None, next)


@router.post("/access", response_class=HTMLResponse, response_model=None)
async def access_submit(request: Request) -> HTMLResponse | RedirectResponse:
    settings: Settings = request.app.state.settings
    async with request.form(max_files=0, max_fields=5) as raw:
        key = str(raw.get("key") or "")[:500]
        next_path = safe_next(str(raw.get("next") or "/"))
        forget = raw.get("forget") is not None
    if forget:
        response = RedirectResponse(next_path, status_code=303)
        forget_key(response, is_secure(request))
        return response
    if not keys_required(settings):
        return RedirectResponse(next_path, status_code=303)
    try:
        check_key(request, key, settings)
    except (AccessDenied, TooManyAttempts) as error:
        return _key_page(request, error, next_path)
    response = RedirectResponse(next_path, status_code=303)
    remember_key(response, key, is_secure(request))
    return response
