"""The desk's claim, as said: a pasted sentence fills the kind and window, marks its words, reaches the report
and the history, where it can be searched."""

from __future__ import annotations

import re

from web.answers import report_path

CSV = "year,anomaly\n" + "".join(f"{y},{0.015 * (y - 1950) + 0.12 * ((y * 7) % 5 - 2) / 2:.3f}\n"
                                 for y in range(1950, 2025))
SENTENCE = "Temperatures have not risen since 1998, <b>said</b> the columnist"
NO_FILE = {"file": ("", b"", "application/octet-stream")}


def preview(client, **fields):
    return client.post("/preview", data={"table": CSV, **fields}, files=NO_FILE)


def test_a_pasted_sentence_fills_the_kind_and_window_and_marks_its_words(client):
    page = preview(client, claim_text=SENTENCE, claim_made_on="2013-03-01")
    assert page.status_code == 200
    assert re.search(r'id="claim_start"[^>]*value="1998"', page.text)
    assert re.search(r'id="claim_end"[^>]*value="2012"', page.text)  # the last whole year before it was said
    assert re.search(r'<option value="pause" selected', page.text)
    marks = re.findall(r'<mark class="claim-part claim-part-(\w+)"[^>]*>([^<]*)</mark>', page.text)
    assert ("start", "1998") in marks and any(part == "kind" for part, _ in marks)
    assert "<b>said</b>" not in page.text and "&lt;b&gt;said&lt;/b&gt;" in page.text  # escaped, as everything


def test_the_fields_stay_editable_and_reading_again_overrides_them(client):
    kept = preview(client, claim_text=SENTENCE, claim_made_on="2013-03-01", claim_start="2000", claim_end="2010")
    assert re.search(r'id="claim_start"[^>]*value="2000"', kept.text)  # the person's own window is kept
    read = preview(client, claim_text=SENTENCE, claim_made_on="2013-03-01", claim_start="2000", claim_end="2010",
                   read_claim="1")
    assert re.search(r'id="claim_start"[^>]*value="1998"', read.text)


def test_a_sentence_with_no_window_says_so_without_failing_the_page(client):
    page = preview(client, claim_text="The ice is melting", read_claim="1")
    assert page.status_code == 200
    assert 'id="claim-reading"' in page.text and "window" in page.text


def test_the_claim_reaches_the_report_and_the_history(client):
    made = client.post("/audit", files=NO_FILE, data={
        "table": CSV, "check": "trend", "time_column": "year", "value_column": "anomaly", "claim_start": "1998",
        "claim_end": "2012", "claim_kind": "pause", "claim_text": SENTENCE, "claim_claimant": "A. Columnist",
        "claim_outlet": "The Invented Weekly", "claim_made_on": "2013-03-01", "units": "°C"})
    report = client.get(report_path(made)).text
    block = re.search(r'<section class="claim".*?</section>', report, re.S).group(0)
    assert "Temperatures have not risen since 1998, &lt;b&gt;said&lt;/b&gt; the columnist" in block
    assert "A. Columnist, The Invented Weekly, 2013-03-01" in block
    assert "1998 to 2012 (15 points)" in block
    assert report.index('class="claim"') < report.index('id="evidence"')
    assert re.search(r"over the 15 years", report)  # the change over the window, in the series' own units
    history = client.get("/history").text
    assert "A. Columnist" in history and "Temperatures have not risen" in history
    assert "A. Columnist" in client.get("/history", params={"q": "invented weekly"}).text
    assert "A. Columnist" not in client.get("/history", params={"q": "nothing like it"}).text


def test_a_driver_and_response_audit_keeps_the_claim_too(client):
    table = "year,anomaly,co2\n" + "".join(f"{y},{0.015 * (y - 1950) + 0.12 * ((y * 7) % 5 - 2) / 2:.3f},"
                                           f"{310 + 1.6 * (y - 1950):.1f}\n" for y in range(1950, 2025))
    preview_page = client.post("/preview", data={"table": table, "check": "link", "claim_text": SENTENCE},
                               files=NO_FILE)
    assert 'name="claim_text"' in preview_page.text and "Temperatures have not risen" in preview_page.text
    made = client.post("/correlate", files=NO_FILE, data={
        "table": table, "check": "link", "time_column": "year", "value_column": "anomaly", "driver_column": "co2",
        "claim_text": "CO2 rose while it cooled", "claim_claimant": "B. Writer", "simulations": "200"})
    report = client.get(report_path(made)).text
    assert "CO2 rose while it cooled" in report and "(B. Writer)" in report
    assert "B. Writer" in client.get("/history", params={"q": "cooled"}).text
