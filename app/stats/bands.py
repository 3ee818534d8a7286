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
from numpy.typing import ArrayLike
from scipy import stats

from app.stats.ols import TrendFit


@dataclass(frozen=True)
class LineBand:
    time: np.ndarray
    value: np.ndarray  # the fitted line at each time
    lower: np.ndarray | None  # None when the slope's error is unknown (too few points, a perfect fit)
    upper: np.ndarray | None


def band_half_width(t: np.ndarray, *, t_mean: ArrayLike, n: int, residual_sd: ArrayLike,
                    slope_stderr_white: ArrayLike, slope_stderr: ArrayLike, confidence: float,
                    dof: float) -> np.ndarray:
    """Half the band's width at times ``t``; every argument broadcasts, so many fits are banded at once."""
    inflation = np.asarray(slope_stderr) / np.asarray(slope_stderr_white)
    level_variance = np.asarray(residual_sd) ** 2 / n * inflation ** 2
    se = np.sqrt(level_variance + (np.asarray(t) - t_mean) ** 2 * np.asarray(slope_stderr) ** 2)
    return float(stats.t.ppf(0.5 + confidence / 2, max(dof, 1.0))) * se


def line_band(t: np.ndarray, fit: TrendFit, slope_stderr: float, confidence: float, dof: float) -> LineBand:
    """The line of ``fit`` at times ``t`` with its ``confidence`` band, given the slope's standard error
    ``slope_stderr`` under the chosen noise model and that model's degrees of freedom ``dof``."""
    t = np.asarray(t, dtype=float)
    line = fit.line(t)
    if not (np.isfinite(slope_stderr) and fit.slope_stderr_white > 0):
        return LineBand(time=t, value=line, lower=None, upper=None)
    half = band_half_width(t, t_mean=fit.t_mean, n=fit.n, residual_sd=fit.residual_sd,
                           slope_stderr_white=fit.slope_stderr_white, slope_stderr=slope_stderr,
                           confidence=confidence, dof=dof)
    return LineBand(time=t, value=line, lower=line - half, upper=line + half)
