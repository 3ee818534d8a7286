"""The desk's forms change state (create, delete, sign in and out) only when the browser says the form came
from this site: a defence against cross-site request forgery beside the SameSite=Strict cookies.

Browsers send ``Sec-Fetch-Site`` with every request (Fetch Metadata, W3C 2021): "same-origin" for our own
forms, "none" when a person typed the address; anything else is another site's form. Older browsers send
``Origin`` on every cross-site POST instead; it must name this service (the Host the request was sent to, or
the public base address). A request with neither header is not from a browser that could be tricked (a
script, curl) and passes. The JSON API (``/api/``) takes keys in a header, which no other site can make a
browser send, so it is not checked here.
"""

from __future__ import annotations

from urllib.parse import urlsplit

from starlette.requests import Request

from app.errors import AccessDenied, Location
from app.web.problems import problem_view
from app.web.responses import html

STATE_CHANGING = frozenset({"POST", "PUT", "PATCH", "DELETE"})
OWN_SITE = frozenset({"same-origin", "none"})


def _origin_of(url: str) -> str:
    parts = urlsplit(url)
    return f"{parts.scheme}://{parts.netloc}".lower() if parts.scheme and parts.netloc else ""


def from_this_site(headers, public_base_url: str) -> bool:
    fetch_site = headers.get("sec-fetch-site")
    if fetch_site is not None:
        return fetch_site.strip().lower() in OWN_SITE
    origin = headers.get("origin")
    if origin is None:
        return True
    host = (headers.get("host") or "").lower()
    allowed = {f"http://{host}", f"https://{host}"} if host else set()
    if public_base_url:
        allowed.add(_origin_of(public_base_url))
    return origin.strip().lower() in allowed


class SameOriginForms:
    """ASGI middleware: a desk request that changes state from another site is answered 403 (module docstring)."""

    def __init__(self, app, public_base_url: str = "") -> None:
        self.app = app
        self.public_base_url = public_base_url

    async def __call__(self, scope, receive, send) -> None:
        if (scope["type"] != "http" or scope["method"] not in STATE_CHANGING or scope["path"].startswith("/api/")):
            await self.app(scope, receive, send)
            return
        request = Request(scope)
        if from_this_site(request.headers, self.public_base_url):
            await self.app(scope, receive, send)
            return
        problem = problem_view(AccessDenied(
            "this form was sent from another site", missing_credentials=False, location=Location(field="Origin"),
            fix="Open the desk at this service's own address and send the form from there"))
        response = html("notice.html", status=403, noindex=True, problem=problem, back="/", key_link=False,
                        heading="The form was not accepted", message="", page_title="Not accepted - Trend Audit")
        await response(scope, receive, send)
