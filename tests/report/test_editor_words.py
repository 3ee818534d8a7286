"""The report's words for an editor: the plain paragraph, key numbers that lead with words, plain robustness
headings, the glossary, the claim at the top, the citation and the link preview."""

from __future__ import annotations

import json
import re

from app.report.plain_words import GLOSSARY, ROBUSTNESS_HEADINGS, key_number_words, plain_paragraph, what_would_change
from app.report.charts import claim_span
from app.report.context import claim_text
from app.report.render import render_report
from app.report.sharing import audit_card_face, card_alt_text, claim_brief
from report.documents import sample_document, stored_body

STATISTICS = re.compile(r"\bp\s*[=<>]|[α-ωΑ-Ω]|σ|AICc|AR\(|ARMA")  # what the top part must not show


def _top_part(html: str) -> str:
    return html.split('class="top-part"', 1)[1].split('class="evidence-divider"', 1)[0]


def test_the_plain_paragraph_has_no_p_values_or_greek_and_speaks_in_the_series_units(document):
    text = "".join(piece.text for piece in plain_paragraph(document))
    assert not STATISTICS.search(text), text
    assert "°C" in text and "per decade" in text
    assert "From 1998 to 2012" in text and "long-term trend" in text
    years = document["detectability"]["window_years"]
    change = abs(document["window"]["slope"] * years)
    assert f"about {change:.2g}" in text or f"about {change:.1g}" in text or "almost no change" in text
    assert [piece.term for piece in plain_paragraph(document) if piece.term] == ["trend"]  # linked where first seen


def test_the_top_part_has_claim_verdict_paragraph_one_chart_and_what_would_change(document):
    top = _top_part(render_report(stored_body(json.dumps(document))))
    assert top.index('id="claim-title"') < top.index('id="verdict-headline"') < top.index("<figure") < top.index(
        "What would change this verdict")
    assert top.count("<figure") == 1 and 'id="chart-series-figure"' in top
    words = re.sub(r"<[^>]+>", " ", re.sub(r"<svg.*?</svg>|<details.*?</details>", "", top, flags=re.S))
    assert not STATISTICS.search(words), STATISTICS.search(words)
    brief = what_would_change(document)
    assert 0 < brief.count(". ") + 1 <= 2 and brief.replace("'", "&#39;") in top


def test_key_numbers_lead_with_words_and_keep_the_numbers_beside_them(document):
    numbers = key_number_words(document, "95%")
    window = next(n for n in numbers if n.label == "The claimed window")
    long_term = document["long_term"]["slope"]
    assert window.value.endswith("°C per decade")
    for share, words in ((0.25, "about 4 times flatter than"), (-0.5, "going the other way from"),
                         (1.05, "about the same as"), (1.5, "about 1.5 times steeper than")):
        document["window"]["slope"] = long_term * share
        again = next(n for n in key_number_words(document, "95%") if n.label == "The claimed window")
        assert again.words.startswith(words + " the long-term trend"), (share, again.words)
    assert all(n.words and n.words[0].islower() for n in numbers)
    html = render_report(stored_body(json.dumps(document), audit_id="words"))
    detail = html.split('class="key-numbers"', 1)[1]
    assert detail.index("number-words") < detail.index("number-value")


def test_robustness_rows_have_plain_headings_with_the_method_in_smaller_type(document):
    html = render_report(stored_body(json.dumps(document)))
    table = html.split('class="data-table robustness"', 1)[1].split("</table>", 1)[0]
    assert "If year-to-year swings do not persist" in table
    assert table.count('class="method-name"') == len(document["robustness"])
    for row in document["robustness"]:
        assert ROBUSTNESS_HEADINGS[row["method"]] in table


def test_what_would_change_names_the_plausible_models_that_tip_it(document):
    for method, delta in (("ar1", 1.2), ("arma11", 0.5)):
        row = next(r for r in document["robustness"] if r["method"] == method)
        row.update(holds=False, criterion_delta=delta)
    brief = what_would_change(document)
    assert "carry over into the next year or persist longer, either of which fits the data about as well." in brief
    assert brief.startswith("Moving either end of the window by up to 3 years gives trends from")


def test_every_glossary_term_is_linked_and_every_link_has_its_entry(document):
    html = render_report(stored_body(json.dumps(document)))
    links = set(re.findall(r'class="term" href="#term-([\w-]+)"', html))
    entries = set(re.findall(r'id="term-([\w-]+)"', html))
    assert links == entries == {key for key, _, _ in GLOSSARY}


def test_the_claim_as_said_by_whom_where_and_when_is_shown_escaped(document):
    document["claim"].update(text="It has <b>stopped</b> since 1998", claimant="A. Columnist", outlet="The Daily <i>",
                             made_on="2014-02-03", source_url="javascript:alert(1)")
    html = render_report(stored_body(json.dumps(document), audit_id="claimed"))
    claim = html.split('class="claim"', 1)[1].split("</section>", 1)[0]
    assert "It has &lt;b&gt;stopped&lt;/b&gt; since 1998" in claim
    assert "A. Columnist, The Daily &lt;i&gt;, 2014-02-03" in claim and "javascript:" not in claim


def test_link_preview_tags_point_at_the_card_and_the_page_stays_unindexed(document):
    html = render_report(stored_body(json.dumps(document)), base_url="https://audit.example.net/")
    permalink = "https://audit.example.net/audits/AbCdEfGhIjKlMnOpQrStUvWx"
    assert f'<meta property="og:image" content="{permalink}/card.png">' in html
    assert f'<meta name="twitter:image" content="{permalink}/card.png">' in html
    assert '<meta name="twitter:card" content="summary_large_image">' in html
    assert f'<meta property="og:url" content="{permalink}">' in html
    assert '<meta property="og:image:width" content="1200">' in html
    assert '<meta name="robots" content="noindex, nofollow">' in html


def test_cite_this_audit_as_text_and_csl_json(document):
    html = render_report(stored_body(json.dumps(document)), base_url="https://audit.example.net/")
    share = html.split('id="downloads"', 1)[1]
    citation = re.search(r'<p class="citation" id="citation-text">(.*?)</p>', share, re.S).group(1)
    for part in (document["verdict"]["code"], document["inputs"]["sha256"], str(document["seed"]), "Trend Audit 0.1.0",
                 "2025-03-14 09:26 UTC", "https://audit.example.net/audits/AbCdEfGhIjKlMnOpQrStUvWx"):
        assert part in citation, part
    csl_text = re.search(r'<textarea id="csl-field"[^>]*>(.*?)</textarea>', share, re.S).group(1)
    csl = json.loads(csl_text.replace("&#34;", '"').replace("&#39;", "'").replace("&amp;", "&"))
    assert csl[0]["type"] == "report" and csl[0]["issued"] == {"date-parts": [[2025, 3, 14]]}
    assert csl[0]["URL"].endswith("/audits/AbCdEfGhIjKlMnOpQrStUvWx") and document["verdict"]["code"] in csl[0]["note"]
    assert 'data-copy="permalink-field"' in html and "onclick" not in html  # the copy button works from desk.js


def test_sample_document_has_every_part_the_words_read():
    document = json.loads(sample_document())
    assert {"window", "long_term", "spell", "detectability", "cherry_pick", "robustness"} <= set(document)


def test_the_window_is_named_by_its_first_and_last_periods_not_its_half_open_edges(document):
    # A window of annual points 1998..2012 is stored with the edges [1998, 2013); every sentence and legend names
    # the periods it holds, as the claim block does, so no reader sees "1998 to 2013" for a claim of "1998 to 2012".
    document["claim"].update(start=1998.0, end=2013.0,
                             window={"first": "1998", "last": "2012", "points": 15, "start": 1998.0, "end": 2013.0})
    paragraph = "".join(piece.text for piece in plain_paragraph(document))
    card = card_alt_text(audit_card_face("w", "A title", document, "https://example.org/audits/w"), document)
    for text in (paragraph, claim_span(document), claim_brief(document), claim_text(document), card):
        assert "1998 to 2012" in text and "2013" not in text, text
