"""HTML pages from Jinja2 templates, and the report pages from stored results.

``render_report`` (a pause audit) and ``render_correlation_report`` (a driver-response audit) take
what the store holds (an ``AuditRecord``, or the API's body for one: its id, title and creation time
beside the result document) and render the editor's report. Each draws its charts from the document,
never recomputing a statistic. Autoescaping is on for every
template; the only markup passed through unescaped is the SVG the chart pipeline produced.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from jinja2 import Environment, FileSystemLoader, StrictUndefined, select_autoescape

from app import __version__
from app.report.adjusted_chart import ADJUSTED_CHART_NAME
from app.report.adjustment_context import adjustment_view
from app.report.chart_cache import ChartShelf, ChartView, chart_views
from app.report.chart_sets import CORRELATION_CHARTS
from app.report.charts import CHART_NAMES
from app.report.context import ReportContext, report_context
from app.report.correlation_context import correlation_context
from app.report.history_context import chain_view, changes_view, comparison_view, timeline_view
from app.report.palette import PALETTE_NAME
from app.report.plain_words import GLOSSARY
from app.report.sharing import share_view
from app.settings import shipped_dir

LEAD_CHART = "series"

_environment: Environment | None = None


def environment() -> Environment:
    """One Jinja2 environment per process: templates are parsed once, autoescaped always."""
    global _environment
    if _environment is None:
        env = Environment(loader=FileSystemLoader(str(shipped_dir("templates"))),
                          autoescape=select_autoescape(enabled_extensions=("html", "svg"), default=True),
                          undefined=StrictUndefined, trim_blocks=True, lstrip_blocks=True)
        env.globals.update(software_version=__version__, palette_name=PALETTE_NAME, glossary=GLOSSARY)
        _environment = env
    return _environment


def render_page(template: str, **values: Any) -> str:
    return environment().get_template(template).render(**values)


@dataclass(frozen=True)
class StoredResult:
    """What a report needs from the store, whether it came as a record or as the API's body for one."""

    id: str
    title: str
    created_at: Any
    document: dict[str, Any]
    source: dict[str, Any] | None
    report_url: str | None


def stored_result(stored: Any) -> StoredResult:
    if hasattr(stored, "result_document"):
        return StoredResult(stored.id, stored.title, stored.created_at, stored.result_document,
                            (stored.input_document or {}).get("source"), None)
    if isinstance(stored, Mapping):
        return StoredResult(str(stored["id"]), str(stored.get("title") or ""), stored.get("created_at"), dict(stored),
                            stored.get("source"), stored.get("report_url"))
    raise TypeError("a report needs a stored record or the API's body for one (a mapping with 'id')")


@dataclass(frozen=True)
class OwnerNotice:
    """Shown once, on the page the browser lands on after creating a record: the token that can delete it."""

    token: str
    noun: str  # "audit", "driver-and-response audit"
    api_url: str  # the record's API address, for deleting it from a script


def report_parts(audit: Any, *, source: Mapping[str, Any] | None = None, base_url: str = "",
                 shelf: ChartShelf | None = None, draw_missing: bool = True
                 ) -> tuple[ReportContext, tuple[ChartView, ...]]:
    stored = stored_result(audit)
    context = report_context(audit_id=stored.id, title=stored.title, created_at=stored.created_at,
                             document=stored.document, source=dict(source or stored.source or {}), base_url=base_url,
                             permalink=stored.report_url)
    return context, chart_views(stored.id, stored.document, shelf=shelf, draw_missing=draw_missing)


def report_values(audit: Any, *, source: Mapping[str, Any] | None = None, base_url: str = "",
                  owner: OwnerNotice | None = None, shelf: ChartShelf | None = None,
                  chain: Mapping[str, Any] | None = None, draw_missing: bool = True) -> dict[str, Any]:
    """Everything report.html renders: the context, the adjustment when there is one, the charts in page order;
    ``chain``, the audits this one revised and those revising it, as the service found them; with
    ``draw_missing`` false, charts not drawn yet are left to the browser to fetch from their addresses."""
    context, charts = report_parts(audit, source=source, base_url=base_url, shelf=shelf, draw_missing=draw_missing)
    document = stored_result(audit).document
    by_name = {chart.name: chart for chart in charts}
    adjusted_chart = by_name.get(ADJUSTED_CHART_NAME)
    lead_chart = by_name.get(LEAD_CHART)  # the one chart at the top, for readers who go no further
    evidence = tuple(by_name[name] for name in CHART_NAMES if name in by_name and name != LEAD_CHART)
    in_page_order = ((lead_chart,) if lead_chart else ()) + ((adjusted_chart,) if adjusted_chart else ()) + evidence
    stored = stored_result(audit)
    share = share_view(kind="audit", record_id=stored.id, title=stored.title, created_at=stored.created_at,
                       doc=stored.document, permalink=context.links.permalink, base_url=base_url)
    return {"report": context, "adjustment": adjustment_view(stored.document), "share": share,
            "adjusted_chart": adjusted_chart, "evidence_charts": evidence,
            "lead_chart": lead_chart, "claim": stored.document.get("claim") or {}, "charts": in_page_order,
            "chart_numbers": {chart.name: number for number, chart in enumerate(in_page_order, start=1)},
            "noindex": True, "page_title": f"{context.title} - Trend Audit", "owner": owner,
            "changes": changes_view(document), "timeline": timeline_view(document),
            "chain": chain_view(document, dict(chain) if chain else None),
            "chain_on_delete": (chain or {}).get("on_delete")}


def render_report(audit: Any, *, source: Mapping[str, Any] | None = None, base_url: str = "",
                  owner: OwnerNotice | None = None, shelf: ChartShelf | None = None,
                  chain: Mapping[str, Any] | None = None, draw_missing: bool = True) -> str:
    """The report page for one stored audit, as a complete HTML document; with ``owner``, the page just after
    creating it, which shows the owner token once. ``shelf`` is where its charts may already be kept."""
    return render_page("report.html", **report_values(audit, source=source, base_url=base_url, owner=owner,
                                                      shelf=shelf, chain=chain, draw_missing=draw_missing))


def correlation_values(correlation: Any, *, source: Mapping[str, Any] | None = None, base_url: str = "",
                       owner: OwnerNotice | None = None, shelf: ChartShelf | None = None,
                       draw_missing: bool = True) -> dict[str, Any]:
    stored = stored_result(correlation)
    context = correlation_context(record_id=stored.id, title=stored.title, created_at=stored.created_at,
                                  document=stored.document, source=dict(source or stored.source or {}),
                                  base_url=base_url, permalink=stored.report_url)
    charts = chart_views(stored.id, stored.document, CORRELATION_CHARTS, shelf, draw_missing)
    share = share_view(kind="correlation", record_id=stored.id, title=stored.title, created_at=stored.created_at,
                       doc=stored.document, permalink=context.links.permalink, base_url=base_url)
    return {"report": context, "charts": charts, "share": share, "noindex": True, "page_title": f"{context.title} - Trend Audit",
            "chart_numbers": {chart.name: number for number, chart in enumerate(charts, start=1)}, "owner": owner}


def render_correlation_report(correlation: Any, *, source: Mapping[str, Any] | None = None, base_url: str = "",
                              owner: OwnerNotice | None = None, shelf: ChartShelf | None = None,
                              draw_missing: bool = True) -> str:
    """The report page for one stored driver-response correlation audit, from its record or the API's body."""
    return render_page("correlation.html", **correlation_values(correlation, source=source, base_url=base_url,
                                                                owner=owner, shelf=shelf, draw_missing=draw_missing))


def render_comparison(comparison: Any, *, source: Mapping[str, Any] | None = None, base_url: str = "",
                      owner: OwnerNotice | None = None, shelf: ChartShelf | None = None) -> str:
    """The page of one stored comparison: the datasets' verdicts side by side, one chart, the agreement."""
    stored = stored_result(comparison)
    permalink = stored.report_url or f"{base_url.rstrip('/')}/comparisons/{stored.id}"
    created = stored.created_at.strftime("%Y-%m-%d %H:%M UTC") if hasattr(stored.created_at, "strftime") \
        else str(stored.created_at or "")
    return render_page("comparison.html", comparison=comparison_view(stored.document), document=stored.document,
                       record={"id": stored.id, "title": stored.title, "created_at": created,
                               "permalink": permalink, "json": f"/api/v1/comparisons/{stored.id}",
                               "csv": f"/api/v1/comparisons/{stored.id}/data.csv",
                               "delete": f"/comparisons/{stored.id}/delete"},
                       owner=owner, noindex=True, page_title=f"{stored.title} - Trend Audit")
