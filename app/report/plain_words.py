"""The report's words for an editor: the top paragraph, key numbers that lead with words, plain headings for the
robustness rows, and the glossary every linked term points at.

Everything is read from the stored document; nothing here computes a statistic. The only arithmetic is turning
a rate into the change it makes over the claimed window (rate times the window's years) and the ratio of two
stored slopes, so an editor reads "a rise of about 0.2 °C over the window" rather than a slope and its unit.
Text that links a glossary term is a tuple of ``Words`` pieces, so the template links it and escapes the rest.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from app.audit.verdict import format_number
from app.report.numbers import Rate, format_p, format_probability, format_years, is_number, time_of, window_span
from app.vocabulary import ACCELERATION, TOO_SHORT

GLOSSARY = (
    ("trend", "Trend", "The steady rate at which a series rises or falls, found by fitting a straight line through "
                       "its values. Here it is given per decade (or the unit the audit chose)."),
    ("range", "Range", "The span of trends the data are consistent with (a 95% range unless the audit says "
                       "otherwise): the true trend would lie outside it only rarely."),
    ("autocorrelation", "Autocorrelation", "The way one year's swing above or below the trend carries over into "
                                           "the next. The more it carries over, the longer a spell can run by chance, "
                                           "and the wider the ranges."),
    ("breakpoint", "Breakpoint", "A date at which a line fitted in segments changes its slope; an automatic search "
                                 "picks breakpoints without being told what was claimed."),
    ("p-value", "p-value", "How often a result at least this strong would appear by chance if nothing had changed. "
                           "Small values (below 0.05) are evidence of a change; large ones are not evidence of none."),
)

# Plain headings for the robustness rows: what each way of modelling the noise assumes about the year-to-year swings.
ROBUSTNESS_HEADINGS = {
    "white": "If year-to-year swings do not persist",
    "ar1": "If swings carry over into the next year",
    "ar2": "If swings carry over for two years",
    "arma11": "If year-to-year swings persist longer",
    "gls_ar1": "Fitted another way, swings carrying over a year",
    "hac": "With no model of the swings at all",
}

NEAR_EQUAL = 1.15  # slopes within this ratio are "about the same" in words (common practice, no source)
ALMOST_FLAT = 10.0  # a window more than this many times flatter reads as "almost flat" (common practice, no source)
AS_GOOD_FIT = 2.0  # AICc within 2 of the best: about as plausible (Burnham & Anderson 2002, section 2.6)


@dataclass(frozen=True)
class Words:
    text: str
    term: str = ""  # a glossary key: this piece links to the term's entry


def linked(text: str, term: str) -> tuple[Words, ...]:
    """The text with the first whole occurrence of ``term`` linked to its glossary entry."""
    at = text.find(term)
    if at < 0:
        return (Words(text),)
    return tuple(piece for piece in (Words(text[:at]), Words(term, term), Words(text[at + len(term):])) if piece.text)


def window_years(doc: dict[str, Any]) -> float:
    years = (doc.get("detectability") or {}).get("window_years")
    if is_number(years):
        return float(years)
    claim = doc.get("claim") or {}
    return float(claim.get("end", 0.0)) - float(claim.get("start", 0.0))


def _amount(doc: dict[str, Any], slope: Any, years: float) -> str:
    """The change a slope makes over ``years``, in the series' own units: 'a rise of about 0.21 °C'."""
    if not is_number(slope):
        return "an undetermined change"
    units = (doc.get("inputs") or {}).get("units") or ""
    change = slope * years
    size = f"{format_number(abs(change))} {units}".strip()
    if format_number(abs(change)) == "0":
        return "almost no change"
    return f"a {'rise' if change > 0 else 'fall'} of about {size}"


def _flatter_words(window: Any, long_term: Any) -> str:
    """How the window's slope compares with the long-term one, in words, with the sign taken into account."""
    if not (is_number(window) and is_number(long_term)) or long_term == 0:
        return "not comparable with the long-term trend"
    ratio = window / long_term
    if abs(ratio) < 1 / ALMOST_FLAT:
        return "almost flat next to the long-term trend"
    if ratio < 0:
        return "going the other way from the long-term trend"
    if 1 / NEAR_EQUAL <= ratio <= NEAR_EQUAL:
        return "about the same as the long-term trend"
    if ratio < 1:
        return f"about {_times(1 / ratio)} times flatter than the long-term trend"
    return f"about {_times(ratio)} times steeper than the long-term trend"


def _times(ratio: float) -> str:
    """'1.5' below two, whole numbers above: a reader quotes "about 4 times", not "about 4.0 times"."""
    return f"{ratio:.1f}" if ratio < 2 else f"{ratio:.0f}"


def alpha_of(doc: dict[str, Any]) -> float:
    return 1.0 - float((doc.get("options") or {}).get("confidence", 0.95))


def _window_differs(doc: dict[str, Any]) -> bool:
    window = doc.get("window") or {}
    key = "p_value_stronger" if (doc.get("claim") or {}).get("kind") == ACCELERATION else "p_value_weaker"
    p = window.get(key, window.get("p_value_vs_long_term"))
    return is_number(p) and p < alpha_of(doc)


def plain_paragraph(doc: dict[str, Any]) -> tuple[Words, ...]:
    """What the window shows, what the long-term trend is, and why a spell like this is or is not unusual,
    in the series' own units and over the window: no p-values, no Greek."""
    rate = Rate.of(doc)
    claim, ref = doc.get("claim") or {}, doc.get("reference") or {}
    win, lt, spell = doc.get("window") or {}, doc.get("long_term") or {}, doc.get("spell") or {}
    detect = doc.get("detectability") or {}
    years = window_years(doc)
    name = (doc.get("inputs") or {}).get("label") or "the series"
    first = (f"From {window_span(doc)} ({format_years(years)} "
             f"years), {name} shows {_amount(doc, win.get('slope'), years)}: a trend of {rate.text(win.get('slope'))}. ")
    second = (f"Over {time_of(doc, ref.get('start'))} to {time_of(doc, ref.get('end'))} the long-term trend is "
              f"{rate.text(lt.get('slope'))}, which over a window this long makes {_amount(doc, lt.get('slope'), years)}. ")
    chance = spell.get("probability")
    shape = _spell_shape(spell.get("direction"), win.get("slope"), lt.get("slope"))
    if not is_number(chance):
        third = "How often a spell like this appears by chance could not be worked out. "
    elif chance >= alpha_of(doc):
        third = (f"Spells {shape} come and go: one turns up somewhere in {format_probability(chance)} of records "
                 f"that simply keep the long-term trend with year-to-year swings like these. ")
    else:
        third = (f"A spell {shape} is unusual: it turns up in only {format_probability(chance)} of records that "
                 f"simply keep the long-term trend with year-to-year swings like these. ")
    needed = detect.get("years_to_detect")
    fourth = ""
    if is_number(needed) and needed > years:
        fourth = (f"A {format_years(years)}-year window is short for this series: about {format_years(needed)} years "
                  f"are needed before the long-term trend itself reliably shows.")
    return linked(first, "trend") + (Words(second + third + fourth),)


def _spell_shape(direction: Any, window: Any, long_term: Any) -> str:
    """'this flat' or 'this steep' only when the window really is flatter or steeper than the long-term trend."""
    ratio = window / long_term if is_number(window) and is_number(long_term) and long_term != 0 else float("nan")
    if direction == "high" and ratio > 1:
        return "this steep"
    if direction != "high" and ratio < 1:
        return "this flat"
    return "like this"


def _disagreeing_plausible(doc: dict[str, Any]) -> list[str]:
    return [ROBUSTNESS_HEADINGS.get(row.get("method"), str(row.get("method"))).lower().removeprefix("if ")
            for row in doc.get("robustness") or []
            if not row.get("holds") and is_number(row.get("criterion_delta")) and row["criterion_delta"] <= AS_GOOD_FIT]


def what_would_change(doc: dict[str, Any]) -> str:
    """One or two sentences: how far the window's own trend moves with its ends, and what else would tip it."""
    rate = Rate.of(doc)
    cherry = doc.get("cherry_pick") or {}
    slopes = [v for row in cherry.get("slopes") or [] for v in row if is_number(v)]
    reach = f"{float((doc.get('options') or {}).get('sensitivity_years', 3.0)):g}"
    sentences = []
    if slopes:
        sentences.append(f"Moving either end of the window by up to {reach} years gives trends from "
                         f"{rate.text(min(slopes))} to {rate.text(max(slopes))}.")
    disagreeing = _disagreeing_plausible(doc)
    needed = (doc.get("detectability") or {}).get("years_to_detect")
    if disagreeing:
        sentences.append("The verdict would differ if year-to-year swings " + " or ".join(
            d.removeprefix("year-to-year swings ").removeprefix("swings ") for d in disagreeing) +
            (", which fits the data about as well." if len(disagreeing) == 1 else
             ", either of which fits the data about as well."))
    elif (doc.get("verdict") or {}).get("code") == TOO_SHORT and is_number(needed):
        sentences.append(f"A window of about {format_years(needed)} years or more would be needed to tell.")
    else:
        sentences.append("No other plausible way of modelling the year-to-year swings changes it.")
    return " ".join(sentences)


@dataclass(frozen=True)
class KeyNumberWords:
    label: str
    words: str  # leads: what the number means
    value: str  # the number itself, beside the words
    detail: tuple[Words, ...]  # its statistics, for the detailed part


def key_number_words(doc: dict[str, Any], conf: str) -> tuple[KeyNumberWords, ...]:
    rate = Rate.of(doc)
    lt, win, ref = doc.get("long_term") or {}, doc.get("window") or {}, doc.get("reference") or {}
    change, spell, detect = doc.get("trend_change") or {}, doc.get("spell") or {}, doc.get("detectability") or {}
    alpha = alpha_of(doc)
    rising = is_number(lt.get("slope")) and lt["slope"] > 0
    clear = is_number(lt.get("p_value")) and lt["p_value"] < alpha
    long_words = (f"a clear {'rising' if rising else 'falling'} trend" if clear else "no clear trend") + (
        f" over {time_of(doc, ref.get('start'))} to {time_of(doc, ref.get('end'))}")
    swings = ("more than year-to-year swings usually produce" if _window_differs(doc)
              else "which is within what year-to-year swings produce")
    adjusted = change.get("p_value_adjusted")
    change_words = ("a change in trend stands out, even allowing for the freedom to pick the window's ends"
                    if is_number(adjusted) and adjusted < alpha else
                    "no clear sign of a change in trend, once the freedom to pick the window's ends is allowed for")
    chance = spell.get("probability")
    spell_words = ("could not be worked out" if not is_number(chance) else
                   "common: most records with no change in trend have a spell like this" if chance >= 0.5 else
                   "not unusual for a record this long" if chance >= alpha else "unusual for a record this long")
    needed, span = detect.get("years_to_detect"), detect.get("window_years")
    short = is_number(needed) and is_number(span) and span < needed
    detect_words = ("the window is too short to show the long-term trend reliably" if short
                    else "the window is long enough to show the long-term trend")
    return (
        KeyNumberWords("Long-term trend", long_words, rate.text(lt.get("slope")),
                       linked(f"{conf} range {rate.range_text(lt.get('ci'))}"
                              + (f"; {ref['note']}" if ref.get("note") else ""), "range")),
        KeyNumberWords("The claimed window", f"{_flatter_words(win.get('slope'), lt.get('slope'))}, {swings}",
                       rate.text(win.get("slope")),
                       (Words(f"{conf} range {rate.range_text(win.get('ci'))}; {win.get('n')} data points"),)),
        KeyNumberWords("A change during the window?", change_words, format_p(adjusted),
                       linked(f"p-value allowing for the choice of both ends ({format_p(change.get('p_value_nominal'))}"
                              " had the window been fixed in advance)"
                              + simulation_error(change.get("p_value_adjusted_se")), "p-value")),
        KeyNumberWords("How often a spell like this appears by chance", spell_words, format_probability(chance),
                       (Words("of simulated records that keep the long-term trend with this series' swings"),)),
        KeyNumberWords("Years of data needed to see the trend", detect_words, f"{format_years(needed)} years",
                       (Words(f"the claimed window spans {format_years(span)} years"),)),
    )


def simulation_error(se: Any) -> str:
    """One short phrase for a simulated p-value's Monte Carlo error."""
    if not is_number(se) or se < 0:
        return ""
    return f"; simulation error ±{se:.1g}" if se > 0 else "; simulation error ±0 (every simulation agreed)"


def fit_words(delta: Any) -> str:
    if not is_number(delta):
        return ""
    if delta == 0:
        return "best fit"
    return "about as good a fit" if delta <= AS_GOOD_FIT else "a worse fit" if delta <= 10 else "a much worse fit"
