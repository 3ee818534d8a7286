"""A chart never misquotes its input, and the process's chart cache is bounded by size, not by count."""

from __future__ import annotations

import html
import re

from matplotlib.figure import Figure

from app.report import chart_cache
from app.report.figures import labelled_svg

from api.conftest import audit_body, invented_series

# Text that looks like the SVG's own ids and references: matplotlib names its shapes patch_1, line2d_1...
LOOKALIKES = ("Ref #patch_1", "see #line2d_1 and #axes_1", 'id="patch_2" #clip0', "url(#p0123)")


def _texts(svg: str) -> str:
    return html.unescape(" ".join(re.findall(r">([^<>]+)<", svg)))


def test_user_text_that_looks_like_an_id_is_drawn_as_written():
    """The id-prefixing rewrote '#patch_1' inside labels as '#chart-series-patch_1'."""
    figure = Figure(figsize=(3, 2))
    axes = figure.add_subplot()
    for index, text in enumerate(LOOKALIKES):
        axes.plot([0, 1], [index, index + 1], label=text)
    axes.set_title(LOOKALIKES[0])
    axes.set_xlabel(LOOKALIKES[1])
    axes.legend()
    svg = labelled_svg(figure, "series", "a title", "a description")
    drawn = _texts(svg)
    for text in LOOKALIKES:
        assert text in drawn, text
    assert "chart-series-patch" not in drawn
    # The ids themselves are still prefixed, and every reference still finds its target.
    tags = " ".join(re.findall(r"<[A-Za-z][^<>]*>", svg))
    ids = set(re.findall(r'\bid="([^"]+)"', tags))
    assert ids and all(i.startswith("chart-series-") for i in ids)
    for reference in re.findall(r'url\(#([^)]+)\)|xlink:href="#([^"]+)"', tags):
        assert (reference[0] or reference[1]) in ids


def test_the_served_chart_quotes_the_label_exactly(client):
    body = audit_body(series={**invented_series(), "label": "Ref #patch_1", "units": "#line2d_1"})
    created = client.post("/api/v1/audits", json=body)
    assert created.status_code == 201, created.text
    svg = client.get(f"/audits/{created.json()['id']}/charts/series.svg").text
    assert "Ref #patch_1" in _texts(svg)
    assert "chart-series-patch_1" not in _texts(svg)


def test_the_chart_cache_is_bounded_by_bytes():
    """600 entries of an 18 MB report's charts could hold a gigabyte; the cache now counts bytes."""
    cache = chart_cache._LRU(1_000)
    for index in range(50):
        cache.put(("audit", f"r{index}", "svg"), "x" * 300)
    assert cache.held <= 1_000
    assert cache.get(("audit", "r49", "svg")) is not None
    assert cache.get(("audit", "r0", "svg")) is None
    cache.put(("audit", "big", "labelled"), {"series": "y" * 2_000})  # larger than the whole cache: not kept
    assert cache.get(("audit", "big", "labelled")) is None and cache.held <= 1_000
    assert chart_cache.CACHE_BYTES <= 256 * 1024 * 1024
