"""The fitted straight line with a pointwise confidence band for the line itself (the mean, not a new point).

Under white noise the band is the textbook one for the mean response of a simple regression,

    yhat(t) ± t_{dof, (1+c)/2} · s · sqrt(1/n + (t - tbar)² / Sxx)

(Montgomery, Peck & Vining 2012, Introduction to Linear Regression Analysis, 5th ed., eq. 2.43). Under
autocorrelated noise the slope's standard error is inflated by the noise model (``app.stats.trend``); the
level's is inflated by the same factor, so both parts of the variance grow alike and the degrees of freedom
are the noise model's.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats

from app.stats.ols import TrendFit


@dataclass(frozen=True)
class LineBand:
    time: np.ndarray
    value: np.ndarray  # the fitted line at each time
    lower: np.ndarray | None  # None when the slope's error is unknown (too few points, a perfect fit)
    upper: np.ndarray | None


def line_band(t: np.ndarray, fit: TrendFit, slope_stderr: float, confidence: float, dof: float) -> LineBand:
    """The line of ``fit`` at times ``t`` with its ``confidence`` band, given the slope's standard error
    ``slope_stderr`` under the chosen noise model and that model's degrees of freedom ``dof``."""
    t = np.asarray(t, dtype=float)
    line = fit.line(t)
    if not (np.isfinite(slope_stderr) and fit.slope_stderr_white > 0):
        return LineBand(time=t, value=line, lower=None, upper=None)
    inflation = slope_stderr / fit.slope_stderr_white
    level_variance = fit.residual_sd ** 2 / fit.n * inflation ** 2
    se = np.sqrt(level_variance + (t - fit.t_mean) ** 2 * slope_stderr ** 2)
    critical = float(stats.t.ppf(0.5 + confidence / 2, max(dof, 1.0)))
    return LineBand(time=t, value=line, lower=line - critical * se, upper=line + critical * se)
