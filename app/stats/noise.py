"""Noise models for trend residuals: estimation and vectorised simulation.

Models: white noise, AR(1) and ARMA(1,1). Monthly climate anomalies are strongly
autocorrelated; treating them as white noise makes trend ranges several times too narrow
(Santer et al. 2008), so AR(1) is the default everywhere.

The default lag-1 estimate is bias-corrected: the sample autocorrelation of OLS residuals
is biased low by roughly (2 + 4 phi) / n for an AR(1) with a fitted mean and slope, which
matters on short series (n = 60 loses several points of interval coverage). We invert that
first-order bias, ``phi = (n r1 + 2) / (n - 4)``, and clip to a stationary range.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.signal import lfilter

PHI_LIMIT = 0.98  # keeps simulated noise stationary and n_eff positive


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


def autocorrelation(x: np.ndarray, lag: int) -> float:
    """Sample autocorrelation at ``lag`` (mean removed, biased denominator: the usual estimator)."""
    x = np.asarray(x, dtype=float)
    x = x - x.mean()
    denom = float(x @ x)
    if denom == 0.0 or lag >= x.size:
        return 0.0
    return float(x[:-lag] @ x[lag:] / denom) if lag > 0 else 1.0


def bias_corrected_phi(r1: float, n: int) -> float:
    """First-order bias correction of the lag-1 autocorrelation of trend residuals."""
    if n <= 8:
        return float(np.clip(r1, -PHI_LIMIT, PHI_LIMIT))
    return float(np.clip((n * r1 + 2.0) / (n - 4.0), -PHI_LIMIT, PHI_LIMIT))


def estimate_white(residuals: np.ndarray) -> NoiseModel:
    r = np.asarray(residuals, dtype=float)
    return NoiseModel(kind="white", sigma=float(r.std(ddof=1)), r1=autocorrelation(r, 1),
                      r2=autocorrelation(r, 2), n=r.size)


def estimate_ar1(residuals: np.ndarray, bias_correct: bool = True) -> NoiseModel:
    """AR(1) by the (bias-corrected) lag-1 autocorrelation; sigma from the marginal variance."""
    r = np.asarray(residuals, dtype=float)
    r1 = autocorrelation(r, 1)
    phi = bias_corrected_phi(r1, r.size) if bias_correct else float(np.clip(r1, -PHI_LIMIT, PHI_LIMIT))
    marginal_var = float(r.var(ddof=2)) if r.size > 2 else float(r.var())
    sigma = float(np.sqrt(max(marginal_var * (1.0 - phi * phi), 1e-300)))
    return NoiseModel(kind="ar1", phi=phi, sigma=sigma, r1=r1, r2=autocorrelation(r, 2), n=r.size)


def estimate_arma11(residuals: np.ndarray, bias_correct: bool = True) -> NoiseModel:
    """ARMA(1,1) by the method of moments: phi = rho2 / rho1, theta from rho1 (invertible root).

    Falls back to AR(1) when the moments admit no stationary, invertible ARMA(1,1).
    """
    r = np.asarray(residuals, dtype=float)
    n = r.size
    r1, r2 = autocorrelation(r, 1), autocorrelation(r, 2)
    rho1 = bias_corrected_phi(r1, n) if bias_correct else r1
    if abs(r1) < 1e-6 or not (0.0 < r2 / r1 < PHI_LIMIT):
        ar = estimate_ar1(r, bias_correct)
        return NoiseModel(kind="arma11", phi=ar.phi, theta=0.0, sigma=ar.sigma, r1=r1, r2=r2, n=n)
    phi = r2 / r1
    theta = theta_from_moments(phi, rho1)
    marginal_var = float(r.var(ddof=2)) if n > 2 else float(r.var())
    sigma2 = marginal_var * (1 - phi * phi) / (1 + 2 * phi * theta + theta * theta)
    return NoiseModel(kind="arma11", phi=float(phi), theta=float(theta), sigma=float(np.sqrt(max(sigma2, 1e-300))),
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


def estimate_noise(residuals: np.ndarray, kind: str, bias_correct: bool = True) -> NoiseModel:
    if kind == "white":
        return estimate_white(residuals)
    if kind == "arma11":
        return estimate_arma11(residuals, bias_correct)
    return estimate_ar1(residuals, bias_correct)


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
