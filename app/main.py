"""The ASGI application: ``create_app(settings)`` wires the layers; ``app`` is what uvicorn serves."""

from __future__ import annotations

from fastapi import FastAPI

from app import __version__
from app.api.problems import install_problem_handlers
from app.settings import Settings


def create_app(settings: Settings | None = None) -> FastAPI:
    settings = settings or Settings()
    application = FastAPI(
        title="Trend Audit",
        version=__version__,
        description="Checks whether a short spell in a long series is consistent with its long-term trend.",
    )
    application.state.settings = settings
    install_problem_handlers(application)

    @application.get("/healthz", tags=["service"], summary="Liveness check")
    def healthz() -> dict[str, str]:
        return {"status": "ok", "version": __version__}

    return application


app = create_app()
