"""The verdict: one code, a headline, a short summary and the reasons, decided in one place.

Precedence (first match wins; alpha = 1 - confidence):

1. ``no_long_term_trend``        neither the parametric test nor Mann-Kendall finds a trend over the
                                 reference period at alpha, so a "pause" or "acceleration" of it has nothing
                                 to be measured against. (Both must fail: on a smooth, nearly noiseless
                                 series such as a concentration record the parametric test alone would
                                 miss an obvious trend.)
2. ``level_shift``               a step with an unchanged slope, near the window, is significant after
                                 the search over dates and explains the data at least as well as any
                                 window's change of slope: the series jumped, its trend did not change
                                 (and a line drawn through the jump misstates both trends, so this comes
                                 before any comparison of them).
3. ``claim_contradicted``        the window itself shows a significant trend in the direction the claim
                                 denies (a "pause" during which the series kept rising significantly).
4. ``trend_change_supported``    the window-bounded change test is significant after adjusting for the
                                 choice of both ends, the slope moved the way the claim says, and the
                                 window's own trend shows what was claimed: a pause is consistent with no
                                 trend and significantly below the long-term one; a reversal is
                                 significantly of the opposite sign; a slowdown is significantly slower
                                 without having significantly reversed; an acceleration is significantly
                                 faster.
5. ``depends_on_noise_model``    4 holds under the chosen noise model but not under another model the data
                                 find about as plausible (AICc within 2): the headline withholds support.
6. ``change_differs_from_claim`` the change test is significant and the slope moved the claimed way, but
                                 the window does not show the claimed kind ("it slowed, it did not stop").
7. ``too_short_to_tell``         the window is shorter than the time needed to detect the long-term trend
                                 against this series' noise, or holds fewer than ``MIN_TREND_POINTS`` points.
8. ``consistent_with_trend``     otherwise: the spell is within what the noise around the long-term trend produces.

Every comparative word is derived from the numbers printed beside it, with the sign of the long-term
trend taken into account. The wording is hedged on purpose: a statistical audit can show that data are
or are not consistent with a model; it cannot attribute causes, and it rests on the noise model.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from app.vocabulary import (CHANGE_SUPPORTED, CONSISTENT, CONTRADICTED, LEVEL_SHIFT, MODEL_DEPENDENT,  # noqa: F401
                             NO_TREND, OTHER_CHANGE, TOO_SHORT, VERDICT_CODES)

MIN_TREND_POINTS = 8  # below this a window's own trend and noise are not worth estimating (common practice, no source)

CLAIM_NOUN = {"pause": "pause", "slowdown": "slowdown", "reversal": "reversal", "acceleration": "acceleration"}


@dataclass(frozen=True)
class VerdictInputs:
    """The handful of numbers the verdict depends on; everything else in an audit is evidence."""

    kind: str
    window_start: float
    window_end: float
    window_points: int
    alpha: float
    long_term_slope: float
    long_term_ci: tuple[float, float]
    long_term_p: float
    long_term_mk_p: float  # Mann-Kendall (Hamed-Rao) p-value over the reference period
    window_slope: float
    window_ci: tuple[float, float]
    window_p_vs_zero: float  # two-sided
    window_p_weaker: float  # one-sided: the window's trend is weaker (in the long-term direction) than the long-term trend
    window_p_stronger: float  # one-sided: the window's trend is stronger than the long-term trend
    change_p_nominal: float  # window-bounded change test, as if the window had been fixed in advance
    change_p_adjusted: float  # the same, adjusted for the choice of both ends
    spell_probability: float
    years_to_detect: float
    rate_factor: float = 10.0
    rate_unit: str = "per decade"
    units: str = ""
    first_label: str = ""  # the window's first and last periods as the data name them: 1998, 2016-01
    last_label: str = ""
    span_years: float = float("nan")  # years the window's periods cover (15 annual points: 15)
    step_found: bool = False  # a significant step near the window explains the data as well as a change of slope
    step_label: str = ""  # where the step falls, as the data name it
    step_size: float = float("nan")
    step_p_adjusted: float = float("nan")
    disagreeing_models: tuple[str, ...] = ()  # plausible noise models under which support fails
    noise_kind: str = "ar1"

    @property
    def window_years(self) -> float:
        return self.span_years if math.isfinite(self.span_years) else self.window_end - self.window_start

    @property
    def start_label(self) -> str:
        return self.first_label or f"{self.window_start:.4g}"

    @property
    def span_label(self) -> str:
        return f"{self.start_label} to {self.last_label or f'{self.window_end:.4g}'}"

    @property
    def trend_sign(self) -> int:
        return 1 if self.long_term_slope >= 0 else -1

    @property
    def long_term_significant(self) -> bool:
        return self.long_term_p < self.alpha

    @property
    def window_reversed(self) -> bool:
        """The window's trend is significantly opposite to the long-term one."""
        return self.window_p_vs_zero < self.alpha and self.window_slope * self.trend_sign < 0

    @property
    def window_flat(self) -> bool:
        """The window's trend is consistent with none at all."""
        return self.window_p_vs_zero >= self.alpha

    @property
    def window_weaker(self) -> bool:
        return self.window_p_weaker < self.alpha

    @property
    def window_stronger(self) -> bool:
        return self.window_p_stronger < self.alpha


@dataclass(frozen=True)
class Verdict:
    code: str
    headline: str
    summary: str
    reasons: tuple[str, ...]
    what_would_change: tuple[str, ...]


# ------------------------------------------------------------------------------------------ numbers in words

SIGNIFICANT_FIGURES = 2


def format_number(value: float, figures: int = SIGNIFICANT_FIGURES, signed: bool = False) -> str:
    """``figures`` significant figures, thousands separated, never a run of zeros for a non-zero value."""
    if value is None or not math.isfinite(value):
        return "undetermined"
    if value == 0:
        return "0"
    digits = figures - 1 - math.floor(math.log10(abs(value)))
    rounded = round(value, digits)  # negative digits round large values to their leading figures
    decimals = max(0, digits)
    text = f"{rounded:+,.{decimals}f}" if signed else f"{rounded:,.{decimals}f}"
    return text


def format_rate(slope: float, factor: float, unit: str, units: str = "", figures: int = SIGNIFICANT_FIGURES) -> str:
    if slope is None or not math.isfinite(slope):
        return "undetermined"
    text = format_number(slope * factor, figures, signed=True)
    if text == "0":
        text = "0.0"
    return " ".join(part for part in (text, units, unit) if part)


def format_range(lo: float, hi: float, factor: float, unit: str, units: str = "") -> str:
    """Both ends with enough figures that they differ, unless they are equal."""
    figures = SIGNIFICANT_FIGURES
    if all(math.isfinite(v) for v in (lo, hi)) and lo != hi:
        width = abs(hi - lo) * factor
        biggest = max(abs(lo), abs(hi)) * factor
        if biggest > 0:
            figures = max(SIGNIFICANT_FIGURES, min(6, math.floor(math.log10(biggest)) - math.floor(math.log10(width)) + 1))
    return f"{format_rate(lo, factor, '', '', figures)} to {format_rate(hi, factor, unit, units, figures)}"


# The levels a p-value is read against when the sentence does not say (alpha at 99%, 95% and 90% confidence).
USUAL_ALPHAS = (0.01, 0.05, 0.1)


def format_p(p: float, alpha: float | None = None) -> str:
    """Three decimals, or as many more as keep the written value on the same side of alpha as the p-value itself:
    an adjusted p of 0.0503 written "0.050" beside "the data do not show a change" at alpha 0.05 reads as a
    contradiction. Without ``alpha`` the usual levels are kept apart the same way."""
    if p is None or not math.isfinite(p):
        return "p undetermined"
    if p < 0.001:
        return "p < 0.001"
    levels = USUAL_ALPHAS if alpha is None else (alpha,)
    digits = 3
    while digits < 7 and any(_sides_differ(p, round(p, digits), level) for level in levels):
        digits += 1
    return f"p = {p:.{digits}f}"


def _sides_differ(p: float, written: float, level: float) -> bool:
    return (p < level) != (written < level) or (written == level) != (p == level)


def format_probability(p: float) -> str:
    """A chance as a percentage a reader can quote: never "0%" or "100%" for what is only rare or likely."""
    if p is None or not math.isfinite(p):
        return "undetermined"
    if p < 0.001:
        return "under 0.1%"
    if p > 0.999:
        return "over 99.9%"
    if p < 0.01 or p > 0.99:
        return f"{100 * p:.1f}%"
    return f"{100 * p:.0f}%"


def ordinal(n: int) -> str:
    n = int(n)
    suffix = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{suffix}"


def _years(value: float) -> str:
    return f"{value:.0f}" if value >= 3 else f"{value:.1f}"


def _article(noun: str) -> str:
    return "an" if noun[:1] in "aeiou" else "a"


def direction_word(sign: int) -> str:
    return "rising" if sign > 0 else "falling"


# ------------------------------------------------------------------------------------------ the decision


def _contradicted(v: VerdictInputs) -> bool:
    significant_with_trend = v.window_p_vs_zero < v.alpha and v.window_slope * v.trend_sign > 0
    if v.kind in ("pause", "reversal"):
        return significant_with_trend
    if v.kind == "slowdown":
        return significant_with_trend and v.window_slope * v.trend_sign >= abs(v.long_term_slope)
    return v.window_weaker  # acceleration: significantly slower than the long-term pace


def _moved_as_claimed(v: VerdictInputs) -> bool:
    towards = (v.window_slope - v.long_term_slope) * v.trend_sign
    return towards > 0 if v.kind == "acceleration" else towards < 0


def shows_claimed_kind(v: VerdictInputs) -> bool:
    """Does the window's own trend show what was claimed (not just some change)?"""
    if v.kind == "pause":
        return v.window_flat and v.window_weaker
    if v.kind == "reversal":
        return v.window_reversed
    if v.kind == "slowdown":
        return v.window_weaker and not v.window_reversed
    return v.window_stronger


def change_shown(v: VerdictInputs) -> bool:
    return v.change_p_adjusted < v.alpha and _moved_as_claimed(v)


def decide_code(v: VerdictInputs) -> str:
    if not (v.long_term_p < v.alpha or v.long_term_mk_p < v.alpha):
        return NO_TREND
    if v.step_found:
        return LEVEL_SHIFT
    if _contradicted(v):
        return CONTRADICTED
    if change_shown(v):
        if not shows_claimed_kind(v):
            return OTHER_CHANGE
        return MODEL_DEPENDENT if v.disagreeing_models else CHANGE_SUPPORTED
    if v.window_points < MIN_TREND_POINTS or v.window_years < v.years_to_detect:
        return TOO_SHORT
    return CONSISTENT


def what_the_window_shows(v: VerdictInputs) -> str:
    """The window's own behaviour in words, from its range and its comparison with the long-term trend."""
    if v.window_reversed:
        return "reversed"
    if v.window_flat and v.window_weaker:
        return "stopped"
    if v.window_weaker:
        return "slowed"
    if v.window_stronger:
        return "sped up"
    return "changed"


def _comparison(v: VerdictInputs) -> str:
    """How the window's trend stands against the long-term one, in words its p-values justify."""
    lt_text = _long_text(v)
    if v.window_weaker:
        return f"significantly flatter than {lt_text} ({format_p(v.window_p_weaker, v.alpha)})"
    if v.window_stronger:
        return f"significantly steeper than {lt_text} ({format_p(v.window_p_stronger, v.alpha)})"
    return f"not significantly different from {lt_text}"


def _rate(v: VerdictInputs, slope: float) -> str:
    return format_rate(slope, v.rate_factor, v.rate_unit, v.units)


def _window_text(v: VerdictInputs) -> str:
    conf = f"{100 * (1 - v.alpha):.0f}%"
    lo, hi = v.window_ci
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return (f"the trend from {v.span_label} was {_rate(v, v.window_slope)} (too few points for a range of its "
                f"own)")
    return (f"the trend from {v.span_label} was {_rate(v, v.window_slope)} ({conf} range "
            f"{format_range(lo, hi, v.rate_factor, v.rate_unit, v.units)})")


def _long_text(v: VerdictInputs) -> str:
    if v.long_term_significant:
        return f"the long-term {direction_word(v.trend_sign)} trend of {_rate(v, v.long_term_slope)}"
    return f"the long-term trend of {_rate(v, v.long_term_slope)}"


def _capital(text: str) -> str:
    return text[0].upper() + text[1:]


def decide(v: VerdictInputs) -> Verdict:
    code = decide_code(v)
    noun = CLAIM_NOUN.get(v.kind, v.kind)
    span = v.span_label
    years = _years(v.window_years)
    window_text = _window_text(v)
    long_text = _long_text(v)

    if code == NO_TREND:
        headline = f"No clear long-term trend to have {_article(noun)} {noun}: the claim's framing does not apply"
        summary = (f"Over the reference period the series shows no trend distinguishable from its natural variability "
                   f"({_rate(v, v.long_term_slope)}, {format_p(v.long_term_p, v.alpha)}). Talk of {_article(noun)} {noun} "
                   f"presumes a trend to begin with; these data do not establish one, so the claim can be neither "
                   f"confirmed nor refuted this way.")
    elif code == CONTRADICTED:
        if v.kind == "acceleration":
            headline = f"The data point the other way: the trend from {span} appears slower, not faster"
            summary = (f"During the claimed {noun}, {window_text}, significantly flatter than {long_text} "
                       f"({format_p(v.window_p_weaker, v.alpha)}). The data do not support an acceleration over this window.")
        else:
            headline = f"The series kept {direction_word(v.trend_sign)} during the claimed {noun}"
            summary = (f"Rather than {_article(noun)} {noun}, {window_text}: a significant trend in the same direction as "
                       f"{long_text} ({format_p(v.window_p_vs_zero, v.alpha)} against no trend). The window chosen by the claim "
                       f"itself appears to contradict it.")
    elif code == LEVEL_SHIFT:
        headline = (f"A jump in level around {v.step_label}, rather than a change in trend, appears to explain "
                    f"the claimed {noun}")
        summary = (f"{_capital(window_text)}, against {long_text}. A single step of "
                   f"{format_number(v.step_size, signed=True)} {v.units}".rstrip() +
                   f" around {v.step_label}, with the trend unchanged, explains the data at least as well as a "
                   f"change of slope in the window, and it stands out even allowing for the search over dates "
                   f"(adjusted {format_p(v.step_p_adjusted, v.alpha)}). A step may come from a change of instrument, site "
                   f"or method as well as from a real event: check the data's history before reading it as a "
                   f"change in trend.")
    elif code in (CHANGE_SUPPORTED, MODEL_DEPENDENT):
        headline = (f"The data suggest {_article(noun)} {noun} from {span}, even allowing for the chosen window"
                    if code == CHANGE_SUPPORTED else
                    f"Whether the data support {_article(noun)} {noun} from {span} depends on how the noise is "
                    f"modelled")
        summary = (f"{_capital(window_text)}, {_comparison(v)}. A test of a change of slope at the window's "
                   f"boundaries remains significant after allowing for the freedom to pick both ends "
                   f"(adjusted {format_p(v.change_p_adjusted, v.alpha)}).")
        if code == MODEL_DEPENDENT:
            summary += (" Under " + ", ".join(v.disagreeing_models) + " noise, which fits these data about as well, "
                        "the test is not significant, so the change is not clearly established.")
        summary += " This says the rate changed; it does not say why, and the result rests on the noise model."
    elif code == OTHER_CHANGE:
        shown = what_the_window_shows(v)
        headline = f"The trend {shown} around {v.start_label}, but the data do not show {_article(noun)} {noun}"
        summary = (f"{_capital(window_text)}, {_comparison(v)}. A change of slope at the window's boundaries is "
                   f"significant even allowing for the chosen window (adjusted {format_p(v.change_p_adjusted, v.alpha)}), "
                   f"but what the window shows is not what was claimed. {_claim_requirement(v)}")
    elif code == TOO_SHORT:
        need = (f"about {_years(v.years_to_detect)} years" if math.isfinite(v.years_to_detect)
                else "a much longer record")
        headline = f"{years} years is too short to tell {_article(noun)} {noun} from the ongoing trend"
        summary = (f"{_capital(window_text)}, while {long_text} would need {need} of data to be detected nine times "
                   f"in ten against this series' year-to-year variability. A window this short can look flat, or "
                   f"steep, by chance alone; the data do not show a change in trend "
                   f"(adjusted {format_p(v.change_p_adjusted, v.alpha)}).")
    else:
        headline = f"The {years}-year spell is consistent with the long-term trend continuing"
        summary = (f"{_capital(window_text)}, against {long_text}. {_spell_sentence(v)} The test of a change of "
                   f"slope at the window's boundaries, allowing for the choice of window, is not significant "
                   f"(adjusted {format_p(v.change_p_adjusted, v.alpha)}): the data do not show that the trend changed, "
                   f"though a smaller change could go unseen.")

    reasons = (
        f"Long-term trend over the reference period: {_rate(v, v.long_term_slope)} ({format_p(v.long_term_p, v.alpha)}).",
        f"Window trend: {_capital(window_text)} ({format_p(v.window_p_vs_zero, v.alpha)} against no trend).",
        f"Window against the long-term trend: one-sided "
        f"{format_p(v.window_p_weaker if v.kind != 'acceleration' else v.window_p_stronger, v.alpha)} "
        f"in the claimed direction, before allowing for the choice of window.",
        f"Change of slope at the window's boundaries: {format_p(v.change_p_nominal, v.alpha)} for that window alone, "
        f"{format_p(v.change_p_adjusted, v.alpha)} once both ends are treated as chosen.",
        f"Chance of a window this extreme somewhere in a record this long, with no change in trend: "
        f"{format_probability(v.spell_probability)}.",
        f"Years of data needed to detect the long-term trend nine times in ten: {_years(v.years_to_detect)}; "
        f"the window spans {years}.",
    )
    return Verdict(code=code, headline=headline, summary=summary, reasons=reasons, what_would_change=())


def _spell_sentence(v: VerdictInputs) -> str:
    chance = format_probability(v.spell_probability)
    if v.spell_probability >= v.alpha:
        return (f"Allowing for natural variability and for the choice of the window, a spell like this is not "
                f"unusual (chance of one somewhere in a record this long: {chance}).")
    return (f"A spell this extreme is unusual for a record this long (chance of one somewhere in it: {chance}), "
            f"but it is not clearly a change of trend.")


def _claim_requirement(v: VerdictInputs) -> str:
    """Why the window does not show the claimed kind, with the p-value each statement rests on."""
    weaker, zero, stronger = (format_p(p, v.alpha) for p in (v.window_p_weaker, v.window_p_vs_zero, v.window_p_stronger))
    if v.kind == "pause":
        if not v.window_weaker:
            return f"The window's trend is not significantly flatter than the long-term one ({weaker})."
        return f"The window's trend still differs significantly from no trend at all ({zero})."
    if v.kind == "reversal":
        return f"The window's trend is not significantly of the opposite sign ({zero} against no trend)."
    if v.kind == "slowdown":
        if v.window_reversed:
            return f"The trend did more than slow: it significantly reversed ({zero} against no trend)."
        return f"The window's trend is not significantly flatter than the long-term one ({weaker})."
    return f"The window's trend is not significantly steeper than the long-term one ({stronger})."
