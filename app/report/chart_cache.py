"""Rendered charts, kept per audit: compute once, render once, serve many times.

A stored audit never changes (it can only be deleted), so the SVG drawn for an audit id and a chart
name stays right for as long as the process lives. The cache is a small LRU in memory, shared by
the report page and the chart downloads; a process that restarts simply draws again.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from dataclasses import dataclass
from typing import Any

from markupsafe import Markup

from app.errors import Location, NotFound
from app.report.charts import CHART_NAMES, CHARTS
from app.report.figures import inline_svg, png_bytes, standalone_svg

CACHE_ENTRIES = 600  # about 120 audits' worth of charts; an SVG is 20-150 kB
FORMATS = ("inline", "svg", "png")
MEDIA_TYPES = {"svg": "image/svg+xml", "png": "image/png"}


@dataclass(frozen=True)
class ChartView:
    name: str
    title: str
    caption: str
    description: str
    svg: Markup  # safe to inline: produced by the chart pipeline, every text escaped
    svg_url: str
    png_url: str


class _LRU:
    def __init__(self, size: int) -> None:
        self.size = size
        self._items: OrderedDict[tuple, Any] = OrderedDict()
        self._lock = threading.Lock()

    def get(self, key: tuple) -> Any:
        with self._lock:
            if key in self._items:
                self._items.move_to_end(key)
                return self._items[key]
        return None

    def put(self, key: tuple, value: Any) -> None:
        with self._lock:
            self._items[key] = value
            self._items.move_to_end(key)
            while len(self._items) > self.size:
                self._items.popitem(last=False)

    def clear(self) -> None:
        with self._lock:
            self._items.clear()


_cache = _LRU(CACHE_ENTRIES)


def clear_chart_cache() -> None:
    _cache.clear()


def check_chart_name(name: str) -> None:
    if name not in CHARTS:
        raise NotFound(f"no chart called '{name[:40]}'", location=Location(field="chart"),
                       fix="Use one of: " + ", ".join(CHART_NAMES))


def chart_file(audit_id: str, document: dict[str, Any], name: str, fmt: str) -> bytes | str:
    """One chart as 'inline' SVG markup, a standalone 'svg' file or 'png' bytes, drawn at most once per process."""
    check_chart_name(name)
    if fmt not in FORMATS:
        raise NotFound(f"no chart format '{fmt[:10]}'", location=Location(field="format"), fix="Use .svg or .png")
    key = (audit_id, name, fmt)
    cached = _cache.get(key)
    if cached is not None:
        return cached
    spec = CHARTS[name]
    figure = spec.build(document)
    if fmt == "png":
        result: bytes | str = png_bytes(figure)
    else:
        make = inline_svg if fmt == "inline" else standalone_svg
        result = make(figure, name, spec.title(document), spec.description(document))
    _cache.put(key, result)
    return result


def chart_views(audit_id: str, document: dict[str, Any]) -> tuple[ChartView, ...]:
    views = []
    for name in CHART_NAMES:
        spec = CHARTS[name]
        views.append(ChartView(
            name=name, title=spec.title(document), caption=spec.caption(document),
            description=spec.description(document),
            svg=Markup(chart_file(audit_id, document, name, "inline")),
            svg_url=f"/audits/{audit_id}/charts/{name}.svg", png_url=f"/audits/{audit_id}/charts/{name}.png"))
    return tuple(views)
