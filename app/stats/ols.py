"""Ordinary least squares: the straight-line trend and a general design-matrix solver."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


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


def fit_trend(t: np.ndarray, y: np.ndarray) -> TrendFit:
    """OLS straight line. Time is centred first so the slope is exact for decimal years near 2000."""
    t = np.asarray(t, dtype=float)
    y = np.asarray(y, dtype=float)
    n = t.size
    t_mean = float(t.mean())
    tc = t - t_mean
    sxx = float(tc @ tc)
    y_mean = float(y.mean())
    slope = float(tc @ (y - y_mean) / sxx)
    fitted = y_mean + slope * tc
    residuals = y - fitted
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
        slope_stderr_white=residual_sd / np.sqrt(sxx) if n > 2 else float("nan"),
        residual_sd=residual_sd,
    )
