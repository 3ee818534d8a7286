"""The browser desk: start an audit, check what was read, run it, browse the history.

Plain HTML forms posting to plain routes, so the desk works without JavaScript. Every input problem
comes back as the same page with the message at the top (what, where, what to do) and a 4xx status;
the audit itself runs through the service's own path (``app.api.service``) and compute pool.
"""

from __future__ import annotations

import dataclasses
from typing import Any

from fastapi import APIRouter, Request
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import HTMLResponse, RedirectResponse

from app.api.limits import check_string_lengths
from app.api.runtime import Runtime
from app.api.samples import find_sample, load_catalog, read_sample
from app.api.service import audit_options, compute_document, job_from_csv, series_payload, store_audit
from app.audit import Claim
from app.errors import AccessDenied, InputError, Location, TrendAuditError
from app.ingest import IngestOptions, ParsedTable, read_csv_text
from app.ingest.decode import decode_text
from app.report.chart_cache import chart_views
from app.report.context import CLAIM_WORDS
from app.report.render import render_page
from app.settings import Settings
from app.web.access import (check_key, forget_key, has_access, keys_required, remember_key, require_access,
                            safe_next)
from app.web.forms import DeskForm, form_choices, read_form, with_defaults
from app.web.periods import first_time_in, last_time_in
from app.web.preview import PreviewView, preview_view
from app.web.problems import ProblemView, problem_view

router = APIRouter(include_in_schema=False)

SAMPLE_SOURCE = "Trend Audit sample series (invented data)"
HTML_HEADERS = {"X-Content-Type-Options": "nosniff", "Referrer-Policy": "same-origin",
                "Content-Security-Policy": "default-src 'self'; img-src 'self' data:; style-src 'self' 'unsafe-inline'; "
                                           "script-src 'self'; object-src 'none'; base-uri 'none'; "
                                           "form-action 'self'; frame-ancestors 'none'"}
NOINDEX = {"X-Robots-Tag": "noindex, nofollow"}
HISTORY_PAGE_SIZE = 25


def _runtime(request: Request) -> Runtime:
    return request.app.state.runtime.get()


def _secure(request: Request) -> bool:
    return request.url.scheme == "https"


def html(template: str, *, status: int = 200, noindex: bool = False, **values: Any) -> HTMLResponse:
    body = render_page(template, noindex=noindex, **values)
    headers = {**HTML_HEADERS, **(NOINDEX if noindex else {})}
    return HTMLResponse(body, status_code=status, headers=headers)


# The home page and the preview -------------------------------------------------------------------------

def _samples(settings: Settings) -> list[dict[str, Any]]:
    try:
        return load_catalog(settings.samples_dir)
    except (OSError, ValueError):
        return []  # a deployment without the demo files still serves the desk


def _desk(request: Request, *, form: DeskForm, preview: PreviewView | None = None,
          problem: ProblemView | None = None, sample: dict[str, Any] | None = None) -> HTMLResponse:
    settings: Settings = request.app.state.settings
    return html("home.html", status=problem.status if problem else 200, form=form, preview=preview, problem=problem,
                sample=sample, samples=_samples(settings), needs_key=not has_access(request, settings),
                keys_required=keys_required(settings), page_title="Trend Audit: check a claim about a trend",
                max_upload_mb=round(settings.max_upload_bytes / 2**20, 1), **form_choices(settings))


def _sample_defaults(entry: dict[str, Any]) -> dict[str, str]:
    claim = entry.get("suggested_claim") or {}
    kind = CLAIM_WORDS.get(claim.get("kind", "pause"), "a change")
    title = f"Claim check: {kind} in {entry.get('title', 'the sample')}, {claim.get('start')} to {claim.get('end')}"
    return {"title": title, "label": entry.get("title", ""),
            "units": entry.get("units", ""), "claim_start": str(claim.get("start", "")),
            "claim_end": str(claim.get("end", "")), "claim_kind": str(claim.get("kind", "")),
            "rate_unit": entry.get("rate_unit", ""), "source_name": SAMPLE_SOURCE,
            "source_notes": entry.get("description", "")}


def _sample_filled(form: DeskForm, settings: Settings) -> DeskForm:
    """A sample's own title, units, claim and source fill whatever the person left empty."""
    if not form.sample or form.table.strip():
        return form
    return with_defaults(form, **_sample_defaults(find_sample(settings.samples_dir, form.sample)))


def _ingest_options(form: DeskForm, settings: Settings, sample: dict[str, Any] | None) -> IngestOptions:
    sentinels = form.sentinels()
    if sample is not None:
        sentinels = sentinels or tuple(sample.get("missing_sentinels") or ())
    return IngestOptions(time_column=form.time_column.strip() or None, value_column=form.value_column.strip() or None,
                         decimal_comma=form.decimal_comma, missing_sentinels=sentinels, label=form.label.strip(),
                         units=form.units.strip(), max_points=settings.max_points)


def _table_text(form: DeskForm, settings: Settings) -> tuple[str | bytes, dict[str, Any] | None]:
    """The CSV to read: the pasted or carried-over table, else the chosen sample's file."""
    if form.table.strip():
        return form.table, None
    if form.sample:
        entry = find_sample(settings.samples_dir, form.sample)
        path = (settings.samples_dir / entry["file"]).resolve()
        if settings.samples_dir.resolve() not in path.parents:
            raise InputError("that sample is not available", location=Location(field="sample"),
                             fix="Pick one of the samples listed on the home page")
        return path.read_bytes(), entry
    raise InputError("no series was given", location=Location(field="file"),
                     fix="Upload a CSV file, paste a table, or pick one of the samples")


def _read(form: DeskForm, settings: Settings) -> tuple[ParsedTable, dict[str, Any] | None]:
    text, sample = _table_text(form, settings)
    return read_csv_text(text, _ingest_options(form, settings, sample)), sample


def _with_upload(form: DeskForm, data: bytes | None) -> DeskForm:
    """An uploaded file replaces whatever was pasted or picked; its text travels on in the form."""
    if data is None:
        return form
    return dataclasses.replace(form, table=decode_text(data), sample="")


def _chosen_columns(form: DeskForm, table: ParsedTable) -> DeskForm:
    return dataclasses.replace(form, time_column=table.time_column, value_column=table.value_column)


async def _preview_page(request: Request, form: DeskForm, problem: ProblemView | None = None) -> HTMLResponse:
    settings: Settings = request.app.state.settings
    try:
        form = _sample_filled(form, settings)
        table, sample = await run_in_threadpool(_read, form, settings)
    except TrendAuditError as error:
        return _desk(request, form=form, problem=problem or problem_view(error))
    form = _chosen_columns(form, table)
    view = await run_in_threadpool(preview_view, table)
    return _desk(request, form=form, preview=view, problem=problem, sample=sample)


@router.get("/", response_class=HTMLResponse)
async def home(request: Request, sample: str | None = None) -> HTMLResponse:
    if sample:
        return await _preview_page(request, DeskForm(sample=sample[:200]))
    return _desk(request, form=DeskForm())


async def _posted_form(request: Request) -> tuple[DeskForm, str | None]:
    """The posted form, with an uploaded file's text in place of any pasted table; and the file's name."""
    settings: Settings = request.app.state.settings
    async with request.form(max_files=1, max_fields=60, max_part_size=settings.max_upload_bytes) as raw:
        form, data, filename = await read_form(raw, settings.max_upload_bytes)
    return _with_upload(form, data), filename


@router.post("/preview", response_class=HTMLResponse)
async def preview(request: Request) -> HTMLResponse:
    try:
        form, _ = await _posted_form(request)
    except TrendAuditError as error:
        return _desk(request, form=DeskForm(), problem=problem_view(error))
    return await _preview_page(request, form)


# Running the audit -----------------------------------------------------------------------------------

def _job(form: DeskForm, filename: str | None, settings: Settings):
    form = _sample_filled(form, settings)
    table, sample = _read(form, settings)
    times = table.series.time
    check_string_lengths({"label": form.label, "units": form.units, "source_name": form.source_name,
                          "source_url": form.source_url, "source_notes": form.source_notes},
                         settings.max_string_length)
    claim = Claim(start=first_time_in(_required(form.claim_start, "claim_start"), times, "claim_start"),
                  end=last_time_in(_required(form.claim_end, "claim_end"), times, "claim_end"),
                  kind=form.claim_kind.strip() or "pause")
    reference_start, reference_end = form.reference_texts()
    options = audit_options({**form.option_values(),
                             "reference_start": first_time_in(reference_start, times, "reference_start")
                             if reference_start else None,
                             "reference_end": last_time_in(reference_end, times, "reference_end")
                             if reference_end else None}, settings)
    text, _ = _table_text(form, settings)
    ingest = _ingest_options(form, settings, sample)
    job = job_from_csv(text, claim=claim, options=options, settings=settings, title=form.title.strip(),
                       time_column=table.time_column, value_column=table.value_column,
                       decimal_comma=ingest.decimal_comma, missing_sentinels=ingest.missing_sentinels,
                       source=form.source(), filename=filename or (sample or {}).get("file"))
    # The API's CSV path names the series after its column; the desk lets the person say what it measures.
    series = dataclasses.replace(job.series, label=table.series.label, units=table.series.units)
    return dataclasses.replace(job, series=series,
                               input_document={**job.input_document, "series": series_payload(series)})


def _required(text: str, field: str) -> str:
    if not text.strip():
        raise InputError("this field is empty", location=Location(field=field),
                         fix="Give the first and last year (or month) of the claimed window")
    return text.strip()


@router.post("/audit", response_class=HTMLResponse, response_model=None)
async def create(request: Request) -> HTMLResponse | RedirectResponse:
    settings: Settings = request.app.state.settings
    try:
        form, filename = await _posted_form(request)
    except TrendAuditError as error:
        return _desk(request, form=DeskForm(), problem=problem_view(error))
    try:
        require_access(request, settings, "Creating an audit")
        runtime = _runtime(request)
        job = await run_in_threadpool(_job, form, filename, settings)
        document = await runtime.pool.run(compute_document, job)
        record, _owner_token = await run_in_threadpool(store_audit, runtime.audits, job, document)
    except TrendAuditError as error:
        return await _preview_page(request, form, problem=problem_view(error))
    # Draw the report's charts now, while the person waits anyway, so the report itself opens at once.
    await run_in_threadpool(chart_views, record.id, document)
    return RedirectResponse(f"/audits/{record.id}", status_code=303)


# History and access ----------------------------------------------------------------------------------

def _key_page(request: Request, error: TrendAuditError | None, next_path: str) -> HTMLResponse:
    problem = problem_view(error) if error else None
    return html("access.html", status=problem.status if problem else 200, noindex=True, problem=problem,
                next_path=safe_next(next_path), page_title="Access key - Trend Audit",
                has_key=has_access(request, request.app.state.settings) and keys_required(request.app.state.settings))


@router.get("/history", response_class=HTMLResponse)
async def history(request: Request, cursor: str | None = None) -> HTMLResponse:
    settings: Settings = request.app.state.settings
    try:
        require_access(request, settings, "Listing audits")
    except AccessDenied as error:
        return _key_page(request, error, "/history")
    try:
        page = await run_in_threadpool(_runtime(request).audits.list, limit=HISTORY_PAGE_SIZE,
                                       cursor=(cursor or None) and cursor[:64])
    except InputError as error:
        return html("history.html", status=problem_view(error).status, noindex=True, problem=problem_view(error),
                    items=(), next_cursor=None, page_title="History - Trend Audit", first_page=True)
    return html("history.html", noindex=True, problem=None, items=page.items, next_cursor=page.next_cursor,
                first_page=cursor is None, page_title="History - Trend Audit")


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
        forget_key(response, _secure(request))
        return response
    if not keys_required(settings):
        return RedirectResponse(next_path, status_code=303)
    try:
        check_key(key, settings)
    except AccessDenied as error:
        return _key_page(request, error, next_path)
    response = RedirectResponse(next_path, status_code=303)
    remember_key(response, key, _secure(request))
    return response
