"""What a report gives away to be quoted and shared: the claim in brief, the verdict card's face and its text
alternative, and the citation (plain text and CSL-JSON). All of it read from the stored document and the record's
own id, title and creation time."""

from __future__ import annotations

import json
from html import escape
from dataclasses import dataclass
from typing import Any
from urllib.parse import urlsplit

import numpy as np

from app import __version__
from app.report.charts import stored_array
from app.report.context import CLAIM_WORDS, VERDICT_LABELS, created_text
from app.report.correlation_context import CORRELATION_VERDICT_LABELS
from app.report.numbers import Rate, window_span

SOFTWARE_NAME = "Trend Audit"
CLAIM_BRIEF_CHARACTERS = 180  # the card has room for about three lines of the claim (our requirement)
CARD_SIZES = {"wide": (1200, 675), "square": (1080, 1080)}


def _clipped(text: str, limit: int) -> str:
    text = " ".join(text.split())
    return text if len(text) <= limit else text[:limit - 1].rsplit(" ", 1)[0] + "…"


def claim_brief(doc: dict[str, Any]) -> str:
    """The claim as said when the record holds its words, else what kind of change over which window."""
    claim = doc.get("claim") or {}
    said = claim.get("text")
    if isinstance(said, str) and said.strip():
        return _clipped(said, CLAIM_BRIEF_CHARACTERS)
    kind = CLAIM_WORDS.get(claim.get("kind"), f"a {claim.get('kind', 'change')}")
    return f"A claimed {kind.split(' ', 1)[1]} from {window_span(doc)}"


def short_link(permalink: str) -> str:
    """The permanent link without its scheme, as a card prints it: host and path only."""
    parts = urlsplit(permalink)
    return f"{parts.netloc}{parts.path}" if parts.netloc else parts.path


def absolute(link: str, base_url: str) -> str:
    return link if urlsplit(link).scheme else f"{base_url.rstrip('/')}{link}"


@dataclass(frozen=True)
class CardFace:
    """Everything a verdict card shows; ``draw_card`` lays it out."""

    title: str
    claim: str
    quoted: bool  # the claim as said (quoted on the card), not our description of it
    verdict_label: str
    headline: str
    time: np.ndarray
    value: np.ndarray
    window: tuple[float, float] | None  # the claimed window, shaded
    lines: tuple[tuple[np.ndarray, np.ndarray, str], ...]  # (time, value, role): "long_term", "window", "link"
    value_label: str
    link: str  # short form
    software: str


def audit_card_face(record_id: str, title: str, doc: dict[str, Any], permalink: str) -> CardFace:
    curves, claim = doc.get("curves") or {}, doc.get("claim") or {}
    verdict = doc.get("verdict") or {}
    inputs = doc.get("inputs") or {}
    lines = tuple((stored_array(line.get("time")), stored_array(line.get("value")), role)
                  for role, line in (("long_term", curves.get("reference_line") or {}),
                                     ("window", curves.get("window_line") or {})) if line.get("time"))
    said = claim.get("text")
    return CardFace(title=title, claim=claim_brief(doc), quoted=isinstance(said, str) and bool(said.strip()),
                    verdict_label=VERDICT_LABELS.get(verdict.get("code"), str(verdict.get("code", ""))),
                    headline=str(verdict.get("headline", "")), time=stored_array(curves.get("time")),
                    value=stored_array(curves.get("value")),
                    window=(float(claim["start"]), float(claim["end"])) if "start" in claim else None, lines=lines,
                    value_label=" ".join(p for p in (inputs.get("label") or "", f"({inputs['units']})"
                                                     if inputs.get("units") else "") if p),
                    link=short_link(permalink), software=f"{SOFTWARE_NAME} {doc.get('software_version') or __version__}")


def correlation_claim(doc: dict[str, Any]) -> str:
    inputs = doc.get("inputs") or {}
    driver = (inputs.get("driver") or {}).get("label") or "the driver"
    response = (inputs.get("response") or {}).get("label") or "the response"
    return _clipped(f"Does {response} follow {driver}, even over short windows?", CLAIM_BRIEF_CHARACTERS)


def correlation_card_face(record_id: str, title: str, doc: dict[str, Any], permalink: str) -> CardFace:
    curves, verdict = doc.get("curves") or {}, doc.get("verdict") or {}
    response = (doc.get("inputs") or {}).get("response") or {}
    t = stored_array(curves.get("time"))
    return CardFace(title=title, claim=correlation_claim(doc), quoted=False,
                    verdict_label=CORRELATION_VERDICT_LABELS.get(verdict.get("code"), str(verdict.get("code", ""))),
                    headline=str(verdict.get("headline", "")), time=t, value=stored_array(curves.get("response")),
                    window=None, lines=((t, stored_array(curves.get("fitted")), "link"),),
                    value_label=" ".join(p for p in (response.get("label") or "", f"({response['units']})"
                                                     if response.get("units") else "") if p),
                    link=short_link(permalink), software=f"{SOFTWARE_NAME} {doc.get('software_version') or __version__}")


def card_alt_text(face: CardFace, doc: dict[str, Any]) -> str:
    """The card in words: served as card.txt and shown beside the embed snippet."""
    if face.window is not None:
        rate = Rate.of(doc)
        chart = (f"A small chart of {face.value_label or 'the series'} with the claimed window, "
                 f"{window_span(doc)}, shaded; the long-term trend is "
                 f"{rate.text((doc.get('long_term') or {}).get('slope'))} and the window's trend "
                 f"{rate.text((doc.get('window') or {}).get('slope'))}.")
    else:
        chart = f"A small chart of {face.value_label or 'the response'} with the response the link predicts."
    return (f"Verdict card from {face.software}. Claim: {face.claim} Verdict: {face.verdict_label}. {face.headline}. "
            f"{chart} Full report: {face.link}").replace("..", ".")


@dataclass(frozen=True)
class Citation:
    text: str
    csl_json: str


def citation(*, record_id: str, title: str, created_at: Any, doc: dict[str, Any], permalink: str,
             verdict_label: str, claim: str) -> Citation:
    """How to cite the audit: one line of text, and the same as CSL-JSON for reference managers."""
    created = created_text(created_at)
    code = str((doc.get("verdict") or {}).get("code", ""))
    version = str(doc.get("software_version") or __version__)
    inputs = doc.get("inputs") or {}
    digest = str(inputs.get("sha256") or (inputs.get("response") or {}).get("sha256") or "")
    seed = str(doc.get("seed", ""))
    name = title or "Untitled audit"
    text = (f"{SOFTWARE_NAME} ({created[:4]}). {name}. Claim: {claim} Verdict: {verdict_label} ({code}). "
            f"{SOFTWARE_NAME} {version}, seed {seed}, input SHA-256 {digest}. Created {created}. {permalink}")
    day = [int(part) for part in created[:10].split("-")] if created[:4].isdigit() else []
    item = {"id": f"trendaudit-{record_id}", "type": "report", "title": name, "publisher": SOFTWARE_NAME,
            "genre": "Statistical audit of a claim", "abstract": claim, "URL": permalink, "version": version,
            "note": f"Verdict code: {code}. Seed: {seed}. Input SHA-256: {digest}. Created {created}.",
            "issued": {"date-parts": [day]} if day else {"literal": created}}
    return Citation(text=text.replace("..", "."), csl_json=json.dumps([item], ensure_ascii=False, indent=2))


@dataclass(frozen=True)
class ShareView:
    """The report's share section and its link preview: the card's addresses and words, and the citation."""

    link: str  # the permanent link, with scheme and host
    short: str
    card_png: str
    card_svg: str
    card_square: str
    card_text: str
    card_alt: str
    claim: str
    description: str  # the link preview's text: the verdict's headline
    citation: Citation
    card_path: str  # the card on this server, for the page's own preview of it
    embed: str  # an <img> snippet to paste into a published piece, with the card's text alternative


def share_view(*, kind: str, record_id: str, title: str, created_at: Any, doc: dict[str, Any], permalink: str,
               base_url: str) -> ShareView:
    link = absolute(permalink, base_url)
    face = (audit_card_face if kind == "audit" else correlation_card_face)(record_id, title, doc, link)
    alt = card_alt_text(face, doc)
    width, height = CARD_SIZES["wide"]
    embed = (f'<img src="{escape(link)}/card.png" width="{width}" height="{height}" alt="{escape(alt)}">')
    return ShareView(card_path=f"{urlsplit(link).path}/card.png", embed=embed, link=link, short=face.link, card_png=f"{link}/card.png", card_svg=f"{link}/card.svg",
                     card_square=f"{link}/card.png?shape=square", card_text=f"{link}/card.txt",
                     card_alt=alt, claim=face.claim, description=face.headline,
                     citation=citation(record_id=record_id, title=title, created_at=created_at, doc=doc, permalink=link,
                                       verdict_label=face.verdict_label, claim=face.claim))
