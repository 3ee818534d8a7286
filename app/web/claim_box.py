"""The desk's "The claim, as said" box: the pasted sentence read into a kind and a window the person can still
edit, echoed back with the words that set each field marked."""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

from app.errors import InputError
from app.ingest import Series
from app.service.claim_reading import Piece, marked_pieces, read_claim_text
from app.settings import Settings
from app.web.forms import DeskForm

PART_WORDS = {"kind": "the kind of claim", "start": "the window's start", "end": "the window's end",
              "window": "the window"}


@dataclass(frozen=True)
class ClaimReadingView:
    pieces: tuple[Piece, ...] = ()
    confidence: str = ""
    negated: bool = False
    notes: tuple[str, ...] = ()
    problem: str = ""  # what could not be read, and what to do
    part_words: dict[str, str] = dataclasses.field(default_factory=lambda: PART_WORDS)


def read_into_form(form: DeskForm, series: Series, settings: Settings) -> tuple[DeskForm, ClaimReadingView | None]:
    """With a sentence pasted, its kind and window fill the form: every field when the person asked to read it,
    else only the fields left empty. Nothing to read gives no view."""
    if not form.claim_text.strip():
        return form, None
    asked = bool(form.read_claim)
    if not asked and form.claim_start and form.claim_end:
        return form, None
    try:
        parsed = read_claim_text(form.claim_text, made_on=form.claim_made_on.strip() or None,
                                 span=(series.start, series.end) if series.n else None, sampling=series.sampling,
                                 max_length=settings.max_string_length)
    except InputError as error:
        return form, ClaimReadingView(problem=f"{error.message}. {error.fix or ''}".strip())
    filled = {"claim_kind": parsed.kind, "claim_start": parsed.start, "claim_end": parsed.end}
    updates = filled if asked else {name: value for name, value in filled.items() if not getattr(form, name)}
    view = ClaimReadingView(pieces=marked_pieces(form.claim_text, parsed), confidence=f"{100 * parsed.confidence:.0f}%",
                            negated=parsed.negated, notes=tuple(parsed.notes))
    return dataclasses.replace(form, read_claim="", **updates), view
