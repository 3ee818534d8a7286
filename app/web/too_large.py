"""A body over the size limit, answered as a desk page when a browser sent it.

The body-size middleware (``BodySizeLimit``, wired around the app in ``app.main``) refuses an oversized
body before any route runs, with an RFC 9457 problem in JSON: right for API clients, a dead end for a
person who chose too big a file in the desk's form. ``too_large_page`` is its hook for requests that ask for HTML: the
desk's first page again, with the problem said at the top, still with status 413.
"""

from __future__ import annotations

from starlette.requests import Request
from starlette.responses import Response

from app.errors import LimitExceeded
from app.web.forms import DeskForm
from app.web.pages import desk
from app.web.problems import problem_view

HTML_TYPES = ("text/html", "application/xhtml+xml")


def wants_html(scope) -> bool:
    """Browsers navigating (a form post included) ask for text/html first; API clients do not ask for it."""
    for name, value in scope.get("headers") or ():
        if name == b"accept":
            accepted = value.decode("latin-1").lower()
            return any(kind in accepted for kind in HTML_TYPES)
    return False


def too_large_page(scope, error: LimitExceeded) -> Response | None:
    """The desk's page for an oversized body, or None when the request did not ask for HTML."""
    if scope.get("type") != "http" or not wants_html(scope) or scope.get("app") is None:
        return None
    response = desk(Request(scope), form=DeskForm(), problem=problem_view(error))
    response.headers["Connection"] = "close"
    return response
