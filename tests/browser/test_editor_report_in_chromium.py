"""The editor's report in headless Chromium: it fits a phone and a desktop, prints in six A4 pages, previews as a
card when shared, and its verdict cards render with the claim, the verdict and the link."""

from __future__ import annotations

import json
import re

import httpx
import pytest

from app.report.context import VERDICT_LABELS

WIDTHS = (320, 390, 1280)
MAX_PRINTED_PAGES = 6  # our requirement
HOSTILE_TITLE = '<script>alert(1)</script> "><img src=x onerror=alert(1)> & ]]>'
PDF_PAGE = re.compile(rb"/Type\s*/Page(?![a-zA-Z])")  # one page object per printed page (PDF 1.7, section 7.7.3.3)

# The report's five charts; the timeline's chart has a frame of its own (tests/browser/test_history_in_chromium.py).
CHART_BOXES = """() => [...document.querySelectorAll('figure.chart:has(.chart-image)')].map(figure => {
    const box = figure.querySelector('.chart-image'), svg = box.querySelector('svg');
    const outer = box.getBoundingClientRect(), drawn = svg.getBoundingClientRect();
    const view = svg.viewBox.baseVal;
    return {name: figure.id, boxLeft: outer.left, boxRight: outer.right, boxTop: outer.top, boxBottom: outer.bottom,
            left: drawn.left, right: drawn.right, top: drawn.top, bottom: drawn.bottom, width: drawn.width,
            height: drawn.height, aspect: view.height / view.width,
            clipped: box.scrollWidth > box.clientWidth + 1 || box.scrollHeight > box.clientHeight + 1,
            attributeWidth: svg.getAttribute('width')};
})"""


def _new_page(browser, console, width: int):
    context = browser.new_context(viewport={"width": width, "height": 844})
    page = context.new_page()
    page.on("console", console.on_console)
    page.on("pageerror", console.on_page_error)
    return context, page


def _words_before_first_statistic(text: str) -> int:
    """Words an editor reads before the first number that is not a year: a rate, a share, a p-value."""
    match = re.search(r"(?<![\d.-])(?!(?:1[89]|20)\d\d(?!\d))[-+−]?\d[\d.,]*", text)
    return len(text[: match.start()].split()) if match else len(text.split())


@pytest.mark.parametrize("width", WIDTHS)
def test_the_report_fits_the_screen_and_every_chart_shows_its_whole_plot(browser, stored_report, console, artifacts,
                                                                         width):
    context, page = _new_page(browser, console, width)
    try:
        page.goto(stored_report)
        scroll = page.evaluate("() => [document.documentElement.scrollWidth, document.documentElement.clientWidth]")
        assert scroll[0] <= scroll[1], scroll  # no sideways scroll
        charts = page.evaluate(CHART_BOXES)
        assert len(charts) == 5
        for chart in charts:
            assert chart["attributeWidth"] is None, chart  # no fixed pixel width: the viewBox scales it
            assert chart["left"] >= chart["boxLeft"] - 0.5 and chart["right"] <= chart["boxRight"] + 0.5, chart
            assert chart["top"] >= chart["boxTop"] - 0.5 and chart["bottom"] <= chart["boxBottom"] + 0.5, chart
            assert not chart["clipped"], chart
            assert chart["height"] == pytest.approx(chart["width"] * chart["aspect"], rel=0.01), chart  # all of it
        top = page.evaluate("""() => { const end = document.querySelector('.evidence-divider');
            return end.getBoundingClientRect().top + window.scrollY; }""")
        article = page.inner_text(".top-part")
        measures = {"width": width, "top_part_height_px": round(top), "page_height_px":
                    page.evaluate("() => document.documentElement.scrollHeight"),
                    "words_before_first_statistic": _words_before_first_statistic(article)}
        (artifacts / f"report-measures-{width}px.json").write_text(json.dumps(measures, indent=1))
        print(measures)
        if width <= 390:
            assert top <= 2 * 844, measures  # the top part: one phone screen and one scroll (our requirement)
        page.screenshot(path=str(artifacts / f"report-{width}px.png"), full_page=True)
    finally:
        context.close()
    assert console.errors == []


def test_the_report_prints_in_at_most_six_a4_pages(page, stored_report, artifacts):
    page.goto(stored_report)
    page.emulate_media(media="print")
    pdf = page.pdf(format="A4", print_background=True)
    (artifacts / "report-editor-print.pdf").write_bytes(pdf)
    pages = len(PDF_PAGE.findall(pdf))
    print({"printed_pages": pages})
    assert 1 <= pages <= MAX_PRINTED_PAGES
    # Nothing is dropped from print but the site's menus, the copy buttons and the sharing tools.
    shown = page.evaluate("""() => ['#methods', '#cautions', '#robustness', '#glossary', '#provenance', '.top-part',
        '#chart-sensitivity-figure'].map(s => getComputedStyle(document.querySelector(s)).display)""")
    assert "none" not in shown


def test_a_shared_link_previews_the_card_and_stays_out_of_search_engines(page, stored_report):
    page.goto(stored_report)
    meta = page.evaluate("""() => Object.fromEntries([...document.querySelectorAll('meta[property], meta[name]')]
        .map(m => [m.getAttribute('property') || m.getAttribute('name'), m.getAttribute('content')]))""")
    assert meta["og:image"] == stored_report + "/card.png" and meta["twitter:image"] == meta["og:image"]
    assert meta["twitter:card"] == "summary_large_image" and meta["og:url"] == stored_report
    assert meta["og:image:alt"] and meta["robots"] == "noindex, nofollow"
    card = httpx.get(meta["og:image"], timeout=60)
    assert card.status_code == 200 and card.headers["content-type"] == "image/png"


def test_the_copy_button_copies_the_permanent_link(browser, stored_report, console):
    context = browser.new_context(permissions=["clipboard-read", "clipboard-write"])
    page = context.new_page()
    page.on("pageerror", console.on_page_error)
    try:
        page.goto(stored_report)
        button = page.locator(".report-head button[data-copy]")
        assert button.is_visible()
        button.click()
        page.wait_for_function("() => document.querySelector('.report-head [data-copy-status]').textContent !== ''")
        assert page.evaluate("() => navigator.clipboard.readText()") == stored_report
    finally:
        context.close()
    assert console.errors == []


def _card_page(browser, url: str, size: tuple[int, int], path):
    context = browser.new_context(viewport={"width": size[0], "height": size[1]})
    page = context.new_page()
    try:
        page.goto(url)
        texts = " ".join(page.evaluate("() => [...document.querySelectorAll('text')].map(t => t.textContent)"))
        box = page.evaluate("() => { const r = document.documentElement.getBoundingClientRect(); return [r.width, r.height]; }")
        page.screenshot(path=str(path))
        scripts = page.evaluate("() => document.querySelectorAll('script, img, foreignObject').length")
        if size == (1200, 675):  # the words column ends before the chart, which starts 640 pixels in
            crossing = page.evaluate("""() => [...document.querySelectorAll('text')].map(t => t.getBoundingClientRect())
                .filter(r => r.left < 600 && r.top > 60 && r.bottom < 600 && r.right > 636).length""")
            assert crossing == 0
        return " ".join(texts.split()), box, scripts
    finally:
        context.close()


@pytest.mark.parametrize("shape, size", [("wide", (1200, 675)), ("square", (1080, 1080))])
def test_the_verdict_card_renders_the_claim_the_verdict_and_the_link(browser, server, artifacts, shape, size):
    years = list(range(1950, 2025))
    values = [round(0.015 * (y - 1950) + 0.12 * ((y * 7) % 5 - 2) / 2, 3) for y in years]
    answer = httpx.post(f"{server}/api/v1/audits", timeout=120, json={
        "title": HOSTILE_TITLE, "series": {"time": years, "value": values, "label": HOSTILE_TITLE, "units": "°C"},
        "claim": {"start": 1998, "end": 2013, "kind": "pause"}, "options": {"simulations": 200, "seed": 3}})
    assert answer.status_code == 201, answer.text
    body = answer.json()
    report = server + answer.json()["report_url"]
    texts, box, live = _card_page(browser, f"{report}/card.svg?shape={shape}", size,
                                  artifacts / f"card-{shape}.png")
    assert box == [size[0], size[1]]
    assert live == 0  # the hostile title stayed text
    assert "A claimed pause from 1998 to 2013" in texts
    assert VERDICT_LABELS[body["verdict"]["code"]] in texts
    assert body["verdict"]["headline"].split()[0] in texts
    assert report.removeprefix("http://") in texts and "Trend Audit" in texts
    assert "<script>alert(1)</script>" in texts  # shown as the characters typed, never run
    alt = httpx.get(f"{report}/card.txt", timeout=60).text
    assert "A claimed pause from 1998 to 2013" in alt and report.removeprefix("http://") in alt


def test_a_correlation_audit_has_a_card(browser, server, artifacts):
    years = list(range(1960, 2025))
    driver = [315 + 0.012 * (y - 1960) ** 2 + y - 1960 for y in years]
    response = [round(0.01 * (d - 315) + 0.1 * ((y * 7) % 5 - 2) / 2, 3) for y, d in zip(years, driver)]
    answer = httpx.post(f"{server}/api/v1/correlations", timeout=120, json={
        "title": "Does it follow?", "driver": {"time": years, "value": driver, "label": "Driver index", "units": "ppm"},
        "response": {"time": years, "value": response, "label": "Response anomaly", "units": "°C"},
        "options": {"simulations": 200, "seed": 4}})
    assert answer.status_code == 201, answer.text
    report = server + answer.json()["report_url"]
    texts, _, _ = _card_page(browser, f"{report}/card.svg", (1200, 675), artifacts / "card-correlation.png")
    assert "Does Response anomaly follow Driver index" in texts and report.removeprefix("http://") in texts
