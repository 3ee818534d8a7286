"""The report's charts look the same under the strict Content-Security-Policy as matplotlib drew them.

Each chart is drawn twice: as matplotlib writes it (style attributes and a stylesheet) on a page with no
policy, and as the service serves it (presentation attributes) on a page with the service's policy.
Chromium's screenshots of the two must match pixel for pixel; and matplotlib's own SVG under the policy
must not, which shows the comparison can fail.
"""

from __future__ import annotations

import io
import json

import numpy as np
import pytest
from PIL import Image

import app.report.figures as figures
from app.report.chart_cache import chart_file, clear_chart_cache
from app.report.charts import CHART_NAMES
from app.report.svg_attributes import UnsupportedStyle, declarations, presentation_attributes
from app.security import PAGE_POLICY
from report.documents import sample_document


@pytest.fixture(scope="module")
def drawn():
    """{name: (matplotlib's own inline SVG, the served inline SVG)} for every report chart."""
    document = json.loads(sample_document())
    served = {}
    clear_chart_cache()
    for name in CHART_NAMES:
        served[name] = chart_file("csp-test", document, name, "inline")
    clear_chart_cache()
    original = {}
    real = figures.presentation_attributes
    figures.presentation_attributes = lambda svg: svg
    try:
        for name in CHART_NAMES:
            original[name] = chart_file("csp-test", document, name, "inline")
    finally:
        figures.presentation_attributes = real
        clear_chart_cache()
    return {name: (original[name], served[name]) for name in CHART_NAMES}


# A <meta> policy ignores frame-ancestors (and says so on the console); every other directive applies.
META_POLICY = "; ".join(d for d in PAGE_POLICY.split("; ") if not d.startswith("frame-ancestors"))


def _page(svg: str, policy: str | None) -> str:
    meta = f'<meta http-equiv="Content-Security-Policy" content="{policy}">' if policy else ""
    return f"<!doctype html><html><head>{meta}</head><body>{svg}</body></html>"


def _pixels(browser, html: str) -> tuple[np.ndarray, list[str]]:
    context = browser.new_context(viewport={"width": 900, "height": 700})
    page = context.new_page()
    messages: list[str] = []
    page.on("console", lambda m: messages.append(m.text))
    page.set_content(html)
    shot = page.locator("svg").first.screenshot()
    context.close()
    return np.asarray(Image.open(io.BytesIO(shot)).convert("RGB"), dtype=np.int16), messages


@pytest.mark.parametrize("name", CHART_NAMES)
def test_served_chart_has_no_inline_style(drawn, name):
    original, served = drawn[name]
    assert 'style="' in original and "<style" in original  # what matplotlib writes: the rewrite has work to do
    assert 'style="' not in served and "<style" not in served


@pytest.mark.parametrize("name", CHART_NAMES)
def test_chart_under_the_policy_matches_matplotlib_pixel_for_pixel(browser, drawn, name):
    original, served = drawn[name]
    expected, _ = _pixels(browser, _page(original, None))
    shown, messages = _pixels(browser, _page(served, META_POLICY))
    assert not [m for m in messages if "Content Security Policy" in m], messages
    assert shown.shape == expected.shape
    differing = np.any(shown != expected, axis=2)
    assert differing.mean() == 0.0, f"{differing.sum()} of {differing.size} pixels differ"

    # matplotlib's own SVG under the same policy loses its colours: the comparison above can fail.
    blocked, blocked_messages = _pixels(browser, _page(original, META_POLICY))
    assert any("inline style" in m for m in blocked_messages), blocked_messages
    assert blocked.shape != expected.shape or np.any(blocked != expected, axis=2).mean() > 0.01


def test_style_rewrite_keeps_precedence_and_refuses_what_it_cannot_keep():
    svg = ('<svg viewBox="0 0 1 1" stroke-linecap="square"><defs><style type="text/css">'
           '*{stroke-linejoin: round; stroke-linecap: butt}</style></defs>'
           '<path d="M 0 0" fill="red" style="fill: #fff; stroke-width: 0.8"/><g style="opacity: 0.5"></g></svg>')
    out = presentation_attributes(svg)
    assert out == ('<svg viewBox="0 0 1 1" stroke-linecap="square" stroke-linejoin="round">'
                   '<path d="M 0 0" fill="#fff" stroke-width="0.8"/><g opacity="0.5"></g></svg>')
    assert declarations("font-size: 9px; font-family: 'DejaVu Sans', sans-serif;") == [
        ("font-size", "9px"), ("font-family", "'DejaVu Sans', sans-serif")]
    for bad in ('<svg><path style="font: 9px serif"/></svg>', '<svg><path style="fill"/></svg>',
                '<svg><style>path{fill: red}</style></svg>', "<svg><style>@import url(x);</style></svg>"):
        with pytest.raises(UnsupportedStyle):
            presentation_attributes(bad)
