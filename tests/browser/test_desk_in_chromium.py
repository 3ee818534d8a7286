"""The desk in headless Chromium: upload, check, audit, read, print, by keyboard, on a narrow screen."""

from __future__ import annotations

import json
import re

from app.report.context import VERDICT_LABELS
from app.settings import PROJECT_ROOT

CREATED_AUDIT = re.compile(r".*/audits/[A-Za-z0-9_-]+/created$")
CSV_TEXT = "year,anomaly\n" + "\n".join(
    f"{year},{0.015 * (year - 1950) + 0.12 * ((year * 7) % 5 - 2) / 2:.3f}" for year in range(1950, 2025))


def test_upload_check_the_preview_run_the_audit_and_read_the_verdict(page, server, tmp_path, artifacts):
    upload = tmp_path / "invented-anomalies.csv"
    upload.write_text(CSV_TEXT)
    page.goto(server + "/")
    page.screenshot(path=str(artifacts / "home.png"), full_page=True)
    page.set_input_files("#file", str(upload))
    page.get_by_role("button", name="Read the series").click()

    page.wait_for_selector("#preview-title")
    summary = page.inner_text(".read-summary")
    assert "75 of 75 rows" in summary and "once a year" in summary and "1950 to 2024" in summary
    rows = page.locator(".rows-table tbody tr")
    assert rows.first.inner_text().split() == CSV_TEXT.splitlines()[1].split(",")  # the first row as written
    assert rows.last.inner_text().split()[0] == "2024"
    assert page.locator("#time_column").input_value() == "year"
    assert page.locator("#value_column").input_value() == "anomaly"
    assert page.locator(".preview-chart svg[role=img]").count() == 1
    page.screenshot(path=str(artifacts / "preview.png"), full_page=True)

    page.fill("#claim_start", "1998")
    page.fill("#claim_end", "2012")
    page.fill("#title", "Browser upload: has it paused since 1998?")
    page.fill("#units", "°C")
    page.get_by_role("button", name="Run the audit").click()
    page.wait_for_url(CREATED_AUDIT, timeout=120_000)
    assert page.locator("#owner-token-field").input_value()  # shown once, on the page the audit opens on

    label = page.inner_text(".verdict-label")
    assert any(text in label for text in VERDICT_LABELS.values())
    headline = page.inner_text("#verdict-headline")
    assert len(headline) > 20
    assert page.locator("figure.chart").count() == 5
    assert page.locator("figure.chart svg[role=img]").count() == 5
    assert page.locator("#permalink-field").input_value().startswith("http://127.0.0.1:")
    page.screenshot(path=str(artifacts / "report.png"), full_page=True)


def test_a_sample_opens_with_its_claim_ready(page, server):
    catalog = json.loads((PROJECT_ROOT / "sample_series" / "catalog.json").read_text())
    # A sample whose claim is not the form's default kind, so the test sees the sample's claim itself.
    first = next(entry for entry in catalog if entry["suggested_claim"]["kind"] != "pause")
    page.goto(server + "/")
    page.get_by_role("link", name=first["title"]).click()
    page.wait_for_selector("#preview-title")
    assert page.locator("#claim_start").input_value() == str(first["suggested_claim"]["start"])
    assert page.locator("#claim_end").input_value() == str(first["suggested_claim"]["end"])
    assert page.locator("#claim_kind").input_value() == first["suggested_claim"]["kind"]
    assert first["title"] in page.inner_text(".preview")


def test_the_report_prints_cleanly(page, stored_report, artifacts):
    page.set_viewport_size({"width": 794, "height": 1123})  # an A4 page at 96 pixels to the inch
    page.goto(stored_report)
    page.emulate_media(media="print")
    hidden = page.evaluate("""() => ['.masthead nav', '.contents', '.chart-downloads', '.colophon']
        .map(s => getComputedStyle(document.querySelector(s)).display)""")
    assert hidden == ["none"] * 4
    shown = page.evaluate("() => getComputedStyle(document.querySelector('figure.chart')).display")
    assert shown != "none"
    assert page.evaluate("() => getComputedStyle(document.body).backgroundColor") == "rgb(255, 255, 255)"
    pdf = page.pdf(format="A4", print_background=True)
    assert pdf[:5] == b"%PDF-" and len(pdf) > 20_000
    (artifacts / "report-print.pdf").write_bytes(pdf)
    page.screenshot(path=str(artifacts / "report-print.png"), full_page=True)


def test_keyboard_reaches_the_controls(page, server, stored_report):
    page.goto(server + "/")
    page.keyboard.press("Tab")
    assert page.evaluate("() => document.activeElement.textContent.trim()") == "Skip to the content"
    reached = set()
    for _ in range(40):
        page.keyboard.press("Tab")
        reached.add(page.evaluate("""() => { const e = document.activeElement;
            return e.id || e.textContent.trim().slice(0, 40) || e.tagName; }"""))
    assert {"file", "table", "Read the series", "History"} <= reached

    page.goto(stored_report)
    reached = set()
    for _ in range(60):
        page.keyboard.press("Tab")
        reached.add(page.evaluate("() => document.activeElement.tagName + ':' + document.activeElement.textContent.trim().slice(0, 30)"))
    assert any(item.startswith("SUMMARY:The chart in words") for item in reached)
    assert any(item.startswith("A:SVG") for item in reached)
    page.keyboard.press("Enter")  # a download link works from the keyboard as well: no error, no dead end


def test_progress_is_shown_while_the_audit_runs(page, server):
    page.goto(server + "/?sample=quorvane-annual-temperature")
    # Stop the real submission so the page stays put while we look at it.
    page.evaluate("() => document.querySelector('form.audit-form').addEventListener('submit', e => e.preventDefault())")
    page.get_by_role("button", name="Run the audit").click()
    status = page.locator(".audit-form [data-progress]")
    assert status.is_visible()
    assert "Running the audit" in status.inner_text()
    page.wait_for_function("() => document.querySelector('.audit-form button[type=submit]').disabled")


def test_nothing_scrolls_sideways_at_320_pixels(browser, server, stored_report, console, artifacts):
    context = browser.new_context(viewport={"width": 320, "height": 700})
    narrow = context.new_page()
    narrow.on("console", console.on_console)
    narrow.on("pageerror", console.on_page_error)
    try:
        for name, url in (("home", server + "/"), ("sample", server + "/?sample=quorvane-annual-temperature"),
                          ("report", stored_report), ("history", server + "/history")):
            narrow.goto(url)
            widths = narrow.evaluate("() => [document.documentElement.scrollWidth, document.documentElement.clientWidth]")
            assert widths[0] <= widths[1], (name, widths)
            narrow.screenshot(path=str(artifacts / f"{name}-320px.png"), full_page=True)
    finally:
        context.close()
    assert console.errors == []


def test_the_whole_desk_works_without_javascript(browser, server, console):
    context = browser.new_context(java_script_enabled=False)
    plain = context.new_page()
    plain.on("console", console.on_console)
    try:
        plain.goto(server + "/")
        plain.fill("#table", CSV_TEXT)
        plain.get_by_role("button", name="Read the series").click()
        plain.wait_for_selector("#preview-title")
        plain.select_option("#claim_kind", "slowdown")
        plain.fill("#claim_start", "2000")
        plain.fill("#claim_end", "2014")
        plain.get_by_role("button", name="Run the audit").click()
        plain.wait_for_url(CREATED_AUDIT, timeout=120_000)
        assert plain.locator("#owner-token-field").input_value()
        copy_buttons = plain.locator("button[data-copy]").all()  # the token's, the link's, the citation's ...
        assert copy_buttons and all(button.is_hidden() for button in copy_buttons)  # copying needs a script
        assert "slowdown" in plain.inner_text(".claim-kind").lower()
        assert plain.locator("#verdict-headline").inner_text()
        assert plain.locator("figure.chart svg[role=img]").count() == 5
    finally:
        context.close()
    assert console.errors == []
