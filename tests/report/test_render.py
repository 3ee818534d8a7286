"""The report page: verdict first, then the evidence, the checks, the methods, the cautions and the provenance."""

from __future__ import annotations

import json
import re

from app.report.context import VERDICT_LABELS, report_context, safe_href
from app.report.numbers import Rate, format_time
from app.report.render import render_report
from app.store import AuditRecord
from report.documents import CREATED, sample_document, stored_body
from report.outline import outline

CITATIONS = ("Santer et al. (2008)", "Foster &amp; Rahmstorf (2011)", "Weatherhead et al. (1998)", "Andrews (1993)",
             "Bai &amp; Perron (1998, 2003)", "Hamed &amp; Rao (1998)", "Sen’s (1968)", "Mann 1945", "Kendall 1975")


def test_the_claim_and_verdict_come_first_then_one_chart_then_the_evidence_in_detail(document):
    html = render_report(stored_body(json.dumps(document)))
    order = outline(html).order
    headings = [item for item in order if item.startswith("h")]
    assert headings[:3] == ["h1:Has it stopped?", "h2:The claim", "h2:" + document["verdict"]["headline"]]
    assert headings[3].startswith("h3:1. The series")  # the one chart in the top part
    assert headings[4:6] == ["h2:The evidence in detail", "h2:The key numbers"]
    assert order.index("figure") < order.index("h2:The evidence in detail")
    later = [item for item in headings if item.startswith("h2:")]
    assert later.index("h2:Cautions") < later.index("h2:Methods and sources") < later.index("h2:Where the data came from")
    assert VERDICT_LABELS[document["verdict"]["code"]] in html
    assert document["verdict"]["summary"].replace("'", "&#39;") in html


def test_five_figures_each_with_a_caption_and_a_text_alternative(document):
    html = render_report(stored_body(json.dumps(document)))
    assert html.count("<figure") == 5 and html.count("<figcaption>") == 5
    assert html.count('role="img"') == 5 and html.count("<desc id=") == 5
    for name in ("series", "null", "sensitivity", "segments", "detectability"):
        assert f'href="/audits/AbCdEfGhIjKlMnOpQrStUvWx/charts/{name}.svg"' in html
        assert f'href="/audits/AbCdEfGhIjKlMnOpQrStUvWx/charts/{name}.png"' in html


def test_every_id_on_the_page_is_unique(document):
    ids = outline(render_report(stored_body(json.dumps(document)))).ids
    assert len(ids) == len(set(ids))


def test_key_numbers_carry_ranges_in_the_audits_rate_unit(document):
    html = render_report(stored_body(json.dumps(document)))
    rate = Rate.of(document)
    assert rate.text(document["long_term"]["slope"]) in html
    assert f"95% range {rate.range_text(document['window']['ci'])}" in html
    assert "per decade" in html
    document["rate"] = {"unit": "per century", "factor": 100.0}
    assert "per century" in render_report(stored_body(json.dumps(document), audit_id="other"))


def test_robustness_methods_cautions_provenance_and_downloads(document):
    html = render_report(stored_body(json.dumps(document)))
    assert "Does it hold under other assumptions?" in html
    assert html.count('<td class="holds') == len(document["robustness"])
    assert "What would change this verdict" in html
    for item in document["verdict"]["what_would_change"]:
        assert item.replace("'", "&#39;") in html
    for citation in CITATIONS:
        assert citation in html, citation
    methods = html.split('id="methods"', 1)[1]
    for program in ("strucchange", "statsmodels", "R package", "gretl"):
        assert program not in methods, program  # the methods cite papers, never another program
    assert "A statistical audit is not attribution." in html
    assert "The results rest on the noise model." in html
    assert "Check with a domain scientist before publishing." in html
    assert document["inputs"]["sha256"] in html
    assert str(document["seed"]) in html and f"Trend Audit {document['software_version']}" in html
    assert "2025-03-14 09:26 UTC" in html
    assert 'href="/api/v1/audits/AbCdEfGhIjKlMnOpQrStUvWx"' in html
    assert 'href="/api/v1/audits/AbCdEfGhIjKlMnOpQrStUvWx/data.csv"' in html


def test_reports_ask_not_to_be_indexed_and_print_cleanly(document):
    html = render_report(stored_body(json.dumps(document)))
    assert '<meta name="robots" content="noindex, nofollow">' in html
    assert '<link rel="stylesheet" href="/static/desk.css">' in html
    assert "http://" not in re.sub(r'xmlns(:xlink)?="http://www\.w3\.org/[^"]+"', "", html)  # no outside assets


def test_a_stored_record_brings_its_source_and_a_configured_public_address(document):
    record = AuditRecord(id="RecordId123456789012345x", kind="audit", title="From the store", created_at=CREATED,
                         input_sha256=document["inputs"]["sha256"], seed=document["seed"], software_version="0.1.0",
                         summary={}, input_document={"source": {"name": "Provincial Met Office", "url":
                                                                "https://example.org/data", "notes": "Version 4"}},
                         result_document=document)
    html = render_report(record, base_url="https://audit.example.net/")
    assert "Provincial Met Office" in html and "Version 4" in html
    assert '<a href="https://example.org/data" rel="noopener noreferrer nofollow">' in html
    assert 'value="https://audit.example.net/audits/RecordId123456789012345x"' in html
    body = {**stored_body(json.dumps(document)), "report_url": "https://x.example/audits/AbC"}
    assert 'value="https://x.example/audits/AbC"' in render_report(body)


def test_only_web_addresses_become_links():
    assert safe_href("https://example.org/a?b=c") == "https://example.org/a?b=c"
    assert safe_href("http://example.org") == "http://example.org"
    for bad in ("javascript:alert(1)", "JAVASCRIPT:alert(1)", "data:text/html,<b>", "//evil.example", "ftp://x.y",
                " javascript:alert(1)", "example.org", ""):
        assert safe_href(bad) is None, bad


def test_times_are_named_as_the_data_name_them():
    assert format_time(1998.5, "annual") == "1998"
    assert format_time(1998.0, "annual") == "1998"
    assert format_time(2016 + 0.5 / 12, "monthly") == "2016-01"
    assert format_time(2003.375, "quarterly") == "2003-Q2"
    assert format_time(1998.25, "annual") == "1998.25"
    assert format_time(None) == "undetermined"


def test_undetermined_numbers_are_said_in_words(document):
    document["window"]["ci"] = [None, None]
    document["long_term"]["slope"] = None
    context = report_context(audit_id="x", title="t", created_at=CREATED, document=document)
    window = next(n for n in context.key_words if n.label == "The claimed window")
    assert "95% range undetermined" in window.detail[0].text
    assert context.key_words[0].value == "undetermined"


def test_sample_document_is_a_json_round_trip():
    assert json.loads(sample_document()) == json.loads(sample_document())


def test_a_document_with_undetermined_parts_still_renders_every_section(document):
    """An audit whose data could not bound some quantity stores nulls there; the report says so in words."""
    document["cherry_pick"]["slopes"] = [[None] * len(row) for row in document["cherry_pick"]["slopes"]]
    document["cherry_pick"]["claimed_rank_percentile"] = None
    document["detectability"] = {"years_to_detect": None, "window_years": 14.0, "power": None, "curve": []}
    document["spell"].update(histogram={"edges": [], "counts": []}, extremes_histogram={"edges": [], "counts": []},
                             probability=None)
    document["segments"].update(fitted=None, discontinuous={})
    document["long_term"]["ci"] = [None, None]
    html = render_report(stored_body(json.dumps(document), audit_id="undetermined"))
    assert html.count("<figure") == 5
    assert "95% range undetermined" in html
