"""The driver-and-response audit in the desk, in process: from the preview to the stored report."""

from __future__ import annotations

import math
import re

from web.answers import report_path

SAMPLE = "quorvane-forced-temperature"


def _pair_table() -> str:
    """An invented driver that rises and a response that follows it, with a wiggle of its own."""
    rows = ["year,driver,response"]
    for year in range(1950, 2025):
        driver = 300 + 0.02 * (year - 1950) ** 2
        rows.append(f"{year},{driver:.2f},{0.01 * driver + 0.15 * math.sin(year * 2.1):.3f}")
    return "\n".join(rows)


TABLE = _pair_table()
LINK = {"check": "link", "window_years": "10", "transform": "none", "seed": "9", "title": "Link test"}


def test_a_sample_with_a_driver_column_opens_the_link_form(client):
    html = client.get("/", params={"sample": SAMPLE, "check": "link"}).text
    assert 'action="/correlate"' in html and 'action="/audit"' not in html
    assert re.search(r'<select id="driver_column" name="driver_column"[^>]*>\s*<option value="greenhouse_index" '
                     r'selected>', html)
    assert 'name="window_years"' in html and 'type="radio" name="transform" value="log"' in html
    assert 'name="claim_start"' not in html
    assert 'value="Link check: ' in html  # the sample's title for this kind of check, not its claim's
    home = client.get("/").text
    assert f'href="/?sample={SAMPLE}&amp;check=link"' in home


def test_the_preview_switches_between_the_two_kinds_of_check(client):
    trend = client.post("/preview", data={"table": TABLE, "value_column": "response"}).text
    assert 'action="/audit"' in trend and 'name="switch_to" value="link"' in trend
    link = client.post("/preview", data={"table": TABLE, "value_column": "response", "switch_to": "link"}).text
    assert 'action="/correlate"' in link and '<option value="driver" selected>driver</option>' in link
    assert 'name="switch_to" value="trend"' in link
    back = client.post("/preview", data={"table": TABLE, "check": "link", "switch_to": "trend"}).text
    assert 'action="/audit"' in back


def test_a_pasted_pair_is_audited_and_stored_as_a_correlation(client):
    made = client.post("/correlate", data={**LINK, "table": TABLE, "value_column": "response",
                                           "driver_column": "driver", "driver_label": "Invented driver",
                                           "driver_units": "ppm", "label": "Invented response", "units": "°C"})
    report = report_path(made)
    assert re.fullmatch(r"/correlations/[A-Za-z0-9_-]{22,}", report)
    stored = client.get("/api/v1" + report).json()
    assert stored["kind"] == "correlation" and stored["window_years"] == 10 and stored["seed"] == 9
    assert stored["inputs"]["driver"]["label"] == "Invented driver" and stored["inputs"]["driver"]["units"] == "ppm"
    assert stored["inputs"]["response"]["label"] == "Invented response"
    html = client.get(report).text
    assert stored["verdict"]["headline"].replace("'", "&#39;") in html
    assert "Audit of a link: Invented driver and Invented response" in html
    for name in ("series", "rolling", "null"):
        assert client.get(f"{report}/charts/{name}.svg").status_code == 200
    assert client.get(f"{report}/charts/adjusted.svg").status_code == 404
    assert client.get(report.replace("/correlations/", "/audits/") + "/charts/series.svg").status_code == 404


def test_the_sample_runs_with_the_log_transform_and_reads_per_doubling(client):
    made = client.post("/correlate", data={"sample": SAMPLE, "check": "link", "driver_column": "greenhouse_index",
                                           "transform": "log", "window_years": "15", "seed": "4"})
    stored = client.get("/api/v1" + report_path(made)).json()
    low, high = stored["per_doubling"]["ci"]
    assert low < 2.5 < high  # the sample was built with 2.5 °C per doubling (sample_series/catalog.json)
    assert "per doubling of greenhouse_index" in client.get(report_path(made)).text


def test_history_links_each_kind_to_its_own_report(client):
    link = report_path(client.post("/correlate", data={**LINK, "table": TABLE, "value_column": "response",
                                                       "driver_column": "driver"}))
    trend = report_path(client.post("/audit", data={"table": TABLE, "value_column": "response", "claim_start": "1998",
                                                    "claim_end": "2012", "seed": "1"}))
    html = client.get("/history").text
    assert f'href="{link}"' in html and f'href="{trend}"' in html
    assert "Driver and response" in html and "Trend claim" in html


def test_bad_choices_come_back_on_the_link_form_with_their_field_named(client):
    base = {**LINK, "table": TABLE, "value_column": "response"}
    for fields, label in (({"driver_column": "response"}, "“Driver column”"),
                          ({"driver_column": "driver", "window_years": "soon"}, "“Window length”"),
                          ({"driver_column": "driver", "window_years": "200"}, "“Window length”"),
                          ({"driver_column": "driver", "transform": "square"}, "“How the response follows the driver”")):
        page = client.post("/correlate", data={**base, **fields})
        assert page.status_code == 422, (fields, page.status_code)
        assert label in page.text and 'action="/correlate"' in page.text, fields
    assert client.get("/api/v1/correlations").json()["items"] == []
