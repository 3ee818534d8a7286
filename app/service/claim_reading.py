"""From a sentence to a claim, for every door: the API's parse endpoint, the desk's "as said" box, the CLI.

The grammar lives in ``app.ingest.claim_text``; this reads the request's date and series span, and writes
the reading as a JSON-ready answer and as the marked-up pieces of the sentence the desk echoes.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any

from app.ingest.claim_text import ParsedClaim, parse_claim
from app.service.claims import claim_record, edge_instant

# Which words set which field, in order of precedence when their words overlap.
MARKED_PARTS = ("kind", "start", "end", "window")
NAMED_SAMPLINGS = ("monthly", "quarterly", "annual")  # others count relative windows in months


@dataclass(frozen=True)
class Piece:
    """A stretch of the sentence, and the part of the claim it set (None for words that set nothing)."""

    text: str
    part: str | None


def read_claim_text(text: str, *, made_on: str | None = None, span: tuple[float, float] | None = None,
                    sampling: str | None = None, max_length: int = 2000) -> ParsedClaim:
    """The claim the sentence states, relative phrases counted back from ``made_on`` or the series' end
    (``span``: its first and last times); ClaimError naming what could not be read."""
    record = claim_record({"text": text, "made_on": made_on}, max_length, prefix="")
    return parse_claim(text, record.made_on_date(), span, sampling if sampling in NAMED_SAMPLINGS else None)


def described_span(series: dict[str, Any] | None) -> tuple[tuple[float, float] | None, str | None]:
    """A series described by its first and last times (edges in any time form) and its sampling."""
    if not series:
        return None, None
    return (_mid_time(series["start"], "series.start"), _mid_time(series["end"], "series.end")), series.get("sampling")


def _mid_time(edge: Any, field: str) -> float:
    """The middle of the period an edge names, where the series' own time for that period sits."""
    return (edge_instant(edge, "start", field) + edge_instant(edge, "end", field)) / 2.0


def parsed_answer(parsed: ParsedClaim) -> dict[str, Any]:
    """The reading as the API answers it."""
    answer = dataclasses.asdict(parsed)
    answer["spans"] = {part: list(span) for part, span in parsed.spans.items()}
    answer["negation_span"] = list(parsed.negation_span) if parsed.negation_span else None
    answer["alternatives"] = [dataclasses.asdict(reading) for reading in parsed.alternatives]
    answer["notes"] = list(parsed.notes)
    return answer


def marked_pieces(text: str, parsed: ParsedClaim) -> tuple[Piece, ...]:
    """The sentence cut where the words that set each part begin and end. The words of one part win over the
    whole window's ("1998" is the start inside "since 1998"); the window is marked only where no part is."""
    chosen: list[tuple[int, int, str]] = []
    for part in MARKED_PARTS:  # parts in order of precedence
        span = parsed.spans.get(part)
        if span is None or not 0 <= span[0] < span[1] <= len(text):
            continue
        if all(span[1] <= begin or span[0] >= end for begin, end, _ in chosen):
            chosen.append((span[0], span[1], part))
    pieces: list[Piece] = []
    at = 0
    for begin, end, part in sorted(chosen):
        if begin > at:
            pieces.append(Piece(text[at:begin], None))
        pieces.append(Piece(text[begin:end], part))
        at = end
    if at < len(text):
        pieces.append(Piece(text[at:], None))
    return tuple(pieces)
