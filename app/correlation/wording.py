"""The correlation audit's verdict and warnings: codes, precedence and wording in one place.

Precedence (first match wins; alpha = 1 - confidence):

1. ``no_clear_link``          the full-record slope of response on driver is not distinguishable from zero
                              once the residuals' persistence is allowed for: there is no relationship for
                              short windows to depart from.
2. ``weak_windows_unusual``   under the null "the response follows the fitted relationship exactly, plus noise
                              like the data's", as many weak windows, or a window as weak as the weakest, came
                              up in fewer than alpha of the simulations.
3. ``windows_agree``          no window's correlation falls below 0.5.
4. ``weak_windows_expected``  otherwise: the weak windows are what that null produces.

The wording is hedged on purpose: the audit checks consistency with a steady relationship; it does not
show that the driver causes the response.
"""

from __future__ import annotations

from app.audit.verdict import format_p
from app.correlation.result import CorrelationVerdict
from app.stats.correlate import WEAK_R, CorrelationNull, CorrelationSet, DriverRegression, RollingCorrelation
from app.vocabulary import NO_CLEAR_LINK, WEAK_WINDOWS_EXPECTED, WEAK_WINDOWS_UNUSUAL, WINDOWS_AGREE


PERSISTENT_PHI = 0.9  # residual memory beyond which the slope's range itself rests on a shaky noise estimate
LEVELS_GAP = 0.3  # levels' r this much above the detrended r: the shared trend carries the correlation
NOT_CAUSE = "This checks consistency with a steady relationship; it does not by itself show that {d} drives {r}."


def _pct(v: float) -> str:
    return f"{100 * v:.0f}%"


def _num(v: float) -> str:
    return f"{v:.3g}"


def _unit_text(units: str) -> str:
    return f" {units}" if units else ""


def slope_phrase(reg: DriverRegression, per_doubling, transform: str, driver: str, response_units: str,
                 driver_units: str) -> str:
    """The full-record relationship in words, in the units a reader would use."""
    pct = _pct(reg.confidence)
    ru = _unit_text(response_units)
    if per_doubling is not None:
        value, (lo, hi) = per_doubling
        return f"{_num(value)}{ru} per doubling of {driver} ({pct} range {_num(lo)} to {_num(hi)})"
    per = f"unit of cumulative {driver}" if transform == "cumulative" else (
        f"{driver_units} of {driver}" if driver_units else f"unit of {driver}")
    return f"{_num(reg.slope)}{ru} per {per} ({pct} range {_num(reg.ci[0])} to {_num(reg.ci[1])})"


def decide(reg: DriverRegression, rolling: RollingCorrelation, null: CorrelationNull, *, alpha: float,
           window_years: float, start: int, end: int, driver: str, response: str, relationship: str) -> CorrelationVerdict:
    windows = rolling.r.size
    weak = rolling.share_below_half
    lo, hi = null.share_below_half_band
    period = f"Over {start} to {end}"
    null_text = (f"when a response follows this relationship exactly, with noise like the data's, the share is "
                 f"{_pct(lo)} to {_pct(hi)} in 90% of {null.n_simulations} simulations")
    reasons = (f"full-record slope {format_p(reg.p_value, alpha)}",
               f"{_pct(weak)} of {windows} windows of {window_years:g} years have r below {WEAK_R:g}",
               f"null share of weak windows: mean {_pct(null.share_below_half_mean)}, 90% band {_pct(lo)} to {_pct(hi)}",
               f"chance under the null of as many weak windows: {null.probability_share:.3g}",
               f"chance under the null of a window as weak as the weakest (r = {rolling.sign * rolling.min_r:.2f}): "
               f"{null.probability_min_r:.3g}")
    if reg.p_value >= alpha:
        return CorrelationVerdict(
            NO_CLEAR_LINK, f"No clear full-record relationship between {driver} and {response}",
            f"{period}, {response} changes by {relationship}, a range that includes no relationship at all once the "
            f"residuals' persistence is allowed for. Short-window correlations cannot be judged against a "
            f"relationship the record does not show.", reasons)
    if null.probability_share < alpha or null.probability_min_r < alpha:
        p = min(null.probability_share, null.probability_min_r)
        return CorrelationVerdict(
            WEAK_WINDOWS_UNUSUAL, f"Short windows co-move less than the full-record relationship would lead one to expect",
            f"{period}, {response} changes by {relationship}. {_pct(weak)} of the {window_years:g}-year windows show a "
            f"correlation below {WEAK_R:g}; {null_text}, and windows this weak came up in only {_pct(p)} of them. "
            f"The relationship may have changed over time, or other factors may dominate in some periods. "
            + NOT_CAUSE.format(d=driver, r=response), reasons)
    if weak == 0:
        return CorrelationVerdict(
            WINDOWS_AGREE, f"Every {window_years:g}-year window shows {driver} and {response} moving together",
            f"{period}, {response} changes by {relationship}, and no {window_years:g}-year window has a correlation "
            f"below {WEAK_R:g}. " + NOT_CAUSE.format(d=driver, r=response), reasons)
    return CorrelationVerdict(
        WEAK_WINDOWS_EXPECTED,
        f"Weak {window_years:g}-year correlations are what a steady relationship with natural variability produces",
        f"{period}, {response} changes by {relationship}. {_pct(weak)} of the {window_years:g}-year windows show a "
        f"correlation below {WEAK_R:g}; {null_text}, and a window as weak as the weakest came up in "
        f"{_pct(null.probability_min_r)} of them. " + NOT_CAUSE.format(d=driver, r=response), reasons)


def warnings_for(correlations: CorrelationSet, reg: DriverRegression, *, n_shared: int, n_response: int,
                 driver: str, response: str) -> tuple[str, ...]:
    notes = []
    if correlations.both_trending:
        notes.append(
            f"Both {driver} and {response} trend over the shared period, so the correlation of their levels "
            f"(r = {correlations.levels:.2f}) largely reflects the shared trend and would be high for unrelated trending "
            f"series too (Granger & Newbold 1974). The detrended correlation (r = {correlations.detrended:.2f}) and the "
            f"correlation of step-to-step changes (r = {correlations.differences:.2f}) are fairer measures of co-movement.")
    elif abs(correlations.levels) - abs(correlations.detrended) > LEVELS_GAP:
        notes.append(f"The correlation of levels (r = {correlations.levels:.2f}) is much stronger than that of the "
                     f"detrended series (r = {correlations.detrended:.2f}): it rests mostly on the shared trend.")
    if reg.noise.rho1 > PERSISTENT_PHI:
        notes.append(f"The residuals about the fitted relationship are very persistent (lag-1 autocorrelation "
                     f"{reg.noise.rho1:.2f}): the relationship may be missing a slow factor, and its range is uncertain "
                     f"even after the allowance made for persistence.")
    if n_shared < n_response:
        notes.append(f"Only {n_shared} of the response's {n_response} points have a driver value at the same time; "
                     f"everything here uses those {n_shared}.")
    return tuple(notes)
