"""HTML pages from Jinja2 templates, and the report page from a stored audit.

``render_report`` takes what the store holds (an ``AuditRecord``, or the API's body for one audit:
its id, title and creation time beside the result document) and renders the editor's report. It
draws the charts from the document, never recomputing a statistic. Autoescaping is on for every
template; the only markup passed through unescaped is the SVG the chart pipeline produced.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

from jinja2 import Environment, FileSystemLoader, StrictUndefined, select_autoescape

from app import __version__
from app.report.adjusted_chart import ADJUSTED_CHART_NAME
from app.report.adjustment_context import adjustment_view
from app.report.chart_cache import ChartView, chart_views
from app.report.charts import CHART_NAMES
from app.report.context import ReportContext, report_context
from app.report.palette import PALETTE_NAME
from app.settings import PROJECT_ROOT

TEMPLATES_DIR = PROJECT_ROOT / "templates"

_environment: Environment | None = None


def environment(directory: Path = TEMPLATES_DIR) -> Environment:
    """One Jinja2 environment per process: templates are parsed once, autoescaped always."""
    global _environment
    if _environment is None:
        env = Environment(loader=FileSystemLoader(str(directory)),
                          autoescape=select_autoescape(enabled_extensions=("html", "svg"), default=True),
                          undefined=StrictUndefined, trim_blocks=True, lstrip_blocks=True)
        env.globals.update(software_version=__version__, palette_name=PALETTE_NAME)
        _environment = env
    return _environment


def render_page(template: str, **values: Any) -> str:
    return environment().get_template(template).render(**values)


def _unpack(audit: Any) -> tuple[str, str, Any, dict[str, Any], dict[str, Any] | None, str | None]:
    """(id, title, created_at, result document, source, report URL) from a record or from the API's body."""
    if hasattr(audit, "result_document"):
        source = (audit.input_document or {}).get("source")
        return audit.id, audit.title, audit.created_at, audit.result_document, source, None
    if isinstance(audit, Mapping):
        return (str(audit["id"]), str(audit.get("title") or ""), audit.get("created_at"), dict(audit),
                audit.get("source"), audit.get("report_url"))
    raise TypeError("render_report needs an AuditRecord or an audit body (a mapping with 'id')")


def report_parts(audit: Any, *, source: Mapping[str, Any] | None = None,
                 base_url: str = "") -> tuple[ReportContext, tuple[ChartView, ...]]:
    audit_id, title, created_at, document, stored_source, report_url = _unpack(audit)
    context = report_context(audit_id=audit_id, title=title, created_at=created_at, document=document,
                             source=dict(source or stored_source or {}), base_url=base_url, permalink=report_url)
    return context, chart_views(audit_id, document)


def report_values(audit: Any, *, source: Mapping[str, Any] | None = None, base_url: str = "") -> dict[str, Any]:
    """Everything report.html renders: the context, the adjustment when there is one, the charts in page order."""
    context, charts = report_parts(audit, source=source, base_url=base_url)
    _, _, _, document, _, _ = _unpack(audit)
    by_name = {chart.name: chart for chart in charts}
    adjusted_chart = by_name.get(ADJUSTED_CHART_NAME)
    evidence = tuple(by_name[name] for name in CHART_NAMES if name in by_name)
    in_page_order = ((adjusted_chart,) if adjusted_chart else ()) + evidence
    return {"report": context, "adjustment": adjustment_view(document), "adjusted_chart": adjusted_chart,
            "evidence_charts": evidence, "charts": in_page_order,
            "chart_numbers": {chart.name: number for number, chart in enumerate(in_page_order, start=1)},
            "noindex": True, "page_title": f"{context.title} - Trend Audit"}


def render_report(audit: Any, *, source: Mapping[str, Any] | None = None, base_url: str = "") -> str:
    """The report page for one stored audit, as a complete HTML document."""
    return render_page("report.html", **report_values(audit, source=source, base_url=base_url))
