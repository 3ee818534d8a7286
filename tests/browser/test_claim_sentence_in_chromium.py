"""From a pasted sentence to a report that shows the claim at its top, in headless Chromium."""

from __future__ import annotations

import re

CREATED_AUDIT = re.compile(r".*/audits/[A-Za-z0-9_-]+/created$")
CSV_TEXT = "year,anomaly\n" + "\n".join(
    f"{year},{0.015 * (year - 1950) + 0.12 * ((year * 7) % 5 - 2) / 2:.3f}" for year in range(1950, 2025))
SENTENCE = "Temperatures have not risen since 1998"


def test_a_pasted_sentence_becomes_the_claim_at_the_top_of_the_report(page, server, artifacts):
    page.goto(server + "/")
    page.fill("#claim_text", SENTENCE)
    page.fill("#claim_claimant", "An Invented Columnist")
    page.fill("#claim_outlet", "The Invented Weekly")
    page.fill("#claim_made_on", "2013-03-01")
    page.fill("#table", CSV_TEXT)
    page.get_by_role("button", name="Read the series").click()

    page.wait_for_selector("#preview-title")
    assert page.locator("#claim_start").input_value() == "1998"
    assert page.locator("#claim_end").input_value() == "2012"
    assert page.locator("#claim_kind").input_value() == "pause"
    marked = page.locator("#claim-reading mark").all_inner_texts()
    assert "1998" in marked and "have not risen" in marked
    page.screenshot(path=str(artifacts / "claim-read.png"), full_page=True)

    page.fill("#claim_end", "2011")  # the fields stay editable after reading
    page.get_by_role("button", name="Run the audit").click()
    page.wait_for_url(CREATED_AUDIT, timeout=120_000)

    claim = page.locator("section.claim")
    assert claim.count() == 1
    text = claim.inner_text()
    assert SENTENCE in text and "An Invented Columnist, The Invented Weekly, 2013-03-01" in text
    assert "1998 to 2011 (14 points)" in text
    top = claim.bounding_box()["y"]
    assert top < page.locator("#evidence-title").bounding_box()["y"]
    assert top < page.locator(".verdict-label").bounding_box()["y"]
    page.screenshot(path=str(artifacts / "claim-report.png"), full_page=True)
