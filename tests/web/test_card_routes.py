"""The verdict card and its text alternative served beside each report, for audits and correlation audits."""

from __future__ import annotations

import re

from report.test_card import png_size

YEARS = list(range(1950, 2025))
VALUES = [round(0.015 * (y - 1950) + 0.12 * ((y * 7) % 5 - 2) / 2, 3) for y in YEARS]


def _audit(client, title: str = "Has it paused?") -> str:
    answer = client.post("/api/v1/audits", json={
        "title": title, "series": {"time": YEARS, "value": VALUES, "label": "Invented anomaly", "units": "°C"},
        "claim": {"start": 1998, "end": 2013, "kind": "pause"}, "options": {"simulations": 200, "seed": 5}})
    assert answer.status_code == 201, answer.text
    return answer.json()["id"]


def test_cards_and_their_text_are_served_in_both_shapes(client):
    audit_id = _audit(client)
    wide = client.get(f"/audits/{audit_id}/card.png")
    assert wide.status_code == 200 and wide.headers["content-type"] == "image/png"
    assert png_size(wide.content) == (1200, 675)
    assert png_size(client.get(f"/audits/{audit_id}/card.png?shape=square").content) == (1080, 1080)
    svg = client.get(f"/audits/{audit_id}/card.svg?shape=square")
    assert svg.headers["content-type"] == "image/svg+xml" and 'width="1080" height="1080"' in svg.text
    text = client.get(f"/audits/{audit_id}/card.txt")
    assert text.headers["content-type"].startswith("text/plain")
    assert f"testserver/audits/{audit_id}" in text.text and "A claimed pause from 1998 to 2013" in text.text
    assert client.get(f"/audits/{audit_id}/card.png?shape=round").status_code == 404
    assert client.get("/audits/NoSuchAuditAtAll0000000/card.png").status_code == 404


def test_the_report_page_previews_the_card_and_shows_its_alt_text(client):
    audit_id = _audit(client)
    page = client.get(f"/audits/{audit_id}").text
    assert f'<meta property="og:image" content="http://testserver/audits/{audit_id}/card.png">' in page
    assert f'<img src="/audits/{audit_id}/card.png"' in page
    alt = client.get(f"/audits/{audit_id}/card.txt").text.strip()
    assert re.search(r'alt="([^"]*)"', page.split('class="card-preview', 1)[1]).group(1) == alt.replace("'", "&#39;")
