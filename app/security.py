"""Security headers on every response: pages, JSON, problems, files, charts, and errors of every kind.

The middleware wraps the whole application, outside Starlette's error middleware, so a 500 from an
unexpected exception and a 413 from the body-size limit carry the same headers as a report page.
It sets, replacing whatever a route said:

- ``Content-Security-Policy``: for the desk's own HTML, scripts and styles only from this site and no
  inline code or style at all (the charts use SVG presentation attributes, see
  ``app.report.svg_attributes``), images from this site or data: URIs (a heat map's raster), forms
  posting only here, no plugins, no <base>, no framing. Anything that is not HTML (JSON, CSV, SVG and
  PNG charts, CSS, JS) gets ``default-src 'none'``: a chart opened on its own runs nothing and loads
  nothing but its own embedded raster.
- ``X-Content-Type-Options: nosniff``, ``X-Frame-Options: DENY`` (frame-ancestors for older browsers),
  ``Referrer-Policy: same-origin`` (a report's address is the capability to read it: it must never
  reach another site in a Referer header, e.g. when a reader follows the source link), and
  ``Cross-Origin-Opener-Policy: same-origin``.
- ``X-Robots-Tag: noindex, nofollow`` on everything but the home page and static files: reports,
  charts, history and the API answers are for the people given the link, never for search engines.
- ``Cache-Control: private, no-store`` on everything but the static files: a report, its JSON, its CSV and
  its charts are readable by whoever holds the link, and a shared proxy that kept one would go on serving
  it after the owner deleted it (and to people never given the link). Nothing is kept but the stylesheet,
  the script and the icon, which are the same for everyone.

The /docs page runs Swagger UI from this service's own copy (``app.api.docs``) and starts it with an
inline script. That page (it shows no user input) gets its own policy: its inline script is allowed by
hash, computed from the page as served, never by 'unsafe-inline'; its styles need 'unsafe-inline',
because Swagger UI writes style attributes as it renders (swagger-api/swagger-ui issue 10655, open in 2025).
"""

from __future__ import annotations

import base64
import hashlib
import re
from typing import Any

from starlette.datastructures import MutableHeaders

PAGE_POLICY = ("default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; font-src 'self'; "
               "connect-src 'self'; object-src 'none'; base-uri 'none'; form-action 'self'; frame-ancestors 'none'")
RESOURCE_POLICY = "default-src 'none'; img-src data:; base-uri 'none'; form-action 'none'; frame-ancestors 'none'"
DOCS_POLICY = ("default-src 'self'; script-src 'self' {script_hashes}; style-src 'self' 'unsafe-inline'; "
               "font-src 'self'; img-src 'self' data:; worker-src 'self' blob:; connect-src 'self'; "
               "object-src 'none'; base-uri 'none'; form-action 'self'; frame-ancestors 'none'")
DOCS_PATHS = frozenset({"/docs", "/docs/oauth2-redirect"})
DOCS_PAGE_LIMIT = 256 * 1024  # those pages are about 1 kB; anything far larger is not what the hashes are for

COMMON_HEADERS = {
    "X-Content-Type-Options": "nosniff",
    "X-Frame-Options": "DENY",
    "Referrer-Policy": "same-origin",
    "Cross-Origin-Opener-Policy": "same-origin",
}
NOINDEX = "noindex, nofollow"
NO_STORE = "private, no-store"
INDEXABLE_PATHS = frozenset({"/"})
INDEXABLE_PREFIXES = ("/static/",)

_INLINE_SCRIPT = re.compile(r"<script\b(?![^>]*\bsrc=)[^>]*>(.*?)</script>", re.S | re.I)


def indexable(path: str) -> bool:
    return path in INDEXABLE_PATHS or path.startswith(INDEXABLE_PREFIXES)


def policy_for(content_type: str) -> str:
    return PAGE_POLICY if content_type.split(";")[0].strip().lower() == "text/html" else RESOURCE_POLICY


def docs_policy(html: str) -> str:
    """The docs pages' policy, allowing exactly the inline scripts this page holds."""
    hashes = sorted({"'sha256-" + base64.b64encode(hashlib.sha256(script.encode("utf-8")).digest()).decode() + "'"
                     for script in _INLINE_SCRIPT.findall(html)})
    return DOCS_POLICY.format(script_hashes=" ".join(hashes)).replace("  ", " ")


def secure_headers(headers: MutableHeaders, path: str, policy: str) -> None:
    for name, value in COMMON_HEADERS.items():
        headers[name] = value
    headers["Content-Security-Policy"] = policy
    if not path.startswith(INDEXABLE_PREFIXES):
        headers["Cache-Control"] = NO_STORE
    if not indexable(path):
        headers["X-Robots-Tag"] = NOINDEX


class SecurityHeaders:
    """ASGI middleware: the headers above on every HTTP response (module docstring)."""

    def __init__(self, app) -> None:
        self.app = app

    async def __call__(self, scope, receive, send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        path = scope.get("path", "")
        if path in DOCS_PATHS:
            await self._docs_page(scope, receive, send, path)
            return

        async def send_secured(message: dict[str, Any]) -> None:
            if message["type"] == "http.response.start":
                headers = MutableHeaders(scope=message)
                secure_headers(headers, path, policy_for(headers.get("content-type", "")))
            await send(message)

        await self.app(scope, receive, send_secured)

    async def _docs_page(self, scope, receive, send, path: str) -> None:
        """Holds the (small) page back until its inline scripts can be hashed into the policy."""
        start: dict[str, Any] | None = None
        body = bytearray()

        async def send_hashed(message: dict[str, Any]) -> None:
            nonlocal start
            if message["type"] == "http.response.start":
                start = message
                return
            if message["type"] != "http.response.body" or start is None:
                await send(message)
                return
            body.extend(message.get("body", b""))
            if message.get("more_body", False) and len(body) <= DOCS_PAGE_LIMIT:
                return
            headers = MutableHeaders(scope=start)
            html = body.decode("utf-8", errors="replace")
            is_html = headers.get("content-type", "").startswith("text/html")
            secure_headers(headers, path, docs_policy(html) if is_html else RESOURCE_POLICY)
            await send(start)
            start = None
            await send({"type": "http.response.body", "body": bytes(body), "more_body": message.get("more_body", False)})
            body.clear()

        await self.app(scope, receive, send_hashed)


def install_security_headers(application) -> None:
    """Wraps the application's whole middleware stack, error handling included, in ``SecurityHeaders``."""
    build = application.build_middleware_stack

    def build_secured():
        return SecurityHeaders(build())

    application.build_middleware_stack = build_secured
