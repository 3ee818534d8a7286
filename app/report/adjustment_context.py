"""The raw-and-adjusted comparison a covariate adjustment adds to the report, worked out from the stored document.

The document's ``adjustment`` holds the fitted factors and the full audit of the adjusted series
(``app.audit.serialize``); this module only words and formats them, side by side with the raw audit.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from app.report.adjusted_chart import factor_names
from app.report.context import VERDICT_LABELS
from app.report.numbers import Rate, format_p, format_percent, format_probability, is_number, shared_decimals, time_of

LAG_UNITS = {"annual": "year", "quarterly": "quarter", "monthly": "month"}
LAG_RULE_WORDS = {"ls": "the one that fits best by least squares",
                  "aic": "the one with the smallest AIC, allowing for AR(1) noise"}


@dataclass(frozen=True)
class FactorView:
    name: str
    coefficient: str
    coefficient_range: str
    per_unit: str  # what the coefficient measures: '°C per unit of ocean_index'
    lag: str
    variance_share: str
    p_value: str


@dataclass(frozen=True)
class VerdictSide:
    heading: str
    code: str
    label: str
    headline: str
    summary: str


@dataclass(frozen=True)
class ComparisonRow:
    label: str
    measured: str
    adjusted: str


@dataclass(frozen=True)
class AdjustmentView:
    factor_names: str
    factors: tuple[FactorView, ...]
    measured: VerdictSide
    adjusted: VerdictSide
    same_verdict: bool
    comparison: tuple[ComparisonRow, ...]
    residual_change: str
    fit_notes: tuple[str, ...]


def _number(value: Any) -> str:
    return f"{value:.3g}" if is_number(value) else "undetermined"


def _range(interval: Any) -> str:
    if not interval or len(interval) != 2 or not all(is_number(v) for v in interval):
        return "undetermined"
    return f"{_number(interval[0])} to {_number(interval[1])}"


def lag_text(lag: Any, lag_years: Any, sampling: str) -> str:
    """'5 months (0.42 years)', '1 year', 'none'."""
    if not is_number(lag):
        return "undetermined"
    lag = int(lag)
    if lag == 0:
        return "none"
    unit = LAG_UNITS.get(sampling, "step")
    text = f"{lag} {unit}{'s' if lag != 1 else ''}"
    if unit != "year" and is_number(lag_years):
        text += f" ({lag_years:.2g} years)"
    return text


def _factor(factor: dict[str, Any], units: str, sampling: str) -> FactorView:
    name = str(factor.get("name", ""))
    return FactorView(name=name, coefficient=_number(factor.get("coefficient")),
                      coefficient_range=_range(factor.get("ci")),
                      per_unit=f"{units + ' ' if units else ''}per unit of {name}",
                      lag=lag_text(factor.get("lag"), factor.get("lag_years"), sampling),
                      variance_share=format_percent(factor.get("variance_share"), 1),
                      p_value=format_p(factor.get("p_value")))


def _side(doc: dict[str, Any], heading: str) -> VerdictSide:
    verdict = doc.get("verdict") or {}
    code = str(verdict.get("code", ""))
    return VerdictSide(heading=heading, code=code, label=VERDICT_LABELS.get(code, code),
                       headline=str(verdict.get("headline", "")), summary=str(verdict.get("summary", "")))


def _with_range(rate: Rate, part: dict[str, Any], conf: str) -> str:
    return f"{rate.text(part.get('slope'))} ({conf} range {rate.range_text(part.get('ci'))})"


def _comparison(doc: dict[str, Any], adjusted: dict[str, Any], adjustment: dict[str, Any], rate: Rate,
                conf: str) -> tuple[ComparisonRow, ...]:
    units = (doc.get("inputs") or {}).get("units") or ""

    def both(label: str, show) -> ComparisonRow:
        return ComparisonRow(label, show(doc), show(adjusted))

    raw_sd, adjusted_sd = adjustment.get("residual_sd_raw"), adjustment.get("residual_sd_adjusted")
    decimals = shared_decimals(raw_sd, adjusted_sd)

    def spread(value: Any) -> str:
        return (f"{value:.{decimals}f}" if is_number(value) else "undetermined") + (f" {units}" if units else "")

    def span(d: dict[str, Any]) -> str:
        inputs = d.get("inputs") or {}
        return f"{inputs.get('n')} ({time_of(d, inputs.get('start'))} to {time_of(d, inputs.get('end'))})"

    return (
        both("Verdict", lambda d: VERDICT_LABELS.get((d.get("verdict") or {}).get("code"), "")),
        both("Long-term trend", lambda d: _with_range(rate, d.get("long_term") or {}, conf)),
        both("Trend in the claimed window", lambda d: _with_range(rate, d.get("window") or {}, conf)),
        both("Evidence of a change at the claimed date (p, allowing for the choice of date)",
             lambda d: format_p((d.get("trend_change") or {}).get("p_value_adjusted"))),
        both("Chance of a spell like this anywhere in the record",
             lambda d: format_probability((d.get("spell") or {}).get("probability"))),
        ComparisonRow("Spread of the data about the fit (standard deviation)",
                      spread(raw_sd), spread(adjusted_sd)),
        both("Points audited", span),
    )


def _residual_change(adjustment: dict[str, Any]) -> str:
    raw, adjusted = adjustment.get("residual_sd_raw"), adjustment.get("residual_sd_adjusted")
    if not (is_number(raw) and is_number(adjusted)) or raw <= 0:
        return ""
    change = 1.0 - adjusted / raw
    if abs(change) < 0.005:
        return "Taking the factors out leaves the spread about the trend unchanged."
    word = "smaller" if change > 0 else "larger"
    return f"Taking the factors out makes the spread about the trend {format_percent(abs(change))} {word}."


def _fit_notes(doc: dict[str, Any], adjustment: dict[str, Any], rate: Rate, conf: str) -> tuple[str, ...]:
    notes = [f"Each factor's delay (its lag) is {LAG_RULE_WORDS.get(adjustment.get('lag_rule'), 'chosen by the fit')}; "
             f"the ranges treat the chosen delay as known, as Foster & Rahmstorf (2011) did.",
             f"In the joint fit the trend is {rate.text(adjustment.get('trend_slope'))} ({conf} range "
             f"{rate.range_text(adjustment.get('trend_ci'))}), on {adjustment.get('n_used')} points."]
    dropped = [t for t in adjustment.get("dropped_times") or [] if is_number(t)]
    if dropped:
        notes.append(f"{len(dropped)} point{'s' if len(dropped) != 1 else ''} of the series "
                     f"({time_of(doc, dropped[0])}" + (f" to {time_of(doc, dropped[-1])}" if len(dropped) > 1 else "")
                     + ") lack a value of every factor at every lag tried, so the fit and the adjusted audit leave "
                       "them out.")
    return tuple(notes)


def adjustment_view(doc: dict[str, Any]) -> AdjustmentView | None:
    """The side-by-side view, or None when the audit was not adjusted."""
    adjustment = doc.get("adjustment")
    if not adjustment or not isinstance(adjustment.get("audit"), dict):
        return None
    adjusted = adjustment["audit"]
    rate = Rate.of(doc)
    conf = f"{100 * float((doc.get('options') or {}).get('confidence', 0.95)):.0f}%"
    inputs = doc.get("inputs") or {}
    names = factor_names(doc)
    measured_side, adjusted_side = _side(doc, "As measured"), _side(adjusted, f"Adjusted for {names}")
    return AdjustmentView(
        factor_names=names,
        factors=tuple(_factor(f, inputs.get("units") or "", inputs.get("sampling") or "")
                      for f in adjustment.get("factors") or []),
        measured=measured_side, adjusted=adjusted_side, same_verdict=measured_side.code == adjusted_side.code,
        comparison=_comparison(doc, adjusted, adjustment, rate, conf),
        residual_change=_residual_change(adjustment),
        fit_notes=_fit_notes(doc, adjustment, rate, conf),
    )
