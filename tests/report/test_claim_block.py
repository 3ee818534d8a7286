"""The claim at the top of the report, the change over the window in the series' own units, the simulation error
beside the simulated p-value, and ordinals written right."""

from __future__ import annotations

import json

import pytest

from app.report.claim_context import window_change_text
from app.report.context import report_context
from app.report.correlation_context import correlation_context
from app.report.render import render_correlation_report, render_report
from report.documents import CREATED, correlation_document_text, sample_document

HOSTILE = "<script>alert('x')</script> Warming \"stopped\""


def stored(document: dict, **claim) -> dict:
    return {**document, "claim": {**document["claim"], **claim}, "id": "abc", "title": "t", "created_at": CREATED}


@pytest.fixture
def document() -> dict:
    return json.loads(sample_document())


def test_the_change_over_the_window_is_its_slope_times_its_span(document):
    document["window"]["slope"] = 0.03  # per year
    document["claim"].update(start=1998.0, end=2013.0)
    document["inputs"]["units"] = "°C"
    assert window_change_text(document) == "about +0.45 °C over the 15 years"
    document["window"]["slope"] = 4500.0
    document["claim"].update(start=2016.0, end=2020.0)
    document["inputs"]["units"] = "boardings"
    assert window_change_text(document) == "about +18,000 boardings over the 4 years"
    document["window"]["slope"] = -0.0123
    assert window_change_text(document) == "about −0.049 boardings over the 4 years"


def test_the_summary_gives_the_change_and_the_key_numbers_the_simulation_error(document):
    context = report_context(audit_id="abc", title="t", created_at=CREATED, document=document)
    assert "Over the claimed window the series' own trend amounts to about " in context.summary
    change = next(k for k in context.key_words if k.label.startswith("A change during the window"))
    se = document["trend_change"]["p_value_adjusted_se"]
    assert se > 0 and f"simulation error ±{se:.1g}" in " ".join(str(w.text) for w in change.detail)


def test_the_claim_block_is_escaped_and_at_the_top(document):
    page = render_report(stored(document, text=HOSTILE, claimant="<i>Someone</i>", outlet="Weekly",
                                made_on="2013-03-01", source_url="javascript:alert(1)"))
    assert "<script>alert" not in page and "&lt;script&gt;" in page
    assert "&lt;i&gt;Someone&lt;/i&gt;, Weekly, 2013-03-01" in page
    assert 'href="javascript' not in page
    assert page.index('class="claim"') < page.index('id="evidence"')


def test_no_claim_record_no_quote(document):
    assert report_context(audit_id="abc", title="t", created_at=CREATED, document=document).claim is None
    page = render_report(stored(document))
    assert 'class="claim-quote"' not in page and 'class="claim-source"' not in page
    assert page.index('class="claim"') < page.index('id="evidence"')  # what was audited is always said


def test_the_correlation_report_shows_its_claim_too():
    document = json.loads(correlation_document_text())
    document["claim"] = {"text": "CO2 rose but it cooled", "claimant": "Someone"}
    context = correlation_context(record_id="abc", title="t", created_at=CREATED, document=document)
    assert context.claim.text == "CO2 rose but it cooled"
    page = render_correlation_report({**document, "id": "abc", "title": "t", "created_at": CREATED})
    assert "CO2 rose but it cooled" in page and "(Someone)" in page
