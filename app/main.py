"""The ASGI application: ``create_app(settings)`` wires the layers; ``app`` is what uvicorn serves."""

from __future__ import annotations

import asyncio
from contextlib import asynccontextmanager

from fastapi import FastAPI
from fastapi.openapi.utils import get_openapi

from app import __version__
from app.api import audits, batches, claims, comparisons, correlations, docs, revisions, samples, trend
from app.api.body_size import BodySizeLimit
from app.api.openapi_problems import document_problems
from app.api.problems import install_problem_handlers
from app.api.batch_schemas import BatchRequest
from app.api.history_schemas import ComparisonRequest, RevisionRequest
from app.api.schemas import AuditRequest, CorrelationRequest, MultipartAuditForm
from app.security import install_security_headers
from app.service.batches import BATCHES_PATH
from app.service.runtime import RuntimeHolder
from app.settings import Settings
from app.web import routers as desk_routers
from app.web.same_origin import SameOriginForms
from app.web.too_large import too_large_page

# Bodies read by hand (JSON or multipart on one path) are described here so /docs can show them.
HAND_READ_BODIES = (BatchRequest, AuditRequest, MultipartAuditForm, CorrelationRequest, RevisionRequest, ComparisonRequest)


def _openapi_with(application: FastAPI, models) -> dict:
    if application.openapi_schema is None:
        schema = get_openapi(title=application.title, version=application.version,
                             description=application.description, routes=application.routes)
        document_problems(schema)  # every error is application/problem+json; say so
        components = schema.setdefault("components", {}).setdefault("schemas", {})
        for model in models:
            model_schema = model.model_json_schema(ref_template="#/components/schemas/{model}")
            components.update(model_schema.pop("$defs", {}))
            components[model.__name__] = model_schema
        application.openapi_schema = schema
    return application.openapi_schema


def create_app(settings: Settings | None = None) -> FastAPI:
    settings = settings or Settings()
    runtime = RuntimeHolder(settings, read_item=audits.job_from_item)

    @asynccontextmanager
    async def lifespan(_application: FastAPI):
        runtime.get()  # connect and migrate at start, so a bad database fails the start, not a request
        yield
        runtime.close()

    application = FastAPI(
        title="Trend Audit",
        version=__version__,
        description="Checks whether a short spell in a long series is consistent with its long-term trend. "
                    "Slopes are per year; times are decimal years.",
        lifespan=lifespan,
        docs_url=None,  # served by app.api.docs from local files, not a CDN
        redoc_url=None,
        # Starlette's trailing-slash redirect writes its Location from the request's Host header, which a
        # client chooses: "/x/" is simply not found, and no answer ever points at a host the request named.
        redirect_slashes=False,
    )
    application.state.settings = settings
    application.state.runtime = runtime
    install_problem_handlers(application)
    install_security_headers(application)  # outside everything, so errors of every kind carry the headers
    for router in desk_routers:  # the browser desk: HTML pages, their assets, chart downloads
        application.include_router(router)
    application.add_middleware(BodySizeLimit, max_bytes=settings.max_upload_bytes, html_refusal=too_large_page,
                               larger={BATCHES_PATH: settings.max_batch_bytes})
    application.add_middleware(SameOriginForms, public_base_url=settings.public_base_url)  # before any body is read
    for router in (audits.router, revisions.router, comparisons.router, correlations.router, claims.router,
                   samples.router, trend.router, batches.router, docs.router):
        application.include_router(router)
    application.openapi = lambda: _openapi_with(application, HAND_READ_BODIES)

    @application.get("/healthz", tags=["service"], summary="Liveness check")
    async def healthz() -> dict[str, str]:
        """On the event loop, touching nothing: it answers as long as the server can answer anything."""
        return {"status": "ok", "version": __version__}

    @application.get("/readyz", tags=["service"], summary="Readiness check: the store answers and can be written",
                     responses={503: {"description": "The store is unavailable; the cause in general words"}})
    async def readyz() -> dict[str, str]:
        await asyncio.to_thread(lambda: runtime.get().audits.check_writable())
        return {"status": "ready", "version": __version__}

    return application


app = create_app()
