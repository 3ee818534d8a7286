"""Ordinary least squares: the straight-line trend and a general design-matrix solver."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from app.errors import InputError, Location, SeriesContentError

MIN_LINE_POINTS = 2  # enough to draw a line
MIN_TREND_POINTS = 3  # enough to judge one: a line through two points has no residual


@dataclass(frozen=True)
class LinearFit:
    """A least-squares fit y = X @ coef + residuals."""

    coef: np.ndarray
    residuals: np.ndarray
    fitted: np.ndarray
    rss: float
    dof: int  # n - number of columns
    cov_unscaled: np.ndarray  # (X'X)^-1

    @property
    def sigma(self) -> float:
        """Residual standard deviation sqrt(RSS / dof)."""
        return float(np.sqrt(self.rss / self.dof)) if self.dof > 0 else float("nan")


@dataclass(frozen=True)
class TrendFit:
    """A straight line through (t, y). Slope in y-units per unit of t (per year inside)."""

    slope: float
    intercept: float  # value of the line at t = 0
    t_mean: float
    level_at_mean: float  # value of the line at t = t_mean (well conditioned)
    residuals: np.ndarray
    fitted: np.ndarray
    r_squared: float
    n: int
    slope_stderr_white: float  # classical OLS standard error, assuming white noise
    residual_sd: float

    def line(self, t: np.ndarray) -> np.ndarray:
        return self.level_at_mean + self.slope * (np.asarray(t, dtype=float) - self.t_mean)


def fit_linear(design: np.ndarray, y: np.ndarray) -> LinearFit:
    """Least squares through a QR factorisation (stable on ill-conditioned designs such as Longley)."""
    X = np.asarray(design, dtype=float)
    y = np.asarray(y, dtype=float)
    # Scaling columns to unit norm before QR keeps badly scaled designs accurate.
    scale = np.linalg.norm(X, axis=0)
    scale[scale == 0] = 1.0
    q, r = np.linalg.qr(X / scale)
    coef_scaled = np.linalg.solve(r, q.T @ y)
    coef = coef_scaled / scale
    fitted = X @ coef
    residuals = y - fitted
    r_inv = np.linalg.inv(r)
    cov_unscaled = (r_inv @ r_inv.T) / np.outer(scale, scale)
    return LinearFit(coef=coef, residuals=residuals, fitted=fitted, rss=float(residuals @ residuals),
                     dof=X.shape[0] - X.shape[1], cov_unscaled=cov_unscaled)


@dataclass(frozen=True)
class TrendRows:
    """Straight lines fitted at once to every row of a (size, n) array sharing one time axis."""

    t_centred: np.ndarray  # t - mean(t), shape (n,)
    sxx: float  # sum of squared centred times
    slope: np.ndarray  # (size,)
    level_at_mean: np.ndarray  # (size,) row means
    residuals: np.ndarray  # (size, n)

    @property
    def n(self) -> int:
        return int(self.t_centred.size)

    @property
    def slope_stderr_white(self) -> np.ndarray:
        """Classical OLS standard error of each slope, assuming white noise."""
        rss = np.einsum("ij,ij->i", self.residuals, self.residuals)
        return np.sqrt(rss / (self.n - 2) / self.sxx)


def check_fraction(value: float, name: str) -> None:
    """A probability-like option (confidence, alpha, power) must lie strictly between 0 and 1."""
    if not 0.0 < value < 1.0:
        raise InputError(f"{name} must lie strictly between 0 and 1, got {value}", location=Location(field=name),
                         fix=f"Give {name} as a fraction such as 0.95 or 0.05")


def check_trend_inputs(t: np.ndarray, y: np.ndarray,
                       min_points: int = MIN_TREND_POINTS) -> tuple[np.ndarray, np.ndarray]:
    """Float arrays for a trend fit, or a SeriesContentError saying what is wrong with them."""
    t = np.asarray(t, dtype=float)
    y = np.asarray(y, dtype=float)
    if t.ndim != 1 or y.shape[-1] != t.size:
        raise SeriesContentError(f"time has {t.size} values but the series has {y.shape[-1]}",
                                 location=Location(field="series"), fix="Give one time for every value")
    if t.size < min_points:
        raise SeriesContentError(f"a trend needs at least {min_points} points, got {t.size}",
                                 location=Location(field="series"), fix="Use a longer stretch of the series")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(y))):
        raise SeriesContentError("the series contains missing or infinite values", location=Location(field="series"),
                                 fix="Drop or fill the missing values before fitting a trend")
    if np.ptp(t) == 0:
        raise SeriesContentError("every point has the same time", location=Location(field="series.time"),
                                 fix="Give the points distinct times")
    return t, y


def fit_trend_rows(t: np.ndarray, rows: np.ndarray) -> TrendRows:
    """OLS straight line through every row of ``rows`` (shape (size, n)) against one time axis, with matrix ops."""
    t, rows = check_trend_inputs(t, np.atleast_2d(rows), MIN_LINE_POINTS)
    tc = t - t.mean()
    sxx = float(tc @ tc)
    level = rows.mean(axis=1)
    slope = (rows - level[:, None]) @ tc / sxx
    residuals = rows - level[:, None] - slope[:, None] * tc
    return TrendRows(t_centred=tc, sxx=sxx, slope=slope, level_at_mean=level, residuals=residuals)


def fit_trend(t: np.ndarray, y: np.ndarray) -> TrendFit:
    """OLS straight line. Time is centred first so the slope is exact for decimal years near 2000."""
    t, y = check_trend_inputs(t, y, MIN_LINE_POINTS)
    rows = fit_trend_rows(t, y[None, :])
    n = t.size
    t_mean = float(t.mean())
    tc = rows.t_centred
    sxx = rows.sxx
    y_mean = float(rows.level_at_mean[0])
    slope = float(rows.slope[0])
    fitted = y_mean + slope * tc
    residuals = rows.residuals[0]
    rss = float(residuals @ residuals)
    tss = float(((y - y_mean) ** 2).sum())
    residual_sd = float(np.sqrt(rss / (n - 2))) if n > 2 else float("nan")
    return TrendFit(
        slope=slope,
        intercept=y_mean - slope * t_mean,
        t_mean=t_mean,
        level_at_mean=y_mean,
        residuals=residuals,
        fitted=fitted,
        r_squared=1.0 - rss / tss if tss > 0 else 0.0,
        n=n,
        slope_stderr_white=float(residual_sd / np.sqrt(sxx)) if n > 2 else float("nan"),
        residual_sd=residual_sd,
    )
