"""A language's patterns compiled once, and the small text helpers the engine reads matches with."""

from __future__ import annotations

import re
from dataclasses import dataclass

from app.ingest.claim_text.language import Language, WindowPattern

_FLAGS = re.IGNORECASE
_SPACES = re.compile(r"[\s\-]+")


@dataclass(frozen=True)
class Grammar:
    language: Language
    kind_cues: tuple[tuple[str, re.Pattern[str]], ...]  # (kind, pattern), one pattern per kind
    negation_before: re.Pattern[str]
    negation_after: re.Pattern[str]
    negation_exceptions: re.Pattern[str]
    clause_break: re.Pattern[str]
    windows: tuple[tuple[WindowPattern, re.Pattern[str]], ...]


_COMPILED: dict[str, Grammar] = {}


def grammar_of(language: Language) -> Grammar:
    """The language's patterns, compiled the first time they are asked for."""
    if language.name not in _COMPILED:
        _COMPILED[language.name] = Grammar(
            language=language,
            kind_cues=tuple((kind, re.compile("|".join(f"(?:{cue})" for cue in cues), _FLAGS))
                            for kind, cues in language.kind_cues.items()),
            negation_before=re.compile(language.negation_before, _FLAGS),
            negation_after=re.compile(language.negation_after, _FLAGS),
            negation_exceptions=re.compile(language.negation_exceptions, _FLAGS),
            clause_break=re.compile(language.clause_break, _FLAGS),
            windows=tuple((pattern, re.compile(pattern.regex, _FLAGS)) for pattern in language.window_patterns),
        )
    return _COMPILED[language.name]


def plain(words: str) -> str:
    """Words as the language's tables spell them: lower case, one space between, hyphens as spaces."""
    return _SPACES.sub(" ", words.strip().lower())


def overlaps(a: tuple[int, int], b: tuple[int, int]) -> bool:
    return a[0] < b[1] and b[0] < a[1]
