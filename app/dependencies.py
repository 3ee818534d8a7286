"""What both front ends (the JSON API and the desk) take from a request: this process's runtime and settings.

FastAPI dependencies, so a test can stand in for the runtime of every route at once.
"""

from __future__ import annotations

from fastapi import Request

from app.service.runtime import Runtime
from app.settings import Settings


def get_runtime(request: Request) -> Runtime:
    return request.app.state.runtime.get()


def get_settings(request: Request) -> Settings:
    return request.app.state.settings


def client_address(request: Request) -> str:
    """Who sent the request, for per-client limits: the peer's address (the forwarded one behind a trusted proxy,
    which the server has already put there)."""
    return request.client.host if request.client else "unknown"
