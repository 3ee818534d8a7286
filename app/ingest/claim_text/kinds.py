"""Which kind of change a sentence names, and whether it denies it."""

from __future__ import annotations

from dataclasses import dataclass

from app.ingest.claim_text.grammar import Grammar, overlaps


@dataclass(frozen=True)
class Cue:
    kind: str
    span: tuple[int, int]
    negation: tuple[int, int] | None  # the words denying it, when the sentence denies it


def read_cues(text: str, grammar: Grammar) -> list[Cue]:
    """Every word naming a kind, in reading order, the longer one kept where two overlap."""
    found = sorted(((match.start(), -match.end(), kind) for kind, pattern in grammar.kind_cues
                    for match in pattern.finditer(text) if match.end() > match.start()))
    kept: list[tuple[str, tuple[int, int]]] = []
    for start, negative_end, kind in found:
        span = (start, -negative_end)
        if not kept or not overlaps(kept[-1][1], span):
            kept.append((kind, span))
    markers_before, markers_after = _negation_markers(text, grammar, [span for _, span in kept])
    breaks = [(match.start(), match.end()) for match in grammar.clause_break.finditer(text)]
    reach = grammar.language.negation_reach
    starts = [span[0] for _, span in kept]
    return [Cue(kind, span, _negation(span, markers_before, markers_after, breaks, reach, starts))
            for kind, span in kept]


def primary_cue(cues: list[Cue]) -> Cue | None:
    """The first kind the sentence asserts; when it denies every kind it names, the first one denied."""
    asserted = [cue for cue in cues if cue.negation is None]
    return (asserted or cues or [None])[0]


def _negation_markers(text: str, grammar: Grammar, cue_spans: list[tuple[int, int]]):
    """Negation words outside the cues themselves ("has not warmed" names a pause, it denies nothing)."""
    exceptions = [(m.start(), m.end()) for m in grammar.negation_exceptions.finditer(text)]
    taken = cue_spans + exceptions

    def free(pattern):
        spans = [(m.start(), m.end()) for m in pattern.finditer(text)]
        return [span for span in spans if not any(overlaps(span, other) for other in taken)]

    return free(grammar.negation_before), free(grammar.negation_after)


def _negation(cue: tuple[int, int], before, after, breaks, reach: int, cue_starts: list[int]) -> tuple[int, int] | None:
    """The words denying this cue: a negation before it in its clause with no other cue between, or one after."""
    clause_start = max((end for start, end in breaks if end <= cue[0]), default=0)
    clause_start = max([clause_start] + [start for start in cue_starts if start < cue[0]])
    clause_end = min((start for start, end in breaks if start >= cue[1]), default=None)
    preceding = [span for span in before if clause_start <= span[0] and span[1] <= cue[0] <= span[1] + reach]
    if preceding:
        return preceding[-1]
    following = [span for span in after if span[0] >= cue[1] and (clause_end is None or span[1] <= clause_end)]
    return following[0] if following else None
