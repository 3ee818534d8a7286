"""One mapping from domain errors to RFC 9457 problem details, used for every error the app returns."""

from __future__ import annotations

import logging
from typing import Any

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse
from starlette.exceptions import HTTPException as StarletteHTTPException

from app.errors import PROBLEM_TYPE_BASE, TrendAuditError, problem_body, problem_for_error, retry_after, status_for  # noqa: F401

PROBLEM_MEDIA_TYPE = "application/problem+json"
log = logging.getLogger("trendaudit.api")


def problem_response(status: int, body: dict[str, Any], headers: dict[str, str] | None = None) -> JSONResponse:
    return JSONResponse(body, status_code=status, media_type=PROBLEM_MEDIA_TYPE, headers=headers)


def _validation_where(loc: tuple[Any, ...]) -> str:
    """("body", "covariates", 0, "name") -> "covariates[0].name": the transport part dropped, list positions
    written as the domain errors write them."""
    where = ""
    for part in loc:
        if part in ("body", "query", "path", "header"):
            continue
        where += f"[{part}]" if isinstance(part, int) else (f".{part}" if where else str(part))
    return where or "request"


def install_problem_handlers(app: FastAPI) -> None:
    @app.exception_handler(TrendAuditError)
    async def _domain(request: Request, error: TrendAuditError) -> JSONResponse:
        status, body = problem_for_error(error, instance=request.url.path)
        headers = None
        if retry_after(error) is not None:
            # Closing the connection sends the retry through accept() again, where the kernel may hand it to
            # another server process: a kept-alive connection would bring it back to this full pool.
            headers = {"Retry-After": str(retry_after(error)), "Connection": "close"}
        elif status == 401:
            headers = {"WWW-Authenticate": 'Bearer realm="trendaudit"'}  # RFC 9110 15.5.2: a 401 names its scheme
        return problem_response(status, body, headers)

    @app.exception_handler(RequestValidationError)
    async def _validation(request: Request, error: RequestValidationError) -> JSONResponse:
        faults = [
            {"field": _validation_where(tuple(e.get("loc", ()))), "message": e.get("msg", "invalid")}
            for e in error.errors()
        ]
        first = faults[0] if faults else {"field": "request", "message": "invalid request"}
        body = problem_body(
            status=422, title="The request is not valid", slug="invalid-request",
            detail=f"field '{first['field']}': {first['message']}", instance=request.url.path,
            where={"field": first["field"]}, errors=faults,
            fix=f"Correct '{first['field']}' as the message says, then send the request again",
        )
        return problem_response(422, body)

    @app.exception_handler(StarletteHTTPException)
    async def _http(request: Request, error: StarletteHTTPException) -> JSONResponse:
        title = {404: "Not found", 405: "Method not allowed", 413: "Request body too large"}.get(
            error.status_code, "Request failed")
        where, fix = {404: ("path", "Check the address; the endpoints are listed at /docs"),
                      405: ("method", "Use a method this address accepts; see /docs")}.get(
            error.status_code, ("request", "See /docs for what this service accepts"))
        body = problem_body(status=error.status_code, title=title, detail=str(error.detail),
                            slug="http-" + str(error.status_code), instance=request.url.path,
                            where={"field": where}, fix=fix)
        return problem_response(error.status_code, body, getattr(error, "headers", None))

    @app.exception_handler(Exception)
    async def _unexpected(request: Request, error: Exception) -> JSONResponse:
        # Log the trace for operators; never send it, or a path, to the client.
        log.exception("unexpected error on %s %s", request.method, request.url.path)
        body = problem_body(status=500, title="Internal error", slug="internal",
                            detail="Something went wrong on our side; the request was not stored.",
                            instance=request.url.path)
        return problem_response(500, body)
