"""The owner token, seen once, and deleting with it from the browser.

The service shows an audit's owner token only in the answer that created it. A browser form post is
answered with a redirect (so reloading never creates a second audit), so the token travels to the one
page that shows it in a short-lived cookie: HttpOnly, SameSite=Strict, scoped to that page's path,
and deleted by the page that reads it. The token never appears in an address, where it would reach
the history, logs and Referer headers; once shown, the link just opens the report.
"""

from __future__ import annotations

from fastapi import Request
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import HTMLResponse, RedirectResponse, Response

from app.dependencies import get_runtime
from app.errors import AccessDenied, TooManyAttempts, TrendAuditError
from app.report.render import OwnerNotice
from app.service.records import RecordKind, delete_record, read_record
from app.settings import Settings
from app.web.access import require_access
from app.web.problems import problem_view
from app.web.reports import RENDERERS
from app.web.responses import NO_STORE, html, html_response, is_secure

CREATED_COOKIE = "trendaudit_created"
CREATED_COOKIE_SECONDS = 600  # long enough to follow the redirect on a slow connection, short enough to forget
MAX_TOKEN_CHARS = 200


def created_redirect(request: Request, collection: RecordKind, record_id: str, owner_token: str) -> RedirectResponse:
    """Sends the browser to the page that shows the new record's owner token, once."""
    page = f"{collection.report(record_id)}/created"
    response = RedirectResponse(page, status_code=303)
    response.set_cookie(CREATED_COOKIE, owner_token, max_age=CREATED_COOKIE_SECONDS, path=page, httponly=True,
                        samesite="strict", secure=is_secure(request))
    return response


async def created_page(request: Request, collection: RecordKind, record_id: str) -> Response:
    settings: Settings = request.app.state.settings
    runtime = get_runtime(request)
    record = await run_in_threadpool(read_record, runtime.audits, collection, record_id)
    token = (request.cookies.get(CREATED_COOKIE) or "")[:MAX_TOKEN_CHARS]
    if not token:  # already shown, or opened from somewhere else: the report is all there is to see
        return RedirectResponse(collection.report(record.id), status_code=303)
    notice = OwnerNotice(token=token, noun=collection.noun, api_url=f"{collection.api_path}/{record.id}")
    render = RENDERERS[collection.kind]
    body = await run_in_threadpool(lambda: render(record, base_url=settings.public_base_url, owner=notice,
                                                  shelf=runtime.chart_shelf(record.id)))
    response = html_response(body, headers=NO_STORE)
    response.delete_cookie(CREATED_COOKIE, path=f"{collection.report(record.id)}/created", httponly=True,
                           samesite="strict", secure=is_secure(request))
    return response


def _not_deleted(collection: RecordKind, error: TrendAuditError, *, back: str | None,
                 key_link: bool = False) -> HTMLResponse:
    problem = problem_view(error)
    return html("notice.html", status=problem.status, noindex=True, problem=problem, back=back, key_link=key_link,
                heading=f"The {collection.noun} was not deleted", message="", page_title="Not deleted - Trend Audit")


async def delete_page(request: Request, collection: RecordKind, record_id: str) -> Response:
    settings: Settings = request.app.state.settings
    async with request.form(max_files=0, max_fields=5) as raw:
        token = str(raw.get("owner_token") or "").strip()[:MAX_TOKEN_CHARS]
    back = collection.report(record_id)
    try:
        require_access(request, settings, f"Deleting {collection.noun_with_article}")
    except (AccessDenied, TooManyAttempts) as error:
        return _not_deleted(collection, error, back=back, key_link=True)
    try:
        chain_note = await run_in_threadpool(delete_record, get_runtime(request).audits, collection, record_id,
                                             token or None)
    except AccessDenied as error:
        # The store words its refusal for API callers (a header); in the browser the token goes in the form.
        error.fix = f"Type the owner token shown once when the {collection.noun} was created"
        return _not_deleted(collection, error, back=back)
    except TrendAuditError as error:
        return _not_deleted(collection, error, back=None)
    return html("notice.html", noindex=True, problem=None, back=None, key_link=False,
                heading=f"The {collection.noun} was deleted",
                message="Its report, its charts and its data are gone from this service, and its link no longer "
                        "works. Copies already downloaded or printed are not affected."
                        + (f" {chain_note}" if chain_note else ""),
                page_title="Deleted - Trend Audit")
