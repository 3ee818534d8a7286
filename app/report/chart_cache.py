"""Rendered charts, kept per stored result: compute once, render once, serve many times.

A stored audit never changes (it can only be deleted), so the SVG drawn for a record id and a chart
name stays right for as long as the process lives. The cache is a small LRU in memory, shared by
the report pages and the chart downloads; a process that restarts simply draws again.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from dataclasses import dataclass
from typing import Any

from markupsafe import Markup

from app.errors import Location, NotFound
from app.report.chart_sets import AUDIT_CHARTS, ChartSet
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


def check_chart_name(name: str, document: dict[str, Any], charts: ChartSet = AUDIT_CHARTS) -> None:
    names = charts.names(document)
    if name not in names:
        raise NotFound(f"no chart called '{name[:40]}'", location=Location(field="chart"),
                       fix="Use one of: " + ", ".join(names))


def chart_file(record_id: str, document: dict[str, Any], name: str, fmt: str,
               charts: ChartSet = AUDIT_CHARTS) -> bytes | str:
    """One chart as 'inline' SVG markup, a standalone 'svg' file or 'png' bytes, drawn at most once per process."""
    check_chart_name(name, document, charts)
    if fmt not in FORMATS:
        raise NotFound(f"no chart format '{fmt[:10]}'", location=Location(field="format"), fix="Use .svg or .png")
    key = (charts.kind, record_id, name, fmt)
    cached = _cache.get(key)
    if cached is not None:
        return cached
    spec = charts.specs[name]
    figure = spec.build(document)
    if fmt == "png":
        result: bytes | str = png_bytes(figure)
    else:
        make = inline_svg if fmt == "inline" else standalone_svg
        result = make(figure, name, spec.title(document), spec.description(document))
    _cache.put(key, result)
    return result


def chart_views(record_id: str, document: dict[str, Any], charts: ChartSet = AUDIT_CHARTS) -> tuple[ChartView, ...]:
    """Every chart the document has, ready to inline, with its download addresses."""
    views = []
    for name in charts.names(document):
        spec = charts.specs[name]
        base = f"{charts.base_path}/{record_id}/charts/{name}"
        views.append(ChartView(
            name=name, title=spec.title(document), caption=spec.caption(document),
            description=spec.description(document),
            svg=Markup(chart_file(record_id, document, name, "inline", charts)), svg_url=f"{base}.svg",
            png_url=f"{base}.png"))
    return tuple(views)
