"""What reading a claim sentence gives back."""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(frozen=True)
class Reading:
    """Another way the sentence could be read."""

    kind: str
    start: str
    end: str
    why: str


@dataclass(frozen=True)
class ParsedClaim:
    """A claim read from a sentence: its kind and window, where each was read, and how sure the reading is.

    ``start`` and ``end`` are window edges written in the series' time forms ("1998", "2016-01");
    ``start_instant`` and ``end_instant`` are what they resolve to (``app.ingest.window_edges``).
    ``spans`` holds the character spans of the words each part was read from, under "kind", "start", "end"
    and "window"; a part taken from no words (an end assumed from the date of the claim) has no span.
    """

    kind: str
    start: str
    end: str
    start_instant: float
    end_instant: float
    spans: dict[str, tuple[int, int]]
    confidence: float
    alternatives: tuple[Reading, ...] = ()
    negated: bool = False
    negation_span: tuple[int, int] | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)
