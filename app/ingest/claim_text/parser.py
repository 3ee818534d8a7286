"""Reading a claim sentence into a structured claim: its kind, its window, and how sure the reading is.

The engine knows no words: a ``Language`` (``english.py``) gives them. Confidence starts at 1 and is
multiplied by one factor for each doubt the reading had (``CONFIDENCE_FACTORS``): no word naming the kind,
several kinds asserted, several windows named, an edge left loose by the words ("the mid-1990s", "more than
a decade", "a 15-year pause"), an end taken from the date the claim was made, or from the end of the record.
A denied claim is read as surely as an asserted one: ``negated`` says which it is.
"""

from __future__ import annotations

import datetime as dt

from app.errors import ClaimError, Location
from app.ingest.claim_text.anchor import Anchor, find_anchor
from app.ingest.claim_text.english import ENGLISH
from app.ingest.claim_text.grammar import grammar_of
from app.ingest.claim_text.kinds import Cue, primary_cue, read_cues
from app.ingest.claim_text.language import Language
from app.ingest.claim_text.result import ParsedClaim, Reading
from app.ingest.claim_text.windows import Window, read_windows
from app.ingest.window_edges import resolve_edge

MAX_CLAIM_CHARS = 2000  # our requirement: a claim is a sentence or two, and the reader's time grows with length
DEFAULT_KIND = "pause"
# Our own scale, not calibrated against how often such readings turn out right: it orders readings from sure
# to doubtful so that a desk can ask the person to confirm the doubtful ones.
CONFIDENCE_FACTORS = {
    "no_kind": 0.4,
    "other_kinds": 0.7,
    "other_windows": 0.8,
    "loose_edge": 0.8,
    "end_made_on": 0.95,
    "end_record": 0.8,
}
MAX_ALTERNATIVES = 6
_FIELD = "text"


def parse_claim(text: str, made_on: dt.date | None = None, series_span: tuple[float, float] | None = None,
                sampling: str | None = None, *, language: Language = ENGLISH) -> ParsedClaim:
    """The claim a sentence states; ClaimError when it names no window that can be placed in time."""
    _check_length(text, language)
    grammar = grammar_of(language)
    anchor = find_anchor(made_on, series_span, sampling)
    windows, unanchored = read_windows(text, grammar, anchor)
    if not windows:
        _refuse_without_window(unanchored, language)
    cues = read_cues(text, grammar)
    cue = primary_cue(cues)
    window = windows[0]
    kind = cue.kind if cue else DEFAULT_KIND
    start, end = resolve_edge(window.start, "start", sampling, field=_FIELD), \
        resolve_edge(window.end, "end", sampling, field=_FIELD)
    if not start.instant < end.instant:
        raise ClaimError(language.notes["refuse_order"].format(start=window.start, end=window.end),
                         location=Location(field=_FIELD), fix=language.notes["fix_order"])
    doubts = _doubts(cue, cues, windows, anchor)
    spans = dict(window.spans)
    if cue is not None:
        spans["kind"] = cue.span
    return ParsedClaim(
        kind=kind, start=window.start, end=window.end, start_instant=start.instant, end_instant=end.instant,
        spans=spans, confidence=_confidence(doubts),
        alternatives=_alternatives(text, kind, cue, cues, windows, language)[:MAX_ALTERNATIVES],
        negated=cue is not None and cue.negation is not None,
        negation_span=cue.negation if cue is not None else None,
        notes=_notes(doubts, cues, window, anchor, made_on, language),
    )


def _check_length(text: str, language: Language) -> None:
    if len(text) > MAX_CLAIM_CHARS:
        raise ClaimError(language.notes["refuse_long"].format(length=len(text), limit=MAX_CLAIM_CHARS),
                         location=Location(field=_FIELD), fix=language.notes["fix_long"])


def _refuse_without_window(unanchored: int, language: Language) -> None:
    if unanchored:
        raise ClaimError(language.notes["refuse_end"], location=Location(field=_FIELD),
                         fix=language.notes["fix_end"])
    raise ClaimError(language.notes["refuse_window"], location=Location(field=_FIELD),
                     fix=language.notes["fix_window"].format(examples=language.window_examples))


def _doubts(cue: Cue | None, cues: list[Cue], windows: list[Window], anchor: Anchor | None) -> list[str]:
    window = windows[0]
    doubts = []
    if cue is None:
        doubts.append("no_kind")
    elif any(other.kind != cue.kind and other.negation is None for other in cues):
        doubts.append("other_kinds")
    if any((other.start, other.end) != (window.start, window.end) for other in windows[1:]):
        doubts.append("other_windows")
    if window.loose:
        doubts.append("loose_edge")
    if window.end_assumed and anchor is not None:
        doubts.append("end_record" if anchor.from_record else "end_made_on")
    return doubts


def _confidence(doubts: list[str]) -> float:
    confidence = 1.0
    for doubt in doubts:
        confidence *= CONFIDENCE_FACTORS[doubt]
    return round(confidence, 3)


def _alternatives(text: str, kind: str, cue: Cue | None, cues: list[Cue], windows: list[Window],
                  language: Language) -> tuple[Reading, ...]:
    window = windows[0]
    seen = {(kind, window.start, window.end)}
    readings = []

    def add(reading: Reading) -> None:
        if (reading.kind, reading.start, reading.end) not in seen:
            seen.add((reading.kind, reading.start, reading.end))
            readings.append(reading)

    for other in cues:
        if other is not cue and other.negation is None:
            add(Reading(other.kind, window.start, window.end, language.notes["alt_kind"].format(kind=other.kind)))
    words = text[window.spans["start"][0]:window.spans["start"][1]]
    for start in window.other_starts:
        add(Reading(kind, start, window.end, language.notes["alt_edge"].format(words=words, edge=start)))
    for other in windows[1:]:
        named = text[other.spans["window"][0]:other.spans["window"][1]]
        add(Reading(kind, other.start, other.end, language.notes["alt_window"].format(words=named)))
    return tuple(readings)


def _notes(doubts: list[str], cues: list[Cue], window: Window, anchor: Anchor | None, made_on: dt.date | None,
           language: Language) -> tuple[str, ...]:
    notes = list(window.notes)
    if "no_kind" in doubts:
        notes.append(language.notes["no_kind"])
    if "other_kinds" in doubts:
        kinds = sorted({cue.kind for cue in cues if cue.negation is None})
        notes.append(language.notes["other_kinds"].format(kinds=", ".join(kinds)))
    if "other_windows" in doubts:
        notes.append(language.notes["other_windows"])
    if "end_made_on" in doubts:
        period = language.notes[f"period_{anchor.per_year}"]
        notes.append(language.notes["end_made_on"].format(period=period, made_on=made_on.isoformat()))
    if "end_record" in doubts:
        notes.append(language.notes["end_record"].format(end=window.end))
    return tuple(notes)
