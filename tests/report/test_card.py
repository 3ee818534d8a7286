"""The verdict card: the claim in brief, the verdict in the audit's own words, a small chart with the window
marked, the short link and the software's name, at 1200 x 675 or 1080 x 1080; and its text alternative."""

from __future__ import annotations

import json
import re
import struct
import xml.etree.ElementTree as ET

import pytest

from app.errors import NotFound
from app.report.card import card_file
from app.report.context import VERDICT_LABELS
from report.documents import correlation_document_text

LINK = "https://audit.example.net/audits/AbCdEfGhIjKlMnOpQrStUvWx"
HOSTILE = '<script>alert(1)</script> "><img src=x onerror=alert(1)> & ]]>'


def _texts(svg: str) -> str:
    root = ET.fromstring(svg.split("?>", 1)[1])  # also fails on markup that is not escaped
    return " ".join(" ".join(element.itertext()) for element in root.iter("{http://www.w3.org/2000/svg}text"))


def png_size(png: bytes) -> tuple[int, int]:
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    return struct.unpack(">II", png[16:24])  # the IHDR chunk's width and height (PNG specification, section 11.2.2)


@pytest.mark.parametrize("shape, size", [("wide", (1200, 675)), ("square", (1080, 1080))])
def test_the_card_shows_the_claim_the_verdict_and_the_link_at_its_size(document, shape, size):
    svg = card_file("audit", "card-1", "Has it stopped?", document, LINK, shape, "svg")
    assert f'width="{size[0]}" height="{size[1]}"' in svg.split(">", 2)[1]
    texts = " ".join(_texts(svg).split())
    assert "A claimed pause from 1998 to 2012" in texts
    assert VERDICT_LABELS[document["verdict"]["code"]] in texts
    assert "audit.example.net/audits/AbCdEfGhIjKlMnOpQrStUvWx" in texts and "Trend Audit" in texts
    headline_words = document["verdict"]["headline"].split()
    assert all(word in texts for word in headline_words[:6])
    assert not re.search(r"\sstyle=", svg) and "<style" not in svg  # drawn under a strict Content-Security-Policy
    assert png_size(card_file("audit", "card-1", "Has it stopped?", document, LINK, shape, "png")) == size


def test_the_card_uses_the_claim_as_said_and_escapes_hostile_text(document):
    document["claim"]["text"] = "Warming stopped " + HOSTILE
    svg = card_file("audit", "card-2", HOSTILE, document, LINK, "wide", "svg")
    assert "<script" not in svg and "<img" not in svg
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in svg
    assert "Warming stopped" in _texts(svg)
    text = card_file("audit", "card-2", HOSTILE, document, LINK, "wide", "txt")
    assert text.startswith("Verdict card from Trend Audit") and "Claim: “" not in text
    assert "Warming stopped" in text and LINK.removeprefix("https://") in text


def test_the_text_alternative_names_the_claim_verdict_chart_and_link(document):
    text = card_file("audit", "card-3", "t", document, LINK, "wide", "txt")
    assert "A claimed pause from 1998 to 2012" in text and VERDICT_LABELS[document["verdict"]["code"]] in text
    assert "shaded" in text and "per decade" in text and text.endswith("AbCdEfGhIjKlMnOpQrStUvWx\n")


def test_a_correlation_audit_has_a_card_too():
    document = json.loads(correlation_document_text())
    svg = card_file("correlation", "card-4", "Link", document, LINK.replace("audits", "correlations"), "wide", "svg")
    texts = " ".join(_texts(svg).split())
    assert "Does Quorvane temperature follow Greenhouse index" in texts
    assert document["verdict"]["headline"].split()[0] in texts and "correlations/" in texts


def test_unknown_shapes_and_formats_are_not_found(document):
    with pytest.raises(NotFound, match="shape"):
        card_file("audit", "card-5", "t", document, LINK, "round", "svg")
    with pytest.raises(NotFound, match="format"):
        card_file("audit", "card-5", "t", document, LINK, "wide", "gif")


def test_no_rating_scale_meter_or_stamp_on_the_card(document):
    texts = _texts(card_file("audit", "card-6", "t", document, LINK, "wide", "svg")).lower()
    for borrowed in ("true", "false", "mostly", "pants on fire", "rating", "pinocchio"):
        assert not re.search(rf"\b{borrowed}\b", texts), borrowed
