"""The new desk paths in headless Chromium: a driver-and-response audit from a sample, an audit adjusted for a
covariate column, the owner token shown once, and the new pages on a narrow screen and in print."""

from __future__ import annotations

import re

from app.report.context import VERDICT_LABELS
from app.report.correlation_context import CORRELATION_VERDICT_LABELS

CREATED_LINK = re.compile(r".*/correlations/[A-Za-z0-9_-]+/created$")
CREATED_AUDIT = re.compile(r".*/audits/[A-Za-z0-9_-]+/created$")
FORCED = "quorvane-forced-temperature"
MONTHLY = "wrenhollow-point-monthly-temperature"


def _run_link_audit(page, server) -> str:
    page.goto(server + "/")
    page.get_by_role("link", name="Or check whether it follows “greenhouse_index”").click()
    page.wait_for_selector("#driver_column")
    assert page.locator("#driver_column").input_value() == "greenhouse_index"
    page.get_by_label("The same change for each doubling of the driver", exact=False).check()
    page.fill("#window_years", "15")
    page.fill("#driver_label", "Greenhouse index")
    page.get_by_role("button", name="Run the driver and response audit").click()
    page.wait_for_url(CREATED_LINK, timeout=120_000)
    return page.url


def test_a_driver_and_response_audit_from_a_sample_reads_its_verdict(page, server, artifacts):
    created = _run_link_audit(page, server)
    token = page.locator("#owner-token-field").input_value()
    assert len(token) >= 32
    assert page.locator("button[data-copy=owner-token-field]").is_visible()  # the script offers to copy it
    assert page.evaluate("() => document.activeElement.id") == "created"  # announced first
    label = page.inner_text(".verdict-label")
    assert any(text in label for text in CORRELATION_VERDICT_LABELS.values())
    assert len(page.inner_text("#verdict-headline")) > 20
    assert "Granger & Newbold 1974" in page.inner_text(".warnings")
    assert "per doubling of Greenhouse index" in page.inner_text(".key-numbers")
    assert page.locator("figure.chart svg[role=img]").count() == 3
    page.screenshot(path=str(artifacts / "correlation-created.png"), full_page=True)

    page.goto(created)  # the token is shown once: the same address now opens the report alone
    assert re.fullmatch(r".*/correlations/[A-Za-z0-9_-]+", page.url)
    assert page.locator("#owner-token-field").count() == 0
    assert page.locator("#permalink-field").input_value() == page.url
    page.screenshot(path=str(artifacts / "correlation-report.png"), full_page=True)


def test_an_audit_adjusted_for_a_covariate_column_shows_raw_and_adjusted_side_by_side(page, server, artifacts):
    page.goto(server + f"/?sample={MONTHLY}")
    page.wait_for_selector("#preview-title")
    page.get_by_label("Adjust for “ocean_index”").check()
    page.get_by_role("button", name="Run the audit").click()
    page.wait_for_url(CREATED_AUDIT, timeout=120_000)
    sides = page.locator("#adjusted .verdict-side")
    assert sides.count() == 2
    assert sides.nth(0).locator(".side-heading").inner_text().lower() == "as measured"
    assert sides.nth(1).locator(".side-heading").inner_text().lower() == "adjusted for ocean_index"
    for index in range(2):
        assert any(text in sides.nth(index).inner_text() for text in VERDICT_LABELS.values())
    factors = page.inner_text("#adjusted table.factors")
    assert "ocean_index" in factors and "month" in factors
    assert page.locator("#chart-adjusted-figure svg[role=img]").count() == 1
    assert page.locator("figure.chart").count() == 6
    page.locator("#adjusted").screenshot(path=str(artifacts / "adjusted-side-by-side.png"))
    page.screenshot(path=str(artifacts / "adjusted-report.png"), full_page=True)


def test_the_token_deletes_the_audit_from_its_own_report(page, server):
    _run_link_audit(page, server)
    token = page.locator("#owner-token-field").input_value()
    report = page.locator("#permalink-field").input_value()
    page.goto(report)
    page.locator("#delete summary").click()
    page.fill("#owner_token", token)
    page.get_by_role("button", name="Delete for good").click()
    page.wait_for_selector("h1")
    assert "was deleted" in page.inner_text("h1")
    assert page.request.get(report).status == 404  # asked without opening it: a 404 page logs a console error


def test_the_new_pages_fit_320_pixels_and_print_without_the_token(browser, server, console, artifacts):
    context = browser.new_context(viewport={"width": 320, "height": 700})
    narrow = context.new_page()
    narrow.on("console", console.on_console)
    narrow.on("pageerror", console.on_page_error)
    try:
        narrow.goto(server + f"/?sample={FORCED}&check=link")
        _no_sideways_scroll(narrow, "link preview")
        narrow.screenshot(path=str(artifacts / "link-preview-320px.png"), full_page=True)
        narrow.get_by_role("button", name="Run the driver and response audit").click()
        narrow.wait_for_url(CREATED_LINK, timeout=120_000)
        _no_sideways_scroll(narrow, "created")
        narrow.screenshot(path=str(artifacts / "correlation-created-320px.png"), full_page=True)
        narrow.emulate_media(media="print")
        assert narrow.evaluate("() => getComputedStyle(document.getElementById('created')).display") == "none"
        assert narrow.evaluate("() => getComputedStyle(document.getElementById('delete')).display") == "none"
        pdf = narrow.pdf(format="A4", print_background=True)
        assert pdf[:5] == b"%PDF-"
        (artifacts / "correlation-print.pdf").write_bytes(pdf)
        narrow.emulate_media(media="screen")
        narrow.goto(server + "/history")
        _no_sideways_scroll(narrow, "history")
        narrow.screenshot(path=str(artifacts / "history-both-kinds-320px.png"), full_page=True)
    finally:
        context.close()
    assert console.errors == []


def test_the_link_form_is_reached_by_keyboard(page, server):
    page.goto(server + f"/?sample={FORCED}&check=link")
    reached = set()
    for _ in range(60):
        page.keyboard.press("Tab")
        reached.add(page.evaluate("() => document.activeElement.id || document.activeElement.name || "
                                  "document.activeElement.textContent.trim().slice(0, 40)"))
    assert {"driver_column", "window_years", "transform", "driver_label"} <= reached


def _no_sideways_scroll(page, name: str) -> None:
    widths = page.evaluate("() => [document.documentElement.scrollWidth, document.documentElement.clientWidth]")
    assert widths[0] <= widths[1], (name, widths)
