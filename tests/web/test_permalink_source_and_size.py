"""The permanent link shows the data's source; an oversized browser upload gets the desk's page, not JSON."""

import numpy as np


def _series():
    years = np.arange(1950, 2025)
    values = 0.02 * (years - 1950) + 0.1 * np.sin(years * 1.7)
    return {"time": [int(y) for y in years], "value": [round(float(v), 4) for v in values]}


def test_the_permalink_report_shows_the_source(client):
    body = {"title": "Invented claim", "series": _series(), "claim": {"start": 1998, "end": 2012, "kind": "pause"},
            "options": {"simulations": 200, "seed": 5},
            "source": {"name": "Invented Weather Office", "url": "https://example.org/data", "notes": "Invented notes"}}
    created = client.post("/api/v1/audits", json=body)
    assert created.status_code == 201
    page = client.get(created.json()["report_url"])
    assert page.status_code == 200
    for text in ("Invented Weather Office", "https://example.org/data", "Invented notes"):
        assert text in page.text


def test_an_oversized_browser_upload_gets_the_desk_page(client):
    too_big = b"time,value\n" + b"2000,1\n" * 1_000_000  # about 7 MB, over the 5 MB default
    browser = client.post("/preview", files={"file": ("big.csv", too_big, "text/csv")},
                          headers={"Accept": "text/html"})
    assert browser.status_code == 413
    assert browser.headers["content-type"].startswith("text/html")
    script = client.post("/api/v1/audits", files={"file": ("big.csv", too_big, "text/csv")},
                         headers={"Accept": "application/json"})
    assert script.status_code == 413
    assert script.headers["content-type"].startswith("application/problem+json")
