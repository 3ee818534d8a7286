"""The browser desk: HTML pages for starting, checking and browsing audits, the report pages, and the files
they need."""

from app.web import assets, history, linking, pages, records

routers = (pages.router, linking.router, history.router, records.router, records.reports, assets.router)

__all__ = ["routers"]

