"""How the desk answers: HTML pages with the desk's headers."""

from __future__ import annotations

from typing import Any

from fastapi import Request
from fastapi.responses import HTMLResponse

from app.report.render import render_page

NOINDEX = {"X-Robots-Tag": "noindex, nofollow"}
NO_STORE = {"Cache-Control": "no-store"}  # pages that show a secret once must not be kept by any cache


def is_secure(request: Request) -> bool:
    """Whether cookies must be Secure: the service's public address is https, or this request came over https
    (directly, or through a trusted proxy whose forwarded scheme the server applied)."""
    return request.app.state.settings.public_https or request.url.scheme == "https"


def html(template: str, *, status: int = 200, noindex: bool = False, headers: dict[str, str] | None = None,
         **values: Any) -> HTMLResponse:
    body = render_page(template, noindex=noindex, **values)
    return html_response(body, status=status, noindex=noindex, headers=headers)


def html_response(body: str, *, status: int = 200, noindex: bool = True,
                  headers: dict[str, str] | None = None) -> HTMLResponse:
    return HTMLResponse(body, status_code=status,
                        headers={**(NOINDEX if noindex else {}), **(headers or {})})  # CSP etc.: app.security
