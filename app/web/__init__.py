"""The browser desk: HTML pages for starting, checking and browsing audits, and the files they need."""

from app.web import assets, linking, owners, pages

routers = (pages.router, linking.router, owners.router, assets.router)

__all__ = ["routers"]
