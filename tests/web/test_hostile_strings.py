"""Every string a user supplies reaches HTML and SVG escaped: markup stays text, '$' stays a dollar sign."""

from __future__ import annotations

import csv
import io
import re

import pytest

from app.report.render import render_report
from web.answers import report_path

HOSTILE = ('<script>alert(1)</script>', '"><img src=x onerror=alert(1)>', "$\\alpha$", "&amp;", "]]>")
ESCAPED_SCRIPT = "&lt;script&gt;alert(1)&lt;/script&gt;"
CHARTS = ("series", "null", "sensitivity", "segments", "detectability")


def _years_and_values() -> tuple[list[int], list[float]]:
    years = list(range(1950, 2025))
    return years, [round(0.015 * (y - 1950) + 0.12 * ((y * 7) % 5 - 2) / 2, 3) for y in years]


def _assert_no_live_markup(text: str) -> None:
    assert "<script" not in text.lower().replace("<script src=\"/static/desk.js\" defer></script>", "")
    own_card = re.sub(r'<img src="/(audits|correlations)/[A-Za-z0-9_-]+/card\.png"', "", text)  # the page's card preview
    assert "<img" not in own_card and "onerror=alert(1)>" not in text
    assert "]]>" not in text.replace("]]></style>", "")  # matplotlib's own CDATA section ends its stylesheet


def _assert_escaped(text: str, *, svg: bool) -> None:
    _assert_no_live_markup(text)
    assert ESCAPED_SCRIPT in text
    assert "$\\alpha$" in text  # typed text, never typeset as a Greek letter
    assert "&amp;amp;" in text and "]]&gt;" in text
    if not svg:
        assert "&#34;&gt;&lt;img src=x onerror=alert(1)&gt;" in text


@pytest.fixture
def hostile_audit(client):
    """One audit made through the JSON API with a hostile string in every free-text field."""
    text = " ".join(HOSTILE)
    years, values = _years_and_values()
    answer = client.post("/api/v1/audits", json={
        "title": text, "series": {"time": years, "value": values, "label": text, "units": text},
        "claim": {"start": 1998, "end": 2013, "kind": "pause"}, "options": {"simulations": 200, "seed": 5},
        "source": {"name": text, "url": "javascript:alert(1)//" + text, "notes": text}})
    assert answer.status_code == 201, answer.text
    return answer.json()["id"]


def test_report_page_escapes_title_label_and_units(client, hostile_audit):
    page = client.get(f"/audits/{hostile_audit}")
    assert page.status_code == 200
    _assert_escaped(page.text, svg=False)


def test_report_from_the_store_escapes_the_source_and_never_links_a_script_url(client, hostile_audit):
    record = client.app.state.runtime.get().audits.get(hostile_audit)
    html = render_report(record)
    _assert_escaped(html, svg=False)
    assert 'href="javascript:' not in html.lower()
    provenance = html[html.index('id="provenance"'):]
    assert ESCAPED_SCRIPT in provenance[:provenance.index("</section>")]


@pytest.mark.parametrize("name", CHARTS)
def test_chart_files_escape_user_text(client, hostile_audit, name):
    svg = client.get(f"/audits/{hostile_audit}/charts/{name}.svg").text
    _assert_no_live_markup(svg)
    if name in ("series", "segments"):  # the charts that name the series
        _assert_escaped(svg, svg=True)


def test_hostile_column_names_through_the_desk(client):
    years, values = _years_and_values()
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow([HOSTILE[0] + " year", " ".join(HOSTILE)])  # the value column's name becomes the label
    writer.writerows(zip(years, values))
    table = buffer.getvalue()

    preview = client.post("/preview", data={"table": table})
    assert preview.status_code == 200, preview.text[:2000]
    _assert_escaped(preview.text, svg=False)

    made = client.post("/audit", data={"table": table, "claim_start": "1998", "claim_end": "2012",
                                       "claim_kind": "pause", "title": HOSTILE[0], "source_name": HOSTILE[1],
                                       "source_url": HOSTILE[1], "source_notes": " ".join(HOSTILE)})
    assert made.status_code == 303
    report = client.get(report_path(made)).text
    _assert_escaped(report, svg=False)
    series_svg = client.get(report_path(made) + "/charts/series.svg").text
    _assert_escaped(series_svg, svg=True)


def test_a_hostile_error_message_is_escaped_too(client):
    page = client.post("/preview", data={"table": "year,value\n1990,<script>alert(1)</script>\n1991,2\n1992,3"})
    assert 400 <= page.status_code < 500
    _assert_no_live_markup(page.text)
    assert ESCAPED_SCRIPT in page.text or re.search(r"&lt;script&gt;", page.text)


def test_hostile_driver_and_factor_columns_through_the_desk(client):
    years, values = _years_and_values()
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    hostile_column = " ".join(HOSTILE)
    writer.writerow(["year", "value", hostile_column])
    writer.writerows((y, v, round(300 + 0.5 * (y - 1950) + (y % 3), 2)) for y, v in zip(years, values))
    table = buffer.getvalue()

    preview = client.post("/preview", data={"table": table})
    assert preview.status_code == 200
    _assert_escaped(preview.text, svg=False)  # the factor's checkbox and its label
    link_form = client.post("/preview", data={"table": table, "switch_to": "link"})
    _assert_escaped(link_form.text, svg=False)  # the driver's select

    adjusted = client.post("/audit", data={"table": table, "claim_start": "1998", "claim_end": "2012",
                                           "covariate_columns": hostile_column})
    report = report_path(adjusted)
    _assert_escaped(client.get(report).text, svg=False)
    _assert_escaped(client.get(f"{report}/charts/adjusted.svg").text, svg=True)

    linked = client.post("/correlate", data={"table": table, "check": "link", "driver_column": hostile_column,
                                             "driver_label": hostile_column, "driver_units": HOSTILE[0],
                                             "title": hostile_column, "window_years": "10"})
    report = report_path(linked)
    _assert_escaped(client.get(report).text, svg=False)
    _assert_escaped(client.get(f"{report}/charts/series.svg").text, svg=True)
    history = client.get("/history").text
    _assert_no_live_markup(history)
