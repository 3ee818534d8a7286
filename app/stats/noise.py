"""Noise models for trend residuals: estimation and vectorised simulation.

Models: white noise, AR(1) and ARMA(1,1). Monthly climate anomalies are strongly
autocorrelated; treating them as white noise makes trend ranges several times too narrow
(Santer et al. 2008), so AR(1) is the default everywhere.

The default lag-1 estimate is bias-corrected. The sample lag-1 autocorrelation of the
residuals of a least-squares fit with ``k`` regressors is biased low by about
``(k + (3 + k) phi) / n``: ``(1 + 4 phi) / n`` for a fitted mean (Kendall 1954), and each further
smooth regressor (the slope of a trend line) costs about ``(1 + phi) / n`` more, which
``tests/stats/test_noise.py`` measures by simulation for k = 1..4. We invert that first-order
bias, ``phi = (n r1 + k) / (n - 3 - k)`` (``(n r1 + 2) / (n - 5)`` for a trend line), and clip to
a stationary range. The correction still falls a little short for phi near 0.9 on short
series (higher-order terms); the coverage tests in ``tests/stats/test_trend.py`` record what
that costs.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.signal import lfilter

PHI_LIMIT = 0.98  # keeps simulated noise stationary and n_eff positive
TREND_REGRESSORS = 2  # intercept and slope


@dataclass(frozen=True)
class NoiseModel:
    """x_t = phi x_{t-1} + e_t + theta e_{t-1}, e_t ~ N(0, sigma^2). White noise: phi = theta = 0."""

    kind: str  # "white" | "ar1" | "arma11"
    phi: float = 0.0
    theta: float = 0.0
    sigma: float = 1.0  # innovation standard deviation
    r1: float = 0.0  # sample lag-1 autocorrelation of the residuals it was estimated on (uncorrected)
    r2: float = 0.0  # sample lag-2 autocorrelation
    n: int = 0  # number of residuals it was estimated on (0 when given from outside)

    @property
    def rho1(self) -> float:
        """Lag-1 autocorrelation implied by the model."""
        p, q = self.phi, self.theta
        return float((p + q) * (1 + p * q) / (1 + 2 * p * q + q * q))

    @property
    def marginal_sd(self) -> float:
        p, q = self.phi, self.theta
        return float(self.sigma * np.sqrt((1 + 2 * p * q + q * q) / (1 - p * p)))

    @property
    def variance_inflation(self) -> float:
        """Long-run variance over marginal variance: how much the noise inflates a trend's variance."""
        return float(variance_inflation(self.phi, self.rho1))


def variance_inflation(phi, rho1):
    """nu = 1 + 2 rho1 / (1 - phi): the sum of all autocorrelations of an ARMA(1,1).

    Foster & Rahmstorf (2011, Environ. Res. Lett. 6, 044022, appendix): rho_k = rho1 phi^(k-1), so
    the sum is a geometric series. For an AR(1) (rho1 = phi) it is (1 + phi) / (1 - phi).
    Works elementwise on arrays; floored at 1 so strongly negative correlation never narrows a
    range below the white-noise one.
    """
    phi = np.asarray(phi, dtype=float)
    rho1 = np.asarray(rho1, dtype=float)
    return np.maximum(1.0 + 2.0 * rho1 / (1.0 - phi), 1.0)


def lag_autocorrelations(rows: np.ndarray, lag: int) -> np.ndarray:
    """Sample autocorrelation at ``lag`` of every row (mean removed, biased denominator: the usual estimator)."""
    x = np.atleast_2d(np.asarray(rows, dtype=float))
    x = x - x.mean(axis=1, keepdims=True)
    denom = np.einsum("ij,ij->i", x, x)
    if lag == 0:
        return np.ones(x.shape[0])
    if lag >= x.shape[1]:
        return np.zeros(x.shape[0])
    num = np.einsum("ij,ij->i", x[:, :-lag], x[:, lag:])
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(denom > 0, num / np.where(denom > 0, denom, 1.0), 0.0)


def autocorrelation(x: np.ndarray, lag: int) -> float:
    """Sample autocorrelation at ``lag`` of one series."""
    return float(lag_autocorrelations(np.asarray(x, dtype=float)[None, :], lag)[0])


def bias_corrected_phis(r1, n: int, n_regressors: int = TREND_REGRESSORS) -> np.ndarray:
    """Elementwise first-order bias correction of lag-1 autocorrelations of regression residuals."""
    r1 = np.asarray(r1, dtype=float)
    k = n_regressors
    # Below ~k + 6 points the correction's denominator is tiny and the estimate meaningless anyway.
    phi = r1 if n <= k + 6 else (n * r1 + k) / (n - 3.0 - k)
    return np.clip(phi, -PHI_LIMIT, PHI_LIMIT)


def bias_corrected_phi(r1: float, n: int, n_regressors: int = TREND_REGRESSORS) -> float:
    """First-order bias correction of the lag-1 autocorrelation of trend residuals (see module docstring)."""
    return float(bias_corrected_phis(r1, n, n_regressors))


def arma11_moments(r1, r2, n: int, bias_correct: bool = True, n_regressors: int = TREND_REGRESSORS):
    """Method-of-moments (phi, rho1) of an ARMA(1,1), elementwise: phi = r2 / r1 (Foster & Rahmstorf 2011).

    Where the moments admit no stationary ARMA(1,1) with positive decay (r2 / r1 outside
    (0, PHI_LIMIT), or r1 ~ 0) the model falls back to AR(1): phi = rho1.
    """
    r1 = np.asarray(r1, dtype=float)
    r2 = np.asarray(r2, dtype=float)
    rho1 = bias_corrected_phis(r1, n, n_regressors) if bias_correct else np.clip(r1, -PHI_LIMIT, PHI_LIMIT)
    usable = np.abs(r1) >= 1e-6
    ratio = np.where(usable, r2 / np.where(usable, r1, 1.0), 0.0)
    usable &= (ratio > 0.0) & (ratio < PHI_LIMIT)
    return np.where(usable, ratio, rho1), rho1


def _marginal_variance(r: np.ndarray, n_regressors: int) -> float:
    return float(r.var(ddof=n_regressors)) if r.size > n_regressors else float(r.var())


def estimate_white(residuals: np.ndarray) -> NoiseModel:
    r = np.asarray(residuals, dtype=float)
    return NoiseModel(kind="white", sigma=float(r.std(ddof=1)), r1=autocorrelation(r, 1),
                      r2=autocorrelation(r, 2), n=r.size)


def estimate_ar1(residuals: np.ndarray, bias_correct: bool = True,
                 n_regressors: int = TREND_REGRESSORS) -> NoiseModel:
    """AR(1) by the (bias-corrected) lag-1 autocorrelation; sigma from the marginal variance."""
    r = np.asarray(residuals, dtype=float)
    r1 = autocorrelation(r, 1)
    phi = bias_corrected_phi(r1, r.size, n_regressors) if bias_correct else float(np.clip(r1, -PHI_LIMIT, PHI_LIMIT))
    sigma = float(np.sqrt(max(_marginal_variance(r, n_regressors) * (1.0 - phi * phi), 1e-300)))
    return NoiseModel(kind="ar1", phi=phi, sigma=sigma, r1=r1, r2=autocorrelation(r, 2), n=r.size)


def estimate_arma11(residuals: np.ndarray, bias_correct: bool = True,
                    n_regressors: int = TREND_REGRESSORS) -> NoiseModel:
    """ARMA(1,1) by the method of moments: phi = rho2 / rho1, theta from rho1 (invertible root).

    Falls back to AR(1) (theta = 0) when the moments admit no stationary, invertible ARMA(1,1).
    """
    r = np.asarray(residuals, dtype=float)
    n = r.size
    r1, r2 = autocorrelation(r, 1), autocorrelation(r, 2)
    phi, rho1 = (float(v) for v in arma11_moments(r1, r2, n, bias_correct, n_regressors))
    theta = theta_from_moments(phi, rho1) if phi != rho1 else 0.0
    sigma2 = _marginal_variance(r, n_regressors) * (1 - phi * phi) / (1 + 2 * phi * theta + theta * theta)
    return NoiseModel(kind="arma11", phi=phi, theta=float(theta), sigma=float(np.sqrt(max(sigma2, 1e-300))),
                      r1=r1, r2=r2, n=n)


def theta_from_moments(phi: float, rho1: float) -> float:
    """Solve rho1 = (phi + theta)(1 + phi theta) / (1 + 2 phi theta + theta^2) for |theta| < 1."""
    a = rho1 - phi
    b = 2 * rho1 * phi - phi * phi - 1
    if abs(a) < 1e-12:
        return 0.0
    disc = b * b - 4 * a * a
    if disc < 0:
        return float(np.clip(-b / (2 * a), -0.98, 0.98))
    roots = ((-b - np.sqrt(disc)) / (2 * a), (-b + np.sqrt(disc)) / (2 * a))
    inside = [x for x in roots if abs(x) < 1]
    return float(inside[0]) if inside else 0.0


def estimate_noise(residuals: np.ndarray, kind: str, bias_correct: bool = True,
                   n_regressors: int = TREND_REGRESSORS) -> NoiseModel:
    """The named model fitted to residuals; any kind other than "white" or "arma11" means AR(1)."""
    if kind == "white":
        return estimate_white(residuals)
    if kind == "arma11":
        return estimate_arma11(residuals, bias_correct, n_regressors)
    return estimate_ar1(residuals, bias_correct, n_regressors)


def simulate_noise(model: NoiseModel, n: int, size: int, rng: np.random.Generator) -> np.ndarray:
    """``size`` independent stationary realisations of length ``n``, shape (size, n).

    One call to lfilter filters every row at once; AR(1) starts from its stationary
    distribution, ARMA(1,1) after a burn-in long enough for phi^burn to be negligible.
    """
    if model.kind == "white" or (model.phi == 0.0 and model.theta == 0.0):
        return rng.standard_normal((size, n)) * model.sigma
    phi, theta = model.phi, model.theta
    if theta == 0.0:
        e = rng.standard_normal((size, n)) * model.sigma
        e[:, 0] /= np.sqrt(1.0 - phi * phi)
        return lfilter([1.0], [1.0, -phi], e, axis=1)
    burn = int(min(500, np.ceil(np.log(1e-8) / np.log(max(abs(phi), 1e-3)))))
    e = rng.standard_normal((size, n + burn)) * model.sigma
    return lfilter([1.0, theta], [1.0, -phi], e, axis=1)[:, burn:]
