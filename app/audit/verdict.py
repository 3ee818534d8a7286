"""The verdict: one code, a headline, a short summary and the reasons, decided in one place.

Precedence (first match wins; alpha = 1 - confidence):

1. ``no_long_term_trend``     neither the parametric test nor Mann-Kendall finds a trend over the
                              reference period at alpha, so a "pause" or "acceleration" of it has nothing
                              to be measured against. (Both must fail: on a smooth, nearly noiseless
                              series such as a concentration record the AR(1) effective sample size
                              collapses and the parametric test alone would miss an obvious trend.)
2. ``claim_contradicted``     the window itself shows a significant trend in the direction the claim
                              denies (a "pause" during which the series kept rising significantly).
3. ``trend_change_supported`` the directional trend-change test is significant at alpha *after*
                              adjusting for the choice of the start date (sup-F by parametric bootstrap),
                              and the window's slope moved the way the claim says.
4. ``too_short_to_tell``      the window is shorter than the time needed to detect the long-term trend
                              against this series' noise, or holds fewer than ``MIN_TREND_POINTS`` points.
5. ``consistent_with_trend``  otherwise: the spell is within what the noise around the long-term trend produces.

The wording is hedged on purpose: a statistical audit can show that data are or are not consistent
with a model; it cannot attribute causes, and it rests on the noise model.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from app.vocabulary import CHANGE_SUPPORTED, CONSISTENT, CONTRADICTED, NO_TREND, TOO_SHORT, VERDICT_CODES  # noqa: F401

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
    change_p_nominal: float  # directional test at the claimed date
    change_p_adjusted: float  # the same, adjusted for the choice of date
    spell_probability: float
    years_to_detect: float
    rate_factor: float = 10.0
    rate_unit: str = "per decade"
    units: str = ""
    first_label: str = ""  # the window's first and last periods as the data name them: 1998, 2016-01
    last_label: str = ""
    span_years: float = float("nan")  # years the window's periods cover (15 annual points: 15)

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


@dataclass(frozen=True)
class Verdict:
    code: str
    headline: str
    summary: str
    reasons: tuple[str, ...]
    what_would_change: tuple[str, ...]


def format_rate(slope: float, factor: float, unit: str, units: str = "") -> str:
    if slope is None or not math.isfinite(slope):
        return "undetermined"
    value = slope * factor
    magnitude = abs(value)
    digits = 3 if magnitude < 0.1 else 2 if magnitude < 10 else 1
    text = f"{value:+.{digits}f}"
    return f"{text} {units} {unit}".replace("  ", " ") if units else f"{text} {unit}"


def format_p(p: float) -> str:
    if p is None or not math.isfinite(p):
        return "p undetermined"
    return "p < 0.001" if p < 0.001 else f"p = {p:.3f}"


def _years(value: float) -> str:
    return f"{value:.0f}" if value >= 3 else f"{value:.1f}"


def _article(noun: str) -> str:
    return "an" if noun[:1] in "aeiou" else "a"


def _direction_word(sign: int) -> str:
    return "rising" if sign > 0 else "falling"


def _contradicted(v: VerdictInputs) -> bool:
    significant_with_trend = v.window_p_vs_zero < v.alpha and v.window_slope * v.trend_sign > 0
    if v.kind in ("pause", "reversal"):
        return significant_with_trend
    if v.kind == "slowdown":
        return significant_with_trend and v.window_slope * v.trend_sign >= abs(v.long_term_slope)
    return v.window_p_weaker < v.alpha  # acceleration: significantly slower than the long-term pace


def _moved_as_claimed(v: VerdictInputs) -> bool:
    towards = (v.window_slope - v.long_term_slope) * v.trend_sign
    return towards > 0 if v.kind == "acceleration" else towards < 0


def decide_code(v: VerdictInputs) -> str:
    if not (v.long_term_p < v.alpha or v.long_term_mk_p < v.alpha):
        return NO_TREND
    if _contradicted(v):
        return CONTRADICTED
    if v.change_p_adjusted < v.alpha and _moved_as_claimed(v):
        return CHANGE_SUPPORTED
    if v.window_points < MIN_TREND_POINTS or v.window_years < v.years_to_detect:
        return TOO_SHORT
    return CONSISTENT


def decide(v: VerdictInputs) -> Verdict:
    code = decide_code(v)
    rate = lambda s: format_rate(s, v.rate_factor, v.rate_unit, v.units)  # noqa: E731
    noun = CLAIM_NOUN.get(v.kind, v.kind)
    span = v.span_label
    years = _years(v.window_years)
    conf = f"{100 * (1 - v.alpha):.0f}%"
    lo, hi = v.window_ci
    window_text = f"the trend from {span} was {rate(v.window_slope)} ({conf} range {rate(lo)} to {rate(hi)})"
    long_text = f"the long-term trend of {rate(v.long_term_slope)}"
    trend_dir = _direction_word(v.trend_sign)

    if code == NO_TREND:
        headline = f"No clear long-term trend to have {_article(noun)} {noun}: the claim's framing does not apply"
        summary = (f"Over the reference period the series shows no trend distinguishable from its natural variability "
                   f"({rate(v.long_term_slope)}, {format_p(v.long_term_p)}). Talk of {_article(noun)} {noun} presumes a trend to begin "
                   f"with; these data do not establish one, so the claim can be neither confirmed nor refuted this way.")
    elif code == CONTRADICTED:
        if v.kind == "acceleration":
            headline = f"The data point the other way: the trend from {span} appears slower, not faster"
            summary = (f"During the claimed {noun}, {window_text}, significantly below {long_text} "
                       f"({format_p(v.window_p_weaker)}). The data do not support an acceleration over this window.")
        else:
            headline = f"The series kept {trend_dir} during the claimed {noun}"
            summary = (f"Rather than {_article(noun)} {noun}, {window_text}: a significant trend in the same direction as "
                       f"{long_text} ({format_p(v.window_p_vs_zero)} against no trend). The window chosen by the claim "
                       f"itself appears to contradict it.")
    elif code == CHANGE_SUPPORTED:
        headline = f"The data support a change in trend around {v.start_label}, even allowing for the chosen date"
        summary = (f"{window_text[0].upper() + window_text[1:]}, against {long_text}. A trend-change test at the "
                   f"claimed date remains significant after allowing for the claimant's freedom to pick that date "
                   f"(adjusted {format_p(v.change_p_adjusted)}). This says the rate changed; it does not say why, "
                   f"and the result rests on the noise model.")
    elif code == TOO_SHORT:
        need = f"about {_years(v.years_to_detect)} years" if math.isfinite(v.years_to_detect) else "a much longer record"
        headline = f"{years} years is too short to tell {_article(noun)} {noun} from the ongoing trend"
        summary = (f"{window_text[0].upper() + window_text[1:]}, while {long_text} would take {need} of data to show "
                   f"itself against this series' year-to-year variability. A window this short can look flat, or steep, "
                   f"by chance alone; the data do not show a change in trend "
                   f"(adjusted {format_p(v.change_p_adjusted)}).")
    else:
        headline = f"The {years}-year spell is consistent with the long-term trend continuing"
        summary = (f"{window_text[0].upper() + window_text[1:]}, against {long_text}. Allowing for natural variability "
                   f"and for the choice of the window, a spell like this is not unusual "
                   f"(chance of one somewhere in a record this long: {v.spell_probability:.0%}; trend change at the "
                   f"claimed date, adjusted {format_p(v.change_p_adjusted)}). The data do not show that the trend changed.")

    reasons = (
        f"Long-term trend over the reference period: {rate(v.long_term_slope)} ({format_p(v.long_term_p)}).",
        f"Window trend: {rate(v.window_slope)}, {conf} range {rate(lo)} to {rate(hi)} ({format_p(v.window_p_vs_zero)} against no trend).",
        f"Window against the long-term trend: one-sided {format_p(v.window_p_weaker if v.kind != 'acceleration' else v.window_p_stronger)} "
        f"in the claimed direction, before allowing for the choice of window.",
        f"Trend change at the claimed date: {format_p(v.change_p_nominal)} at that date alone, "
        f"{format_p(v.change_p_adjusted)} once the date is treated as chosen.",
        f"Chance of a window this extreme somewhere in a record this long, with no change in trend: {v.spell_probability:.1%}.",
        f"Years of data needed to detect the long-term trend: {_years(v.years_to_detect)}; the window spans {years}.",
    )
    return Verdict(code=code, headline=headline, summary=summary, reasons=reasons, what_would_change=())
