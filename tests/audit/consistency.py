"""Where an audit's words contradict its own numbers: ``contradictions(result) -> list[str]``.

Every sentence of the verdict (headline, summary, reasons, what would change) is read beside the numbers
it rests on (``result.verdict_inputs``, the window's data, the reference period, the spell probability).
Each rule is one function of (sentence, facts); the word lists they use are tables at the top, so a new
phrasing is one more row, not one more rule. Each contradiction reads
``rule: what is wrong | where: "the sentence" | numbers: the values it contradicts``.

Our rules:
- significance: "significant(ly)" with the p-value it refers to not below alpha; "not significant", "do not
  show a change" and the like with it below alpha. The p-value referred to is the first one written after the
  word in the same sentence (else the nearest before it); a sentence with none uses the number its topic
  names (``CONTEXT_P``). Written values count as written: "significant (p = 0.050)" at alpha 0.05 contradicts.
- zero percent: a percentage written "0%" or "0.0%" (a probability under 0.1% must read "under 0.1%").
- zero rate: a rate written with all-zero digits ("+0.000") for a value that is not zero.
- sign words: "kept rising/falling" against the window's slope; "rising/falling trend" against the long-term
  slope; "steeper/faster" and "flatter/slower" against the window's slope minus the long-term one, in the
  long-term trend's direction (on a falling series steeper means more negative; "not faster" is read as
  "not faster"); "below/above" as a plain comparison of the first rate written in the sentence with the first
  written after the word (the window's and the long-term slope when the sentence writes none).
- unusual: "unusual" needs the spell probability below alpha, "not unusual" at or above it.
- wide range: a window range whose half-width exceeds ``RANGE_BOUND`` x (max(y) - min(y)) / window years.
  No least-squares line through points within a band of height R over T years is steeper than about
  1.5 R / T (the slope's numerator is at most R/2 times the sum of |t - mean(t)|), so a 95% range ten times
  wider than that says nothing the data could; windows under ``MIN_RANGE_POINTS`` points are exempt, since
  their t quantile alone can exceed it. The same bound applies to the long-term range over the reference period.
- ordinals: "81th", "2th", "11st".
- trend word: "rising trend" or "falling trend" said while neither the long-term test nor Mann-Kendall finds
  the long-term trend significant.
- years to detect: a sentence giving the years needed to detect the long-term trend, more than the
  reference period spans, while the same audit calls the long-term trend significant, unless it is worded
  as a power statement (``POWER_WORDS``).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Callable

import numpy as np

RANGE_BOUND = 10.0  # our rule: half-width of a range against (max(y) - min(y)) / years
MIN_RANGE_POINTS = 8
NEGATION = r"(?:not|no|never|nor|without)\s+(?:\w+\s+){0,2}"

# Phrases that assert (True) or deny (False) significance; each is checked against the p-value it refers to.
SIGNIFICANCE_PHRASES = (
    (re.compile(r"\bnot\s+(?:statistically\s+)?significant(?:ly)?\b", re.I), False),
    (re.compile(r"\bno\s+(?:statistically\s+)?significant\b", re.I), False),
    (re.compile(r"\bdo(?:es)?\s+not\s+show\s+(?:a|any|that\s+the)\s+(?:change|trend)", re.I), False),
    (re.compile(r"\bno\s+trend\s+distinguishable\b", re.I), False),
    (re.compile(r"(?<!not )(?<!no )\b(?:statistically\s+)?significant(?:ly)?\b", re.I), True),
    (re.compile(r"\bsupports?\s+a\s+change\b", re.I), True),
)
# A sentence that writes no p-value: the number its topic names.
CONTEXT_P = (
    (re.compile(r"trend\s+changed|change\s+in\s+(?:the\s+)?trend|trend[- ]change", re.I), "change_p_adjusted"),
    (re.compile(r"long-term\s+trend", re.I), "long_term_p"),
)
P_VALUE = re.compile(r"\bp\s*(=|<)\s*(\d*\.\d+|\d+)")
PERCENT_ZERO = re.compile(r"(?<![\d.])0(?:\.0+)?\s?%")
RATE = re.compile(r"(?<![\w.])([+-]\d+(?:\.\d+)?)(?=\s)")
ZERO_RATE = re.compile(r"(?<![\w.])[+-]0(?:\.0+)?(?![\d.])")
RANGE = re.compile(r"range\s+([+-]?\d+(?:\.\d+)?)\s+(?:[^\s]+\s+){0,4}?to\s+([+-]?\d+(?:\.\d+)?)", re.I)
ORDINAL = re.compile(r"\b(\d+)(st|nd|rd|th)\b")
# Words that compare the window's trend with the long-term one along the trend's direction: +1 stronger.
STRENGTH_WORDS = {"steeper": 1, "faster": 1, "flatter": -1, "slower": -1}
# "kept rising" speaks of the window; "rising trend", "rising series" of the long-term trend.
WINDOW_SIGN = re.compile(r"\bkept\s+(rising|falling)\b", re.I)
TREND_SIGN = re.compile(r"\b(rising|falling)\s+(trend|series|record)\b", re.I)
SIGN_OF = {"rising": 1, "falling": -1}
ABOVE_BELOW = re.compile(r"\b(above|below)\b", re.I)
UNUSUAL = re.compile(r"\b(not\s+)?unusual\b", re.I)
DETECTION = re.compile(r"\bdetect|show\s+itself|would\s+be\s+needed", re.I)
NUMBER = re.compile(r"(?<![\w.+-])(\d+(?:\.\d+)?)(?![\d.]*\s?%)")
POWER_WORDS = re.compile(r"\bpower\b|\b\d+%\s+of\s+(?:the\s+time|such|records)|\bnine\s+times\s+in\s+ten\b", re.I)


@dataclass(frozen=True)
class Facts:
    """The numbers the words must agree with, read once from the result."""

    alpha: float
    long_term_slope: float
    long_term_p: float
    long_term_mk_p: float
    window_slope: float
    values: dict  # every number a CONTEXT_P row may name
    spell_probability: float
    years_to_detect: float
    reference_years: float
    window_points: int
    window_years: float
    window_value_range: float
    reference_value_range: float
    window_ci: tuple[float, float]
    long_term_ci: tuple[float, float]
    rate_factor: float
    slopes: tuple[float, ...]  # every slope the words may write

    @property
    def trend_sign(self) -> int:
        return 1 if self.long_term_slope >= 0 else -1

    @property
    def long_term_significant(self) -> bool:
        return self.long_term_p < self.alpha or self.long_term_mk_p < self.alpha


def _get(obj, name, default=float("nan")):
    value = getattr(obj, name, default)
    return default if value is None else value


def _window_values(result) -> np.ndarray:
    t, y, claim = result.series.time, result.series.value, result.claim
    try:
        from app.audit.claim import window_mask
        mask = window_mask(result.series, claim.start, claim.end)
    except ImportError:  # the engine moved it: the plain interval is close enough for a range bound
        mask = (t >= claim.start) & (t <= claim.end)
    return y[mask]


def facts_of(result) -> Facts:
    v = result.verdict_inputs
    t, y = result.series.time, result.series.value
    reference = result.reference
    in_reference = (t >= reference.start) & (t <= reference.end)
    step = float(getattr(result.series, "step", 1.0))
    window_y = _window_values(result)
    names = ("change_p_adjusted", "change_p_nominal", "long_term_p", "window_p_vs_zero", "window_p_weaker",
             "window_p_stronger")
    window_years = float(v.window_years) if hasattr(v, "window_years") else float(v.window_end - v.window_start)
    sensitivity = getattr(result, "sensitivity", None)
    slopes = [v.long_term_slope, v.window_slope, *v.window_ci, *v.long_term_ci]
    if sensitivity is not None:
        slopes += [float(np.nanmin(sensitivity.slopes)), float(np.nanmax(sensitivity.slopes))]
    whole = getattr(result, "whole_record", None)
    if whole is not None:
        slopes.append(whole.long_term_slope)
    return Facts(
        alpha=float(v.alpha), long_term_slope=float(v.long_term_slope), long_term_p=float(v.long_term_p),
        long_term_mk_p=float(_get(v, "long_term_mk_p")), window_slope=float(v.window_slope),
        values={name: float(_get(v, name)) for name in names},
        spell_probability=float(result.spell.probability), years_to_detect=float(_get(v, "years_to_detect")),
        reference_years=float(reference.end - reference.start) + step, window_points=int(v.window_points),
        window_years=window_years, window_value_range=float(np.ptp(window_y)) if window_y.size else 0.0,
        reference_value_range=float(np.ptp(y[in_reference])) if in_reference.any() else 0.0,
        window_ci=tuple(result.window.ci), long_term_ci=tuple(result.long_term.chosen.ci),
        rate_factor=float(_get(v, "rate_factor", 10.0)), slopes=tuple(float(s) for s in slopes),
    )


# --- sentences ---------------------------------------------------------------------------------------------

SENTENCE_END = re.compile(r"(?<=[.!?])\s+(?=[A-Z])")


def sentences(verdict) -> list[tuple[str, str]]:
    """(where, sentence) for every sentence the verdict writes."""
    found = [("headline", verdict.headline)]
    found += [("summary", s) for s in SENTENCE_END.split(verdict.summary) if s.strip()]
    found += [(f"reason {i + 1}", s) for i, s in enumerate(verdict.reasons)]
    found += [(f"what would change {i + 1}", s) for i, s in enumerate(verdict.what_would_change)]
    return found


def _written_p(sentence: str, position: int) -> float | None:
    """The p-value a phrase at ``position`` refers to: the first written after it, else the last before it."""
    matches = list(P_VALUE.finditer(sentence))
    after = [m for m in matches if m.start() >= position]
    chosen = after[0] if after else (matches[-1] if matches else None)
    if chosen is None:
        return None
    value = float(chosen.group(2))
    return value / 2 if chosen.group(1) == "<" else value  # "p < 0.001" lies below 0.001


def _context_p(sentence: str, facts: Facts) -> tuple[float, str] | None:
    for pattern, name in CONTEXT_P:
        if pattern.search(sentence):
            return facts.values.get(name, facts.long_term_p), name
    return None


def _rates(sentence: str) -> list[tuple[int, float]]:
    return [(m.start(), float(m.group(1))) for m in RATE.finditer(sentence)]


# --- rules -------------------------------------------------------------------------------------------------

def check_significance(sentence: str, facts: Facts) -> list[str]:
    found, taken = [], []
    for pattern, asserts in SIGNIFICANCE_PHRASES:
        for match in pattern.finditer(sentence):
            if any(a <= match.start() < b for a, b in taken):
                continue  # already read as part of a longer phrase ("not significant")
            taken.append(match.span())
            p = _written_p(sentence, match.start())
            source = "written"
            if p is None:
                context = _context_p(sentence, facts)
                if context is None:
                    continue
                p, source = context
            if asserts != (p < facts.alpha):
                word = "asserts" if asserts else "denies"
                found.append(f"\"{match.group(0)}\" {word} significance but the p-value it refers to ({source}) is "
                             f"{p:.4g} against alpha {facts.alpha:g}")
    return found


def check_zero_percent(sentence: str, facts: Facts) -> list[str]:
    return [f"a percentage written \"{m.group(0).strip()}\": one under 0.1% must read \"under 0.1%\", a larger "
            f"one needs its digits (spell probability {facts.spell_probability:.4g})"
            for m in PERCENT_ZERO.finditer(sentence)]


def check_zero_rate(sentence: str, facts: Facts) -> list[str]:
    if any(s == 0.0 for s in facts.slopes):
        return []
    return [f"a rate written \"{m.group(0)}\" with only zero digits for a value that is not zero "
            f"(smallest slope written: {min(facts.slopes, key=abs):.3g} per year)"
            for m in ZERO_RATE.finditer(sentence)]


def check_sign_words(sentence: str, facts: Facts) -> list[str]:
    found = []
    for m in WINDOW_SIGN.finditer(sentence):
        if SIGN_OF[m.group(1).lower()] * facts.window_slope <= 0:
            found.append(f"\"{m.group(0)}\" but the window's slope is {facts.window_slope:.4g} per year")
    for m in TREND_SIGN.finditer(sentence):
        if SIGN_OF[m.group(1).lower()] * facts.long_term_slope <= 0:
            found.append(f"\"{m.group(0)}\" but the long-term slope is {facts.long_term_slope:.4g} per year")
    stronger = (facts.window_slope - facts.long_term_slope) * facts.trend_sign
    for word, sign in STRENGTH_WORDS.items():
        for m in re.finditer(rf"\b({NEGATION})?{word}\b", sentence, re.I):
            if m.group(1) and "significantly" in m.group(1).lower():
                continue  # "not significantly flatter" denies significance, not direction: the significance rule
            expected = -sign if m.group(1) else sign
            if expected * stronger <= 0:
                found.append(f"\"{m.group(0)}\" but the window's slope {facts.window_slope:.4g} against the long-term "
                             f"{facts.long_term_slope:.4g} per year is {'stronger' if stronger > 0 else 'weaker'} "
                             f"in the trend's direction")
    rates = _rates(sentence)
    for m in ABOVE_BELOW.finditer(sentence):
        before = [r for at, r in rates if at < m.start()]
        after = [r for at, r in rates if at > m.end()]
        if before and after:
            subject, other = before[0], after[0]
        elif re.search(r"long-term", sentence[m.end():], re.I):
            subject, other = facts.window_slope * facts.rate_factor, facts.long_term_slope * facts.rate_factor
        else:
            continue
        word = m.group(1).lower()
        if (word == "below" and not subject < other) or (word == "above" and not subject > other):
            found.append(f"\"{word}\" but {subject:+.4g} is not {word} {other:+.4g} (as written, per "
                         f"{facts.rate_factor:g} years)")
    return found


def check_unusual(sentence: str, facts: Facts) -> list[str]:
    found = []
    for m in UNUSUAL.finditer(sentence):
        says_unusual = not m.group(1)
        if says_unusual != (facts.spell_probability < facts.alpha):
            found.append(f"\"{m.group(0)}\" but the spell probability is {facts.spell_probability:.4g} against "
                         f"alpha {facts.alpha:g}")
    return found


def _range_bound(value_range: float, years: float) -> float:
    return RANGE_BOUND * value_range / years if years > 0 else math.inf


def check_wide_range(sentence: str, facts: Facts) -> list[str]:
    if facts.window_points < MIN_RANGE_POINTS:
        return []
    bound = _range_bound(facts.window_value_range, facts.window_years)
    found = []
    for m in RANGE.finditer(sentence):
        half = (float(m.group(2)) - float(m.group(1))) / 2 / facts.rate_factor
        if half > bound:
            found.append(f"a range ({m.group(1)} to {m.group(2)}) of half-width {half:.4g} per year, more than "
                         f"{RANGE_BOUND:g} x the window's spread {facts.window_value_range:.4g} / "
                         f"{facts.window_years:.4g} years = {bound:.4g}")
    return found


def check_ordinals(sentence: str, facts: Facts) -> list[str]:
    found = []
    for m in ORDINAL.finditer(sentence):
        number = int(m.group(1))
        suffix = "th" if number % 100 in (11, 12, 13) else {1: "st", 2: "nd", 3: "rd"}.get(number % 10, "th")
        if m.group(2) != suffix:
            found.append(f"ordinal \"{m.group(0)}\" should read \"{number}{suffix}\"")
    return found


def check_trend_word(sentence: str, facts: Facts) -> list[str]:
    if facts.long_term_significant:
        return []
    return [f"\"{m.group(0)}\" of a long-term trend that is not significant (p = {facts.long_term_p:.4g}, "
            f"Mann-Kendall p = {facts.long_term_mk_p:.4g}, alpha {facts.alpha:g})"
            for m in re.finditer(r"\b(?:rising|falling)\s+trend\b", sentence, re.I)]


def check_years_to_detect(sentence: str, facts: Facts) -> list[str]:
    ytd = facts.years_to_detect
    if not (DETECTION.search(sentence) and math.isfinite(ytd)) or POWER_WORDS.search(sentence):
        return []
    written = [float(x) for x in NUMBER.findall(sentence)]
    speaks_of_it = any(abs(x - ytd) <= max(0.6, 0.05 * ytd) for x in written)
    if speaks_of_it and ytd > facts.reference_years and facts.long_term_p < facts.alpha:
        return [f"{ytd:.1f} years needed to detect the long-term trend, more than the reference period's "
                f"{facts.reference_years:.1f}, yet the long-term trend is significant (p = {facts.long_term_p:.4g}); "
                f"say it as a power statement"]
    return []


@dataclass(frozen=True)
class Rule:
    name: str
    check: Callable[[str, Facts], list[str]]


RULES = (
    Rule("significance", check_significance),
    Rule("zero percent", check_zero_percent),
    Rule("zero rate", check_zero_rate),
    Rule("sign words", check_sign_words),
    Rule("unusual", check_unusual),
    Rule("wide range", check_wide_range),
    Rule("ordinal", check_ordinals),
    Rule("trend word", check_trend_word),
    Rule("years to detect", check_years_to_detect),
)


def _numbers(facts: Facts) -> str:
    return (f"alpha {facts.alpha:g}, long-term {facts.long_term_slope:.4g}/y (p {facts.long_term_p:.3g}), "
            f"window {facts.window_slope:.4g}/y, change p adj {facts.values['change_p_adjusted']:.3g}, "
            f"spell p {facts.spell_probability:.3g}, years to detect {facts.years_to_detect:.3g}")


def check_sentences(items: list[tuple[str, str]], facts: Facts) -> list[str]:
    found = []
    for where, sentence in items:
        for rule in RULES:
            for problem in rule.check(sentence, facts):
                found.append(f"{rule.name}: {problem} | {where}: \"{sentence}\" | numbers: {_numbers(facts)}")
    return found


def check_numeric_ranges(facts: Facts, window_written: bool = False) -> list[str]:
    """The ranges themselves, whether or not a sentence writes them (the window's once: not again when a
    sentence already showed it too wide)."""
    found = []
    checks = [("long-term", facts.long_term_ci, facts.reference_value_range, facts.reference_years)]
    if facts.window_points >= MIN_RANGE_POINTS and not window_written:
        checks.append(("window", facts.window_ci, facts.window_value_range, facts.window_years))
    for name, (low, high), spread, years in checks:
        if not (np.isfinite(low) and np.isfinite(high)):
            continue  # a range the data cannot bound is written as undetermined, never as numbers
        bound = _range_bound(spread, years)
        if (high - low) / 2 > bound:
            found.append(f"wide range: the {name} range {low:.4g} to {high:.4g} per year has half-width "
                         f"{(high - low) / 2:.4g}, more than {RANGE_BOUND:g} x {spread:.4g} / {years:.4g} years "
                         f"= {bound:.4g} | numbers: {_numbers(facts)}")
    return found


def contradictions(result) -> list[str]:
    """Every contradiction between the verdict's words and the audit's numbers; empty when they agree."""
    facts = facts_of(result)
    found = check_sentences(sentences(result.verdict), facts)
    return found + check_numeric_ranges(facts, window_written=any(f.startswith("wide range:") for f in found))
