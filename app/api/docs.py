"""The interactive API docs, served with Swagger UI's files from this service rather than a CDN.

The files come from the ``swagger-ui-bundle-v2`` package (Swagger UI 5, which reads OpenAPI 3.1); only the two the page needs are served.
"""

from __future__ import annotations

from pathlib import Path

from fastapi import APIRouter, Request
from fastapi.openapi.docs import get_swagger_ui_html, get_swagger_ui_oauth2_redirect_html
from fastapi.responses import FileResponse, HTMLResponse

from app.errors import Location, NotFound

ASSET_PREFIX = "/docs/assets/"
ASSETS = {"swagger-ui-bundle.js": "text/javascript", "swagger-ui.css": "text/css"}

router = APIRouter(include_in_schema=False)


def _assets_dir() -> Path:
    import swagger_ui_bundle  # imported here: only the docs page needs it

    return Path(swagger_ui_bundle.swagger_ui_path)


@router.get("/docs", response_class=HTMLResponse)
def docs_page(request: Request) -> HTMLResponse:
    return get_swagger_ui_html(openapi_url="/openapi.json", title=f"{request.app.title} API",
                               swagger_js_url=ASSET_PREFIX + "swagger-ui-bundle.js",
                               swagger_css_url=ASSET_PREFIX + "swagger-ui.css",
                               swagger_favicon_url="/static/favicon.svg",
                               oauth2_redirect_url="/docs/oauth2-redirect")


@router.get("/docs/oauth2-redirect", response_class=HTMLResponse)
def docs_oauth2_redirect() -> HTMLResponse:
    return get_swagger_ui_oauth2_redirect_html()


@router.get(ASSET_PREFIX + "{name}")
def docs_asset(name: str) -> FileResponse:
    if name not in ASSETS:
        raise NotFound(f"no docs asset '{name[:60]}'", location=Location(field="name"),
                       fix="The docs page loads its own files; open /docs")
    return FileResponse(_assets_dir() / name, media_type=ASSETS[name],
                        headers={"Cache-Control": "public, max-age=86400"})
