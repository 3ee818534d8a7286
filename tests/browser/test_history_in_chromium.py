"""A comparison page and a report with its timeline, in Chromium at a phone's and a desktop's width."""

from __future__ import annotations

import httpx
import numpy as np
import pytest

YEARS = list(range(1950, 2025))


def dataset(label: str, seed: int, change: bool = False) -> dict:
    """A steady invented trend with noise of its own seed; with ``change``, flat from 1998 on."""
    rng = np.random.default_rng(seed)
    years = np.array(YEARS, dtype=float)
    trend = 0.02 * (years - 1950)
    if change:
        trend = np.where(years >= 1998, 0.02 * 48, trend)
    return {"time": YEARS, "value": [round(float(v), 4) for v in trend + rng.normal(0, 0.06, years.size)],
            "label": label, "units": "°C"}


@pytest.fixture(scope="module")
def comparison_page(server) -> str:
    answer = httpx.post(f"{server}/api/v1/comparisons", timeout=120, json={
        "title": "Browser test: no warming since 1998, in four datasets",
        "claim": {"start": 1998, "end": 2024, "kind": "pause"},
        "series": [dataset("Agency A", 1), dataset("Agency B", 2), dataset("Agency C", 3),
                   dataset("Agency D with a long label for its name", 4, change=True)],
        "options": {"simulations": 200, "seed": 20261204}})
    assert answer.status_code == 201, answer.text
    return f"{server}{answer.headers['location']}"


@pytest.fixture(scope="module")
def timeline_report(server) -> str:
    answer = httpx.post(f"{server}/api/v1/audits", timeout=120, json={
        "title": "Browser test: a pause claimed in 2010", "series": dataset("Invented anomaly", 5),
        "claim": {"start": 1998, "end": 2009, "kind": "pause", "made_on": "2010-02-01"},
        "options": {"simulations": 200, "seed": 5}})
    assert answer.status_code == 201, answer.text
    assert httpx.get(f"{server}/api/v1/audits/{answer.json()['id']}/timeline", timeout=120).status_code == 200
    return f"{server}{answer.json()['report_url']}"


@pytest.mark.parametrize("width", [390, 1280])
def test_the_comparison_page_reads_at_phone_and_desktop_widths(browser, comparison_page, timeline_report, console,
                                                             artifacts, width):
    context = browser.new_context(viewport={"width": width, "height": 900})
    view = context.new_page()
    view.on("console", console.on_console)
    view.on("pageerror", console.on_page_error)
    try:
        for name, url, chart in (("comparison", comparison_page, "#datasets-chart"),
                                 ("timeline", timeline_report, "#timeline-chart")):
            view.goto(url)
            widths = view.evaluate("() => [document.documentElement.scrollWidth, document.documentElement.clientWidth]")
            assert widths[0] <= widths[1], (name, width, widths)
            # Drawn whole at either width: every mark inside the chart's frame, the frame inside the page.
            frame = view.locator(f".range-chart-frame:has({chart})").bounding_box()
            assert frame is not None and frame["width"] <= width, (name, frame)
            for mark in view.locator(f"{chart} circle").all():
                dot = mark.bounding_box()
                assert frame["x"] <= dot["x"] and dot["x"] + dot["width"] <= frame["x"] + frame["width"], (name, dot)
            view.screenshot(path=str(artifacts / f"{name}-{width}px.png"), full_page=True)
            view.locator(chart).screenshot(path=str(artifacts / f"{name}-chart-{width}px.png"))
        view.goto(comparison_page)
        assert view.locator("#agreement-sentence").inner_text().startswith("Three of four datasets agree")
        assert view.locator(".datasets tbody tr").count() == 4
        assert view.locator("#datasets-chart circle").count() == 4
        view.goto(timeline_report)
        assert view.locator(".timeline-table tbody tr").count() == 17  # 2009 to 2024 (16 year ends), and the day it was said
    finally:
        context.close()
    assert console.errors == []
