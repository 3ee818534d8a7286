"""Reading claim sentences: the corpus, each construction, negations, refusals, and the reader's bounds."""

from __future__ import annotations

import datetime as dt
import re
import re._constants as sre_constants
import re._parser as sre_parser

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from app.errors import ClaimError
from app.ingest.claim_text import MAX_CLAIM_CHARS, parse_claim
from app.ingest.claim_text.english import ENGLISH
from app.ingest.window_edges import resolve_edge
from claim_corpus import CORPUS

MADE_ON = dt.date(2015, 10, 5)
REQUIRED_ACCURACY = 0.90  # our requirement


def _reading(case):
    """Kind, negation and the window's instants: "2010" to "2019" and "2010-01" to "2019-12" are one window."""
    try:
        claim = parse_claim(case.text, case.made_on, case.series_span, case.sampling)
    except ClaimError:
        return None
    return claim.kind, round(claim.start_instant, 9), round(claim.end_instant, 9), claim.negated


def _expected(case):
    if case.kind is None:
        return None
    start, end = resolve_edge(case.start, "start").instant, resolve_edge(case.end, "end").instant
    return case.kind, round(start, 9), round(end, 9), case.negated


def test_corpus_accuracy():
    assert len(CORPUS) >= 100
    misreads = []
    for case in CORPUS:
        expected, got = _expected(case), _reading(case)
        if got != expected:
            misreads.append(f"{case.text!r}: expected {expected}, read {got}")
    accuracy = 1 - len(misreads) / len(CORPUS)
    print(f"corpus accuracy {accuracy:.3f} ({len(CORPUS) - len(misreads)} of {len(CORPUS)})")
    print("\n".join(misreads))
    assert accuracy >= REQUIRED_ACCURACY, "\n".join(misreads)


def test_corpus_covers_every_kind_negations_and_refusals():
    kinds = {case.kind for case in CORPUS}
    assert kinds == {"pause", "slowdown", "reversal", "acceleration", None}
    assert sum(case.negated for case in CORPUS) >= 10
    assert sum(case.kind is None for case in CORPUS) >= 10


@pytest.mark.parametrize("text, start, end", [
    ("Warming paused since 1998.", "1998", "2015-09"),
    ("Warming paused since January 2012.", "2012-01", "2015-09"),
    ("Warming paused since Sept. 2014.", "2014-09", "2015-09"),
    ("Warming paused since the mid-1990s.", "1995", "2015-09"),
    ("Warming paused since the early 1990s.", "1991", "2015-09"),
    ("Warming paused since the late '90s.", "1998", "2015-09"),
    ("Warming paused this century.", "2001", "2015-09"),
    ("Warming paused so far in the 21st century.", "2001", "2015-09"),
    ("Warming paused since the turn of the century.", "2000", "2015-09"),
    ("Warming paused since the beginning of this century.", "2001", "2015-09"),
    ("Warming paused since the start of the century.", "2001", "2015-09"),
    ("Warming paused in the twenty-first century.", "2001", "2015-09"),
    ("Warming paused for 15 years.", "2000-10", "2015-09"),
    ("Warming paused for fifteen years.", "2000-10", "2015-09"),
    ("Warming paused for the past 18 years and 9 months.", "1997-01", "2015-09"),
    ("Warming paused for eighteen years and nine months.", "1997-01", "2015-09"),
    ("Warming paused in the last decade.", "2005-10", "2015-09"),
    ("Warming paused for a decade.", "2005-10", "2015-09"),
    ("Warming paused for a decade and a half.", "2000-10", "2015-09"),
    ("Warming paused over the last three decades.", "1985-10", "2015-09"),
    ("Warming paused over the last 3 decades.", "1985-10", "2015-09"),
    ("Warming paused for two decades.", "1995-10", "2015-09"),
    ("Warming paused for twenty-five years.", "1990-10", "2015-09"),
    ("Warming paused for half a century.", "1965-10", "2015-09"),
    ("Warming paused for the last 18 months.", "2014-04", "2015-09"),
    ("Warming paused between 2001 and 2012.", "2001", "2012"),
    ("Warming paused from 2001 to 2012.", "2001", "2012"),
    ("Warming paused from 2001 until now.", "2001", "2015-09"),
    ("Warming paused from March 2001 to June 2012.", "2001-03", "2012-06"),
    ("Warming paused from 2001-Q2 to 2012-Q3.", "2001-Q2", "2012-Q3"),
    ("Warming paused in 2001–2012.", "2001", "2012"),
    ("Warming paused during the 2000s.", "2000", "2009"),
    ("Warming paused in the ten years to 2012.", "2003-01", "2012-12"),
    ("Warming stopped in 1998.", "1998", "2015-09"),
    ("There was a 15-year pause.", "2000-10", "2015-09"),
])
def test_each_window_construction(text, start, end):
    claim = parse_claim(text, made_on=MADE_ON)
    assert (claim.kind, claim.start, claim.end) == ("pause", start, end)
    assert claim.start_instant == resolve_edge(start, "start").instant
    assert claim.end_instant == resolve_edge(end, "end").instant


@pytest.mark.parametrize("sampling, start, end", [
    ("annual", "2000", "2014"),
    ("quarterly", "2000-Q4", "2015-Q3"),
    ("monthly", "2000-10", "2015-09"),
    (None, "2000-10", "2015-09"),
])
def test_relative_windows_count_whole_periods_of_the_series(sampling, start, end):
    claim = parse_claim("Warming paused for 15 years.", made_on=MADE_ON, sampling=sampling)
    assert (claim.start, claim.end) == (start, end)


def test_end_defaults_to_the_date_the_claim_was_made():
    claim = parse_claim("Warming paused since 1998.", made_on=MADE_ON)
    assert claim.end == "2015-09"
    assert "end" not in claim.spans  # no words gave it
    assert any("before the claim was made (2015-10-05)" in note for note in claim.notes)


def test_end_defaults_to_the_end_of_the_record_without_a_date():
    claim = parse_claim("Warming paused since 1998.", series_span=(1850.04, 2014.96), sampling="monthly")
    assert claim.end == "2014-12"
    assert any("end of the record" in note for note in claim.notes)
    assert claim.confidence == pytest.approx(0.8)  # CONFIDENCE_FACTORS["end_record"]


def test_open_window_without_date_or_record_is_refused():
    with pytest.raises(ClaimError, match="date it was made") as caught:
        parse_claim("Warming paused since 1998.")
    assert caught.value.location.field == "text"
    assert "between 1998 and 2012" in caught.value.fix


def test_a_closed_window_needs_no_date():
    claim = parse_claim("Warming paused between 2001 and 2012.")
    assert (claim.start, claim.end, claim.confidence) == ("2001", "2012", 1.0)
    assert claim.notes == ()


@pytest.mark.parametrize("text", [
    "Global warming has stopped.", "The ice is back!", "Temperatures have been flat for years.", "",
    "Warming has paused recently.", "1998", "Prices are up 20% since last spring.",
])
def test_sentences_without_a_window_are_refused_saying_what_to_write(text):
    with pytest.raises(ClaimError, match="no time window could be read") as caught:
        parse_claim(text, made_on=MADE_ON)
    assert caught.value.location.field == "text"
    assert "since 1998" in caught.value.fix


def test_window_ending_before_it_starts_is_refused():
    with pytest.raises(ClaimError, match="starts at 2020 but ends at 2015-09"):
        parse_claim("Warming paused since 2020.", made_on=MADE_ON)


def test_overlong_text_is_refused():
    with pytest.raises(ClaimError, match="more than the 2000"):
        parse_claim("Warming paused since 1998. " * 100, made_on=MADE_ON)


@pytest.mark.parametrize("kind, words", [
    ("pause", ["has not warmed", "no warming", "stopped rising", "been flat", "a plateau", "stalled", "a hiatus",
               "levelled off", "leveled off", "hasn't risen", "paused", "stagnated", "flatlined", "remained steady",
               "gone nowhere", "shown no trend", "no longer rising", "had no significant warming"]),
    ("slowdown", ["slowed", "been rising more slowly", "decelerated", "slowed down", "lost momentum", "a slowdown",
                  "risen more slowly", "been slower"]),
    ("reversal", ["been cooling", "been falling since", "recovered", "bounced back", "reversed", "rebounded",
                  "turned around", "been growing again"]),
    ("acceleration", ["been accelerating", "sped up", "risen faster than ever", "risen twice as fast",
                      "quickened", "picked up pace", "been rising more rapidly"]),
])
def test_kind_cues(kind, words):
    for phrase in words:
        text = f"The series has {phrase} since 1998."
        claim = parse_claim(text, made_on=MADE_ON)
        assert (claim.kind, claim.negated) == (kind, False), phrase
        kind_words = text[slice(*claim.spans["kind"])]
        assert kind_words in phrase or phrase.endswith(kind_words) or kind_words.startswith("has"), phrase


def test_the_ice_is_back_is_a_reversal():
    assert parse_claim("The ice is back since 2012.", made_on=MADE_ON).kind == "reversal"


@pytest.mark.parametrize("text, kind, negation", [
    ("It is not true that warming stopped since 1998.", "pause", "not"),
    ("There has been no pause in warming since 1998.", "pause", "no"),
    ("Warming hasn't slowed since 1998.", "slowdown", "n't"),
    ("Warming never stopped in the last decade.", "pause", "never"),
    ("The claim that the ice has recovered since 2012 is false.", "reversal", "is false"),
    ("The hiatus between 1998 and 2012 never happened.", "pause", "never happened"),
    ("It is a myth that warming stalled this century.", "pause", "myth"),
])
def test_negations_are_flagged_not_misread(text, kind, negation):
    claim = parse_claim(text, made_on=MADE_ON)
    assert (claim.kind, claim.negated) == (kind, True)
    assert text[slice(*claim.negation_span)] == negation


@pytest.mark.parametrize("text, kind", [
    ("Warming has not warmed since 1998.", "pause"),  # the negation is part of how a pause is said
    ("There has been no warming since 1998, no matter what they say.", "pause"),
    ("No doubt warming has slowed since 1998.", "slowdown"),
    ("Far from slowing, warming has sped up since 1998.", "acceleration"),
    ("Warming has slowed, not stopped, since 1998.", "slowdown"),
    ("Warming did not pause between 1998 and 2012; it slowed.", "slowdown"),
])
def test_negation_words_that_deny_nothing(text, kind):
    claim = parse_claim(text, made_on=MADE_ON)
    assert (claim.kind, claim.negated, claim.negation_span) == (kind, False, None)


def test_denied_kind_the_sentence_replaces_is_an_alternative_not_the_reading():
    claim = parse_claim("Warming did not pause between 1998 and 2012; it slowed.")
    assert claim.kind == "slowdown"
    assert claim.alternatives == ()  # a denied kind is not another reading


def test_spans_point_at_the_words_read():
    text = "Since January 2012, global temperatures have stalled."
    claim = parse_claim(text, made_on=MADE_ON)
    assert text[slice(*claim.spans["kind"])] == "stalled"
    assert text[slice(*claim.spans["start"])] == "January 2012"
    assert text[slice(*claim.spans["window"])] == "Since January 2012"
    text = "Sea ice recovered between 2012 and the late 2010s."
    claim = parse_claim(text)
    assert text[slice(*claim.spans["end"])] == "late 2010s"
    assert claim.end == "2018"


def test_loose_edges_give_alternatives_and_lower_confidence():
    claim = parse_claim("Temperatures have been flat since the mid-1990s.", made_on=MADE_ON)
    assert claim.start == "1995"
    assert {reading.start for reading in claim.alternatives} == {"1994", "1996"}
    assert claim.confidence == pytest.approx(0.8 * 0.95)  # loose_edge, end_made_on
    assert any("'mid-1990s' read as 1995" in note for note in claim.notes)


def test_several_kinds_lower_confidence_and_are_offered():
    claim = parse_claim("Warming stalled and then reversed between 1998 and 2012.")
    assert claim.kind == "pause"
    assert [(reading.kind, reading.start, reading.end) for reading in claim.alternatives] == [
        ("reversal", "1998", "2012")]
    assert claim.confidence == pytest.approx(0.7)


def test_several_windows_take_the_most_definite():
    claim = parse_claim("Warming has paused for 15 years, since 1998.", made_on=dt.date(2013, 6, 1))
    assert (claim.start, claim.end) == ("1998", "2013-05")
    assert [(reading.start, reading.end) for reading in claim.alternatives] == [("1998-06", "2013-05")]


def test_no_kind_word_reads_as_a_pause_with_low_confidence():
    claim = parse_claim("Global temperatures between 1998 and 2012.")
    assert claim.kind == "pause"
    assert claim.confidence == pytest.approx(0.4)
    assert "kind" not in claim.spans


def test_result_is_frozen():
    claim = parse_claim("Warming paused between 2001 and 2012.")
    with pytest.raises(AttributeError):
        claim.kind = "reversal"


# --- the reader's bounds ---------------------------------------------------------------------------------------

_REPEATS = (sre_constants.MAX_REPEAT, sre_constants.MIN_REPEAT, sre_constants.POSSESSIVE_REPEAT)
MAX_PATTERN_WIDTH = 400  # our requirement: a pattern's longest match, which bounds the work at each position


def _children(op, av):
    if op in _REPEATS:
        return [av[2]]
    if op is sre_constants.SUBPATTERN:
        return [av[3]]
    if op is sre_constants.BRANCH:
        return list(av[1])
    if op in (sre_constants.ASSERT, sre_constants.ASSERT_NOT):
        return [av[1]]
    return []


def _repeats_inside(sub) -> bool:
    return any(op in _REPEATS or any(_repeats_inside(child) for child in _children(op, av)) for op, av in sub)


def _nested_repeats(sub) -> list:
    found = []
    for op, av in sub:
        if op in _REPEATS and av[1] > 1 and _repeats_inside(av[2]):
            found.append((av[0], av[1]))
        for child in _children(op, av):
            found += _nested_repeats(child)
    return found


def _all_patterns():
    language = ENGLISH
    return ([cue for cues in language.kind_cues.values() for cue in cues]
            + [pattern.regex for pattern in language.window_patterns]
            + [language.negation_before, language.negation_after, language.negation_exceptions,
               language.clause_break])


@pytest.mark.parametrize("pattern", _all_patterns())
def test_patterns_are_bounded_and_never_nest_repeats(pattern):
    """The size bound behind linear time: no repeat of more than one may hold another repeat, and every pattern's
    longest match is bounded, so trying a pattern at one position costs at most a constant and a whole text
    costs (patterns x length x constant). Wall-clock speed is not asserted here; bench/ measures time."""
    parsed = sre_parser.parse(pattern, re.IGNORECASE)
    assert _nested_repeats(parsed) == []
    assert parsed.getwidth()[1] <= MAX_PATTERN_WIDTH


_VOCABULARY = ["since", "for", "the", "past", "last", "between", "and", "from", "to", "1998", "2012", "mid-1990s",
               "January", "no", "not", "warming", "stopped", "paused", "slowed", "years", "decade", "a", "half",
               "century", "this", "18", "9", "months", "-", "–", "'", ".", ",", ";", "is", "false", "twenty",
               "2016-01", "1998-Q2", "1998-03-15", "the turn of the", "early", "late", "n't", "never", "happened"]


@settings(max_examples=150, deadline=None)
@given(st.text(max_size=MAX_CLAIM_CHARS))
def test_arbitrary_text_gives_a_claim_or_a_claim_error(text):
    _check_any_outcome(text)


@settings(max_examples=150, deadline=None)
@given(st.lists(st.sampled_from(_VOCABULARY), max_size=400).map(" ".join).filter(
    lambda text: len(text) <= MAX_CLAIM_CHARS))
def test_word_salad_from_the_vocabulary_gives_a_claim_or_a_claim_error(text):
    _check_any_outcome(text)


def _check_any_outcome(text):
    for made_on, series_span, sampling in ((MADE_ON, None, None), (None, None, None),
                                           (None, (1850.5, 2014.5), "annual"), (MADE_ON, None, "quarterly")):
        try:
            claim = parse_claim(text, made_on=made_on, series_span=series_span, sampling=sampling)
        except ClaimError as error:
            assert error.location.field == "text"
            continue
        assert 0.0 <= claim.confidence <= 1.0
        assert claim.start_instant < claim.end_instant
        assert claim.kind in ("pause", "slowdown", "reversal", "acceleration")
        assert all(0 <= start <= end <= len(text) for start, end in claim.spans.values())


@pytest.mark.parametrize("unit", ["since ", "for the past ", "1998-", "no ", "a ", "-" * 3, " " * 7, "9"])
def test_longest_repetitive_input_is_read(unit):
    text = (unit * (MAX_CLAIM_CHARS // len(unit)))[:MAX_CLAIM_CHARS]
    _check_any_outcome(text)


def test_claim_reader_and_window_edges_stay_in_the_ingest_layer():
    """Input readers import nothing above app.ingest but the errors."""
    import ast
    from pathlib import Path

    root = Path(__file__).resolve().parents[2] / "app" / "ingest"
    offenders = []
    for path in [root / "window_edges.py", *sorted((root / "claim_text").glob("*.py"))]:
        for node in ast.walk(ast.parse(path.read_text())):
            names = ([alias.name for alias in node.names] if isinstance(node, ast.Import)
                     else [node.module] if isinstance(node, ast.ImportFrom) and node.module else [])
            offenders += [f"{path.name} imports {name}" for name in names
                          if name.startswith("app.") and not name.startswith(("app.ingest", "app.errors"))]
    assert offenders == []
