"""The report of an audit adjusted for covariates: raw and adjusted side by side, every number from the document."""

from __future__ import annotations

import json
import re

import pytest

from app.errors import NotFound
from app.report.adjustment_context import adjustment_view, lag_text
from app.report.chart_cache import chart_file
from app.report.context import VERDICT_LABELS
from app.report.numbers import Rate
from app.report.render import render_report
from report.documents import adjusted_document, sample_document, stored_body

AUDIT_ID = "AdJuStEdAuDiT0123456789x"


@pytest.fixture
def adjusted():
    return json.loads(adjusted_document())


def test_the_side_by_side_section_shows_both_verdicts(adjusted):
    html = render_report(stored_body(json.dumps(adjusted), audit_id=AUDIT_ID))
    section = html[html.index('<section id="adjusted"'):html.index('<section id="evidence"')]
    measured, after = adjusted["verdict"], adjusted["adjustment"]["audit"]["verdict"]
    assert "As measured and adjusted for ocean_index" in section
    assert section.count('class="verdict verdict-side') == 2
    assert section.index("As measured") < section.index("Adjusted for ocean_index")
    assert measured["headline"] in section and after["headline"] in section
    assert after["summary"].replace("'", "&#39;") in section
    assert VERDICT_LABELS[after["code"]] in section
    assert '<a href="#adjusted">' in html  # listed in the contents


def test_the_factors_table_states_coefficient_range_delay_and_share(adjusted):
    html = render_report(stored_body(json.dumps(adjusted), audit_id=AUDIT_ID))
    factor = adjusted["adjustment"]["factors"][0]
    row = re.search(r'<th scope="row">ocean_index</th>(.*?)</tr>', html, re.S).group(1)
    low, high = factor["ci"]
    assert f"{factor['coefficient']:.3g}" in row and f"({low:.3g} to {high:.3g})" in row
    assert "°C per unit of ocean_index" in row
    assert f"{factor['lag']} months ({factor['lag_years']:.2g} years)" in row
    assert f"{100 * factor['variance_share']:.1f}%" in row


def test_the_key_numbers_side_by_side_come_from_the_two_stored_audits(adjusted):
    rate = Rate.of(adjusted)
    inner = adjusted["adjustment"]["audit"]
    view = adjustment_view(adjusted)
    rows = {row.label: row for row in view.comparison}
    assert rows["Long-term trend"].measured.startswith(rate.text(adjusted["long_term"]["slope"]))
    assert rows["Long-term trend"].adjusted.startswith(rate.text(inner["long_term"]["slope"]))
    assert rows["Trend in the claimed window"].adjusted.startswith(rate.text(inner["window"]["slope"]))
    spread = rows["Spread of the data about the fit (standard deviation)"]
    raw, after = adjusted["adjustment"]["residual_sd_raw"], adjusted["adjustment"]["residual_sd_adjusted"]
    assert spread.measured == f"{raw:.3f} °C" and spread.adjusted == f"{after:.3f} °C"  # both below 1: 3 decimals
    assert str(inner["inputs"]["n"]) in rows["Points audited"].adjusted


def test_the_report_renders_what_was_stored_and_recomputes_nothing(adjusted):
    adjusted["adjustment"]["audit"]["verdict"]["headline"] = "Stored headline of the adjusted audit"
    adjusted["adjustment"]["residual_sd_adjusted"] = 0.123456
    adjusted["adjustment"]["factors"][0]["coefficient"] = 7.654321
    html = render_report(stored_body(json.dumps(adjusted), audit_id="stored-only"))
    assert "Stored headline of the adjusted audit" in html
    assert "0.123 °C" in html
    assert "7.65" in html


def test_the_raw_and_adjusted_chart_follows_the_lead_chart_and_downloads_like_the_others(adjusted):
    html = render_report(stored_body(json.dumps(adjusted), audit_id=AUDIT_ID))
    assert html.count("<figure") == 6 and html.count('role="img"') == 6
    assert '<h3 id="chart-series-heading">1. ' in html  # the one chart in the top part
    assert '<h3 id="chart-adjusted-heading">2. As measured and adjusted for ocean_index</h3>' in html
    assert f'href="/audits/{AUDIT_ID}/charts/adjusted.svg"' in html
    svg = chart_file(AUDIT_ID, adjusted, "adjusted", "inline")
    assert "As measured" in svg and "Adjusted for ocean_index" in svg
    assert "style=" not in svg and "<style" not in svg  # a strict Content-Security-Policy still draws it
    rate = Rate.of(adjusted)
    description = re.search(r"<desc [^>]*>(.*?)</desc>", svg, re.S).group(1)
    assert rate.text(adjusted["long_term"]["slope"]) in description
    assert rate.text(adjusted["adjustment"]["audit"]["long_term"]["slope"]) in description
    assert chart_file(AUDIT_ID, adjusted, "adjusted", "png")[:4] == b"\x89PNG"


def test_an_audit_without_covariates_has_no_adjusted_section_or_chart():
    document = json.loads(sample_document())
    html = render_report(stored_body(json.dumps(document), audit_id="plain"))
    assert 'id="adjusted"' not in html and html.count("<figure") == 5
    assert '<h3 id="chart-series-heading">1. ' in html
    with pytest.raises(NotFound):
        chart_file("plain", document, "adjusted", "svg")


def test_a_hostile_factor_name_is_escaped_in_the_page_and_the_chart():
    hostile = '<script>alert(1)</script>"$\\alpha$'
    document = json.loads(adjusted_document(factor=hostile))
    html = render_report(stored_body(json.dumps(document), audit_id="hostile-factor"))
    assert "<script>alert" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;&#34;$\\alpha$" in html
    svg = chart_file("hostile-factor", document, "adjusted", "svg")
    assert "<script>alert" not in svg and "&lt;script&gt;alert(1)&lt;/script&gt;" in svg and "$\\alpha$" in svg


@pytest.mark.parametrize("lag, years, sampling, text", [
    (0, 0.0, "monthly", "none"),
    (1, 1 / 12, "monthly", "1 month (0.083 years)"),
    (5, 5 / 12, "monthly", "5 months (0.42 years)"),
    (2, 2.0, "annual", "2 years"),
    (1, 1.0, "annual", "1 year"),
    (3, 0.75, "quarterly", "3 quarters (0.75 years)"),
    (None, None, "annual", "undetermined"),
])
def test_delays_are_said_in_the_series_own_steps(lag, years, sampling, text):
    assert lag_text(lag, years, sampling) == text
