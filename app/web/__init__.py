"""The browser desk: HTML pages for starting, checking and browsing audits, and the files they need."""

from app.web import assets, pages

routers = (pages.router, assets.router)

__all__ = ["routers"]
