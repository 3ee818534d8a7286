"""The body-size limit and the refusal of encoded bodies, enforced before anything parses the body (the other
limits: ``app.service.limits``)."""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from app.api.problems import problem_for_error, problem_response
from app.errors import Location, UnsupportedMediaType
from app.service.limits import body_too_large

BODY_METHODS = frozenset({"POST", "PUT", "PATCH"})
# RFC 9110 15.5.16: a body in a content coding the server does not read is answered 415. This service reads
# none (a gzip body would otherwise be parsed as raw bytes, and could also slip a small body past the size limit).
PLAIN_CODINGS = frozenset({b"", b"identity"})


class _TooLarge(Exception):
    """Raised from receive() when the streamed body passes the limit; turned into 413 by the middleware."""


class BodySizeLimit:
    """ASGI middleware: 413 problem for bodies over ``max_bytes``.

    A declared Content-Length over the limit is refused before the app runs. A body without one
    (chunked) is counted as it streams; once past the limit, receive() raises, and whatever the app
    tries to answer is replaced by the 413.
    """

    def __init__(self, app, max_bytes: int, html_refusal=None, larger: dict[str, int] | None = None) -> None:
        self.app = app
        self.max_bytes = max_bytes
        self.larger = larger or {}  # exact paths allowed a larger body (a batch of many audits)
        # The desk supplies a page for browsers; API clients (and anyone not asking for HTML) get the problem.
        self.html_refusal = html_refusal

    async def __call__(self, scope, receive, send) -> None:
        if scope["type"] != "http" or scope["method"] not in BODY_METHODS:
            await self.app(scope, receive, send)
            return
        coding = _header(scope["headers"], b"content-encoding")
        if coding is not None and coding.strip().lower() not in PLAIN_CODINGS:
            await self._refuse(scope, send, encoded_body(coding))
            return
        limit = self.larger.get(scope.get("path", ""), self.max_bytes)
        declared = _content_length(scope["headers"])
        if declared is not None and declared > limit:
            await self._refuse(scope, send, limit=limit)
            return

        seen = 0
        exceeded = False
        started = False

        async def counting_receive():
            nonlocal seen, exceeded
            message = await receive()
            if message["type"] == "http.request":
                seen += len(message.get("body", b""))
                if seen > limit:
                    exceeded = True
                    raise _TooLarge()
            return message

        async def guarded_send(message):
            nonlocal started
            if exceeded:
                return  # the app's answer to the interrupted body is dropped; the 413 goes instead
            started = started or message["type"] == "http.response.start"
            await send(message)

        try:
            await self.app(scope, counting_receive, guarded_send)
        except _TooLarge:
            pass
        except Exception:
            if not exceeded:
                raise
        if exceeded and not started:
            await self._refuse(scope, send, limit=limit)

    async def _refuse(self, scope, send, error=None, limit: int | None = None) -> None:
        error = error or body_too_large(limit or self.max_bytes)
        as_page = self.html_refusal is not None and getattr(error, "body_too_large", False)
        response = self.html_refusal(scope, error) if as_page else None
        if response is None:
            status, body = problem_for_error(error, instance=scope.get("path"))
            response = problem_response(status, body, headers={"Connection": "close"})
        await response(scope, _no_receive, send)


async def _no_receive() -> dict[str, Any]:
    return {"type": "http.disconnect"}


def encoded_body(coding: bytes) -> UnsupportedMediaType:
    shown = coding.decode("latin-1")[:40]
    return UnsupportedMediaType(f"the body is sent with Content-Encoding '{shown}', which this service does not "
                                "decode", location=Location(field="Content-Encoding"),
                                fix="Send the body uncompressed, without a Content-Encoding header")


def _header(headers: Iterable[tuple[bytes, bytes]], wanted: bytes) -> bytes | None:
    for name, value in headers:
        if name == wanted:
            return value
    return None


def _content_length(headers: Iterable[tuple[bytes, bytes]]) -> int | None:
    value = _header(headers, b"content-length")
    try:
        return None if value is None else int(value)
    except ValueError:
        return None
