"""The correlation report: verdict first, the warnings, the key numbers, three labelled charts, methods and
cautions, provenance and downloads; every user string escaped in HTML and in SVG."""

from __future__ import annotations

import json
import re
import xml.etree.ElementTree as ET

import pytest

from app.errors import NotFound
from app.report.chart_cache import chart_file, chart_views
from app.report.chart_sets import AUDIT_CHARTS, CORRELATION_CHARTS
from app.report.correlation_charts import CORRELATION_CHART_NAMES
from app.report.correlation_context import CORRELATION_VERDICT_LABELS, correlation_context
from app.report.render import render_correlation_report
from app.store import AuditRecord
from report.documents import CREATED, correlation_document_text, sample_document, stored_body
from report.outline import outline

RECORD_ID = "CoRrElAtIoN0123456789xyz"
SVG_NS = "{http://www.w3.org/2000/svg}"
HOSTILE = '<script>alert(1)</script> "><img src=x onerror=alert(1)> $\\alpha$ &amp;'


@pytest.fixture
def correlation():
    return json.loads(correlation_document_text())


def _body(document, record_id=RECORD_ID, title="Has the link broken?"):
    return {**stored_body(json.dumps(document), audit_id=record_id, title=title), "kind": "correlation"}


def test_the_verdict_comes_first_then_the_warnings_then_the_numbers(correlation):
    html = render_correlation_report(_body(correlation))
    headings = [item for item in outline(html).order if item.startswith("h")]
    assert headings[:4] == ["h1:Has the link broken?", "h2:" + correlation["verdict"]["headline"],
                            "h2:Read this before quoting a correlation", "h2:The key numbers"]
    assert CORRELATION_VERDICT_LABELS[correlation["verdict"]["code"]] in html
    assert "Granger &amp; Newbold 1974" in html  # the document's own warning about trending series
    assert "Audit of a link: Greenhouse index and Quorvane temperature" in html


def test_key_numbers_come_from_the_stored_document(correlation):
    html = render_correlation_report(_body(correlation))
    doubling = correlation["per_doubling"]
    assert f"{doubling['value']:+.2f} °C" in html and "per doubling of Greenhouse index" in html
    low, high = doubling["ci"]
    assert f"95% range {low:+.2f} to {high:+.2f}".replace("-", "−") in html
    for key in ("r_levels", "r_detrended", "r_differences"):
        assert f"r = {correlation[key]:.2f}".replace("-", "−") in html, key
    share = correlation["rolling"]["share_below_half"]
    assert f"{100 * share:.0f}% of {len(correlation['rolling']['r'])}" in html
    correlation["r_levels"] = 0.123456  # what is stored is what is shown
    assert "r = 0.12" in render_correlation_report(_body(correlation, record_id="changed"))


def test_without_the_log_transform_the_link_is_per_driver_unit():
    document = json.loads(correlation_document_text(transform="none"))
    context = correlation_context(record_id="x", title="t", created_at=CREATED, document=document)
    link = context.key_numbers[0]
    assert link.value.endswith(" °C") and link.detail.startswith("per ppm of Greenhouse index;")


def test_three_figures_each_captioned_with_a_text_alternative_and_downloads(correlation):
    html = render_correlation_report(_body(correlation))
    assert html.count("<figure") == 3 and html.count("<figcaption>") == 3
    assert html.count('role="img"') == 3 and html.count("<desc id=") == 3
    for name in CORRELATION_CHART_NAMES:
        for fmt in ("svg", "png"):
            assert f'href="/correlations/{RECORD_ID}/charts/{name}.{fmt}"' in html
    assert f'href="/api/v1/correlations/{RECORD_ID}"' in html
    assert f'href="/api/v1/correlations/{RECORD_ID}/data.csv"' in html
    ids = outline(html).ids
    assert len(ids) == len(set(ids))


def test_methods_cautions_and_the_page_rules(correlation):
    html = render_correlation_report(_body(correlation))
    for words in ("A statistical audit is not attribution.", "Correlations of trending series mislead.",
                  "The results rest on the noise model.", "Check with a domain scientist before publishing.",
                  "Santer et al. (2008)", "Spurious regressions in econometrics"):
        assert words in html, words
    assert '<meta name="robots" content="noindex, nofollow">' in html
    assert '<link rel="stylesheet" href="/static/desk.css">' in html
    assert "http://" not in re.sub(r'xmlns(:xlink)?="http://www\.w3\.org/[^"]+"', "", html)
    for key in ("driver", "response"):
        assert correlation["inputs"][key]["sha256"] in html
    assert str(correlation["seed"]) in html and "2025-03-14 09:26 UTC" in html


def test_a_stored_record_brings_its_source_and_public_address(correlation):
    record = AuditRecord(id=RECORD_ID, kind="correlation", title="From the store", created_at=CREATED,
                         input_sha256="0" * 64, seed=correlation["seed"], software_version="0.1.0", summary={},
                         input_document={"source": {"name": "Invented bureau", "url": "javascript:alert(1)",
                                                    "notes": "Series v2"}},
                         result_document=correlation)
    html = render_correlation_report(record, base_url="https://audit.example.net/")
    assert "Invented bureau" in html and "Series v2" in html
    assert 'href="javascript:' not in html
    assert f'value="https://audit.example.net/correlations/{RECORD_ID}"' in html


@pytest.mark.parametrize("name", CORRELATION_CHART_NAMES)
def test_each_chart_is_a_labelled_svg_and_a_png(correlation, name):
    svg = chart_file(RECORD_ID, correlation, name, "inline", CORRELATION_CHARTS)
    root = ET.fromstring(svg)
    assert root.get("role") == "img"
    assert root.find(f"{SVG_NS}title").text == CORRELATION_CHARTS.specs[name].title(correlation)
    assert root.find(f"{SVG_NS}desc").text == CORRELATION_CHARTS.specs[name].description(correlation)
    assert "style=" not in svg and "<style" not in svg  # a strict Content-Security-Policy still draws it
    assert chart_file(RECORD_ID, correlation, name, "png", CORRELATION_CHARTS)[:4] == b"\x89PNG"
    assert chart_file(RECORD_ID, correlation, name, "svg", CORRELATION_CHARTS).startswith("<?xml")


def test_chart_descriptions_state_the_numbers(correlation):
    rolling = CORRELATION_CHARTS.specs["rolling"].description(correlation)
    assert f"{len(correlation['rolling']['r'])} windows of 15 years" in rolling
    assert f"{correlation['null']['n_simulations']} simulated records" in rolling
    series = CORRELATION_CHARTS.specs["series"].description(correlation)
    assert "per doubling of Greenhouse index" in series and f"{correlation['r_detrended']:.2f}" in series


def test_correlation_and_audit_charts_never_share_a_cache_entry(correlation):
    audit = json.loads(sample_document())
    first = chart_file("same-id", correlation, "series", "inline", CORRELATION_CHARTS)
    second = chart_file("same-id", audit, "series", "inline", AUDIT_CHARTS)
    assert first != second
    with pytest.raises(NotFound):
        chart_file("same-id", correlation, "sensitivity", "svg", CORRELATION_CHARTS)
    with pytest.raises(NotFound):
        chart_file("same-id", correlation, "adjusted", "svg", CORRELATION_CHARTS)
    assert [view.name for view in chart_views("same-id", correlation, CORRELATION_CHARTS)] == list(
        CORRELATION_CHART_NAMES)


def test_hostile_labels_units_and_title_are_escaped_in_html_and_svg():
    document = json.loads(correlation_document_text(driver_label=HOSTILE, driver_units=HOSTILE,
                                                    response_label=HOSTILE, response_units="$x^2$"))
    html = render_correlation_report(_body(document, record_id="hostile", title=HOSTILE))
    own_card = re.sub(r'<img src="/correlations/[A-Za-z0-9_-]+/card\.png"', "", html)  # the page's card preview
    assert "<script>alert" not in html and "<img" not in own_card
    assert "&lt;script&gt;alert(1)&lt;/script&gt; &#34;&gt;&lt;img src=x onerror=alert(1)&gt;" in html
    assert "$\\alpha$" in html and "&amp;amp;" in html
    for name in CORRELATION_CHART_NAMES:
        for fmt in ("inline", "svg"):
            svg = chart_file("hostile", document, name, fmt, CORRELATION_CHARTS)
            assert "<script" not in svg and "<img" not in svg, name
            ET.fromstring(svg.split("\n", 1)[1] if svg.startswith("<?xml") else svg)  # still well-formed
    series = chart_file("hostile", document, "series", "svg", CORRELATION_CHARTS)
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in series and "$\\alpha$" in series and "$x^2$" in series
