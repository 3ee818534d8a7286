"""Rendered charts, kept per stored result: compute once, draw once, serve many times.

A stored result never changes (it can only be deleted), so a chart drawn for a record id stays right
for as long as the drawing code does. Drawing all of a report's charts costs a few hundred
milliseconds of matplotlib, far more than templating the page, so charts are looked for in three
places, cheapest first:

1. a small LRU in this process (shared by the report pages and the chart downloads);
2. a ``ChartShelf``: somewhere outside the process that keeps the labelled SVGs of each record
   (the service passes the store's chart table; the report layer only knows the protocol);
3. the document itself: the charts are drawn, then put on the shelf and in the LRU.

What is kept is the labelled SVG of each chart (``figures.labelled_svg``); the inline form for the
page and the standalone file for downloads are cheap rewrites of it. PNGs are drawn on request only.
``CHART_RENDERER`` names the drawing code: a shelf hands back only charts drawn by the same one, so
charts kept by an older release are drawn again rather than shown in an old style.
"""

from __future__ import annotations

import threading
import weakref
from collections import OrderedDict
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any, Protocol

from markupsafe import Markup

from app import __version__
from app.errors import Location, NotFound
from app.report.chart_sets import AUDIT_CHARTS, ChartSet
from app.report.figures import as_inline, as_standalone, drawing_slots, labelled_svg, png_bytes

# Bump when a chart's drawing changes without a release, so kept charts are drawn again.
CHART_REVISION = 3
CHART_RENDERER = f"{__version__}+charts{CHART_REVISION}"
# Bounded by size, not count: one 50,000-point report's charts take about 18 MB, so 600 entries could reach a
# gigabyte. 64 MB holds the charts of dozens of ordinary reports; the store keeps the rest (our requirement).
CACHE_BYTES = 64 * 1024 * 1024
FORMATS = ("inline", "svg", "png")
MEDIA_TYPES = {"svg": "image/svg+xml", "png": "image/png"}


class ChartShelf(Protocol):
    """Keeps each record's labelled chart SVGs beyond this process (the service's store provides one)."""

    def load(self, record_id: str, renderer: str) -> Mapping[str, str] | None:
        """The charts kept for the record by ``renderer``, by name; None (or a partial set) if there are none."""

    def keep(self, record_id: str, renderer: str, charts: Mapping[str, str]) -> None:
        """Keeps the record's charts, replacing any drawn before; a record deleted meanwhile keeps nothing."""


@dataclass(frozen=True)
class ChartView:
    name: str
    title: str
    caption: str
    description: str
    svg: Markup | None  # safe to inline: produced by the chart pipeline, every text escaped; None: not drawn yet
    svg_url: str
    png_url: str


def _size(value: Any) -> int:
    """Bytes (or characters) an entry holds: a chart's text or bytes, or a record's charts by name."""
    if isinstance(value, Mapping):
        return sum(len(name) + len(chart) for name, chart in value.items())
    return len(value)


class _LRU:
    """Least recently used first out, holding at most ``max_bytes`` of charts; one larger entry is not kept."""

    def __init__(self, max_bytes: int) -> None:
        self.max_bytes = max_bytes
        self.held = 0
        self._items: OrderedDict[tuple, tuple[Any, int]] = OrderedDict()
        self._lock = threading.Lock()

    def get(self, key: tuple) -> Any:
        with self._lock:
            if key in self._items:
                self._items.move_to_end(key)
                return self._items[key][0]
        return None

    def put(self, key: tuple, value: Any) -> None:
        size = _size(value)
        with self._lock:
            if key in self._items:
                self.held -= self._items.pop(key)[1]
            if size > self.max_bytes:
                return
            self._items[key] = (value, size)
            self.held += size
            while self.held > self.max_bytes:
                self.held -= self._items.popitem(last=False)[1][1]

    def clear(self) -> None:
        with self._lock:
            self._items.clear()
            self.held = 0


class _OneAtATime:
    """A lock per key, so views of the same record arriving together draw its charts once, not once each."""

    class _KeyLock:
        __slots__ = ("lock", "__weakref__")

        def __init__(self) -> None:
            self.lock = threading.Lock()

    def __init__(self) -> None:
        self._locks: weakref.WeakValueDictionary = weakref.WeakValueDictionary()
        self._guard = threading.Lock()

    def lock_for(self, key: tuple) -> "_OneAtATime._KeyLock":
        with self._guard:
            holder = self._locks.get(key)
            if holder is None:
                holder = self._locks[key] = self._KeyLock()
            return holder


_cache = _LRU(CACHE_BYTES)
_drawing = _OneAtATime()


def clear_chart_cache() -> None:
    """Forgets every chart this process drew or loaded (tests and benchmarks start cold with it)."""
    _cache.clear()


def kept(key: tuple, make: Callable[[], Any]) -> Any:
    """A drawn file kept in this process's LRU under ``key``: made once, served many times (cards use it)."""
    cached = _cache.get(key)
    if cached is None:
        cached = make()
        _cache.put(key, cached)
    return cached


def check_chart_name(name: str, document: dict[str, Any], charts: ChartSet = AUDIT_CHARTS) -> None:
    names = charts.names(document)
    if name not in names:
        raise NotFound(f"no chart called '{name[:40]}'", location=Location(field="chart"),
                       fix="Use one of: " + ", ".join(names))


def draw_charts(document: dict[str, Any], charts: ChartSet = AUDIT_CHARTS,
                names: tuple[str, ...] | None = None) -> dict[str, str]:
    """Draws the document's charts (or the ``names`` among them) as labelled SVGs, by name."""
    drawn = {}
    for name in charts.names(document) if names is None else names:
        spec = charts.specs[name]
        with drawing_slots():
            drawn[name] = labelled_svg(spec.build(document), name, spec.title(document), spec.description(document))
    return drawn


def prepared_charts(record_id: str, document: dict[str, Any], charts: ChartSet = AUDIT_CHARTS,
                    shelf: ChartShelf | None = None) -> Mapping[str, str]:
    """Every chart of the record as labelled SVG: from this process, else from the shelf, else drawn and kept."""
    key = (charts.kind, record_id, "labelled")
    cached = _cache.get(key)
    if cached is not None:
        return cached
    holder = _drawing.lock_for(key)  # held in a local, so the lock lives as long as someone uses it
    with holder.lock:
        cached = _cache.get(key)  # drawn by the view that held the lock before us
        return cached if cached is not None else _load_or_draw(key, record_id, document, charts, shelf)


def _load_or_draw(key: tuple, record_id: str, document: dict[str, Any], charts: ChartSet,
                  shelf: ChartShelf | None) -> Mapping[str, str]:
    prepared = complete_charts(record_id, document, charts, shelf)
    _cache.put(key, prepared)
    return prepared


def complete_charts(record_id: str, document: dict[str, Any], charts: ChartSet, shelf: ChartShelf | None,
                    may_draw: Callable[[], bool] = lambda: True) -> dict[str, str]:
    """The record's charts: those kept on the shelf, and the missing ones drawn one by one and kept with them.

    ``may_draw`` is asked before each chart is drawn; once it says no, drawing stops and what there is (kept
    and drawn so far) is kept and returned, so a caller working in the background can give way at any chart.
    """
    names = charts.names(document)
    kept = dict(shelf.load(record_id, CHART_RENDERER) or {}) if shelf is not None else {}
    ready = {name: kept[name] for name in names if name in kept}
    for name in names:
        if name in ready:
            continue
        if not may_draw():
            break
        ready.update(draw_charts(document, charts, (name,)))
    if shelf is not None and ready and ready != kept:
        shelf.keep(record_id, CHART_RENDERER, ready)
    return ready


def chart_file(record_id: str, document: dict[str, Any], name: str, fmt: str,
               charts: ChartSet = AUDIT_CHARTS, shelf: ChartShelf | None = None) -> bytes | str:
    """One chart as 'inline' SVG markup, a standalone 'svg' file or 'png' bytes, drawn at most once."""
    check_chart_name(name, document, charts)
    if fmt not in FORMATS:
        raise NotFound(f"no chart format '{fmt[:10]}'", location=Location(field="format"), fix="Use .svg or .png")
    key = (charts.kind, record_id, name, fmt)
    cached = _cache.get(key)
    if cached is not None:
        return cached
    if fmt == "png":
        with drawing_slots():
            result: bytes | str = png_bytes(charts.specs[name].build(document))
    else:
        labelled = _labelled_chart(record_id, document, name, charts, shelf)
        result = as_inline(labelled) if fmt == "inline" else as_standalone(labelled)
    _cache.put(key, result)
    return result


def drawn_charts(record_id: str, charts: ChartSet = AUDIT_CHARTS,
                 shelf: ChartShelf | None = None) -> Mapping[str, str]:
    """The record's charts already drawn (in this process or kept on the shelf), by name, drawing none."""
    cached = _cache.get((charts.kind, record_id, "labelled"))
    if cached is not None:
        return cached
    return dict(shelf.load(record_id, CHART_RENDERER) or {}) if shelf is not None else {}


def _labelled_chart(record_id: str, document: dict[str, Any], name: str, charts: ChartSet,
                    shelf: ChartShelf | None) -> str:
    """One chart's labelled SVG: among the record's charts already drawn, else drawn alone and kept beside them
    (a chart file asked for under load need not wait for the rest of its report's charts)."""
    drawn = drawn_charts(record_id, charts, shelf)
    if name in drawn:
        return drawn[name]
    labelled = draw_charts(document, charts, (name,))[name]
    if shelf is not None:  # read again just before keeping: another view may have kept charts meanwhile
        shelf.keep(record_id, CHART_RENDERER, {**(shelf.load(record_id, CHART_RENDERER) or {}), name: labelled})
    return labelled


def chart_views(record_id: str, document: dict[str, Any], charts: ChartSet = AUDIT_CHARTS,
                shelf: ChartShelf | None = None, draw_missing: bool = True) -> tuple[ChartView, ...]:
    """Every chart the document has, ready to inline, with its download addresses. With ``draw_missing`` false
    a chart not drawn yet comes without its SVG (the page then shows it from its download address)."""
    drawn = prepared_charts(record_id, document, charts, shelf) if draw_missing \
        else drawn_charts(record_id, charts, shelf)
    views = []
    for name in charts.names(document):
        spec = charts.specs[name]
        base = f"{charts.base_path}/{record_id}/charts/{name}"
        svg = Markup(as_inline(drawn[name])) if name in drawn else None
        views.append(ChartView(
            name=name, title=spec.title(document), caption=spec.caption(document),
            description=spec.description(document), svg=svg, svg_url=f"{base}.svg", png_url=f"{base}.png"))
    return tuple(views)
