"""What a language file gives the claim reader: its words and patterns, in one frozen bundle.

The engine (``parser``, ``windows``) knows no words of any language; it knows only these fields and the
named groups the window patterns may carry:

- a time point, prefixed ``s_`` (start) or ``e_`` (end): ``iso`` (1998-03, 1998-Q2, 1998-03-15), ``month`` with
  ``myear`` (a month name and its year), ``decade`` (a four-digit decade such as 1990) or ``decade2`` (a two-digit
  one such as 90) with an optional ``part`` (a key of ``decade_parts``), ``ypart`` with ``pyear`` (a key of
  ``year_parts`` and a year: "mid-2022"), ``named`` (a key of ``named_years``),
  ``year``; and ``e_now`` when the end is the time the claim was made;
- a duration: ``count`` (a number, digits or ``number_words``), ``unit`` (a key of ``unit_years``), optional
  ``half`` / ``half2`` ("and a half"), ``count2`` with ``unit2`` (a second part, "and 9 months"), ``approx``
  (the words hedging it: "more than", "nearly"); with an end point it counts back from that end ("the ten years
  to 2012"), with a start point forward from that start ("the decade since 2010");
- a century: ``ordinal`` (a key of ``ordinals``); a decade: ``current`` ("this decade").

Every pattern keeps its repeats bounded and never nests them (``{1,3}`` over one character class at most):
the time to read a text then grows linearly with its length whatever it holds.
"""

from __future__ import annotations

from dataclasses import dataclass

# How a window pattern's matched groups become a window; the engine holds one reader per shape.
WINDOW_SHAPES = ("range", "since", "span", "century", "decade")


@dataclass(frozen=True)
class WindowPattern:
    shape: str  # one of WINDOW_SHAPES
    regex: str  # compiled case-insensitive
    rank: int  # 0 reads most surely; a lower rank wins when several patterns match
    vague: bool = False  # the words leave the edges loose ("a 15-year pause")


@dataclass(frozen=True)
class Language:
    name: str
    kind_cues: dict[str, tuple[str, ...]]  # claim kind -> regex fragments naming it
    negation_before: str  # regex: a word that denies what follows in its clause
    negation_after: str  # regex: words that deny what came before in the clause
    negation_exceptions: str  # regex: phrases holding a negation word that deny nothing ("no doubt")
    clause_break: str  # regex: where a negation's reach ends
    negation_reach: int  # characters a negation word may sit before the words it denies
    window_patterns: tuple[WindowPattern, ...]
    number_words: dict[str, float]  # lower-case, single spaces
    unit_years: dict[str, float]  # a duration unit -> its length in years
    singular_units: frozenset[str]  # units that name one of themselves without a number ("the last decade")
    month_names: dict[str, int]
    decade_parts: dict[str, tuple[int, ...]]  # "mid" -> years into the decade, the chosen one first
    year_parts: dict[str, tuple[int, ...]]  # "mid" -> months of the year, the chosen one first
    named_years: dict[str, int]  # "the turn of the century" -> 2000
    ordinals: dict[str, int]  # "21st" -> 21
    window_examples: str  # how to write a window, for the refusal's fix
    notes: dict[str, str]  # the sentences a parse's notes are made of, with {placeholders}
