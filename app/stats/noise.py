"""Noise models for trend residuals: the models, moment estimators and vectorised simulation.

Models (``NOISE_KINDS``, in order of complexity): white noise, AR(1), AR(2) and ARMA(1,1),

    x_t = phi x_{t-1} + phi2 x_{t-2} + e_t + theta e_{t-1},   e_t ~ N(0, sigma^2),

AR(2) having theta = 0 and ARMA(1,1) phi2 = 0 (a model with both is refused). Monthly climate
anomalies are strongly autocorrelated; treating them as white noise makes trend ranges several
times too narrow (Santer et al. 2008). Exact likelihood fits and the data-driven choice among
the kinds live in ``app.stats.noise_fit``; this module holds the moment estimators, which are
cheap enough for every simulated series of a bootstrap (``estimate_noise_rows``).

The default lag-1 estimate is bias-corrected. The sample lag-1 autocorrelation of the
residuals of a least-squares fit with ``k`` regressors is biased low by about
``(k + (3 + k) phi) / n``: ``(1 + 4 phi) / n`` for a fitted mean (Kendall 1954), and each further
smooth regressor (the slope of a trend line) costs about ``(1 + phi) / n`` more, which
``tests/stats/test_noise.py`` measures by simulation for k = 1..4. We invert that first-order
bias, ``phi = (n r1 + k) / (n - 3 - k)`` (``(n r1 + 2) / (n - 5)`` for a trend line), and clip to
a stationary range. The correction still falls a little short for phi near 0.9 on short
series (higher-order terms); the coverage tests in ``tests/stats/test_trend.py`` record what
that costs.

``NoiseModel.variance_inflation`` is the sum of all autocorrelations (long-run over marginal
variance), not floored: it is a property of the model. Ranges use ``range_inflation``, floored
at 1, because an estimated model can claim a long-run variance near zero (theta near -1, the
over-differencing artefact) that would collapse a range; the floor costs a little over-coverage
only when the noise is truly anti-persistent, which trend residuals of climate series are not.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy.signal import correlate, lfilter

from app.errors import InputError, Location

NOISE_KINDS = ("white", "ar1", "ar2", "arma11")  # the vocabulary, in order of complexity
CHOSEN_BY_DATA = "auto"  # not a kind: the kind with the smallest AICc (``noise_fit.select_noise_model``)
NOISE_CHOICES = (CHOSEN_BY_DATA,) + NOISE_KINDS  # what a user may ask for
PHI_LIMIT = 0.98  # keeps simulated noise stationary and n_eff positive
TREND_REGRESSORS = 2  # intercept and slope


@dataclass(frozen=True)
class NoiseModel:
    """x_t = phi x_{t-1} + phi2 x_{t-2} + e_t + theta e_{t-1}, e_t ~ N(0, sigma^2). White noise: all zero."""

    kind: str  # one of NOISE_KINDS
    phi: float = 0.0
    theta: float = 0.0
    sigma: float = 1.0  # innovation standard deviation
    r1: float = 0.0  # sample lag-1 autocorrelation of the residuals it was estimated on (uncorrected)
    r2: float = 0.0  # sample lag-2 autocorrelation
    n: int = 0  # number of residuals it was estimated on (0 when given from outside: then sigma is not data)
    phi2: float = 0.0  # the lag-2 autoregressive coefficient of an AR(2)
    loglik: float = math.nan  # log-likelihood of the fit (restricted when estimator is "reml")
    estimator: str = "moments"  # "moments" | "ml" | "reml" | "given"
    n_regressors: int = 0  # regression coefficients fitted before the noise (the residuals' lost dimensions)

    def __post_init__(self):
        check_noise_parameters(self.phi, self.phi2, self.theta)

    @property
    def _marginal_ratio(self) -> float:
        """gamma0 / sigma^2 (Box, Jenkins & Reinsel 2008, sections 3.2 and 3.4; section numbers from memory)."""
        p, p2, q = self.phi, self.phi2, self.theta
        if p2 != 0.0:
            return float((1 - p2) / ((1 + p2) * ((1 - p2) ** 2 - p * p)))
        return float((1 + 2 * p * q + q * q) / (1 - p * p))

    @property
    def rho1(self) -> float:
        """Lag-1 autocorrelation implied by the model."""
        p, p2, q = self.phi, self.phi2, self.theta
        if p2 != 0.0:
            return float(p / (1 - p2))
        return float((p + q) * (1 + p * q) / (1 + 2 * p * q + q * q))

    @property
    def marginal_sd(self) -> float:
        return float(self.sigma * np.sqrt(self._marginal_ratio))

    @property
    def long_run_variance(self) -> float:
        """2 pi f(0) = sigma^2 (1 + theta)^2 / (1 - phi - phi2)^2: the variance a long mean sees, times n."""
        return float(self.sigma ** 2 * (1 + self.theta) ** 2 / (1 - self.phi - self.phi2) ** 2)

    @property
    def variance_inflation(self) -> float:
        """Sum of the autocorrelations over all lags (long-run over marginal variance), not floored."""
        ratio = (1 + self.theta) ** 2 / (1 - self.phi - self.phi2) ** 2
        return float(ratio / self._marginal_ratio)

    @property
    def range_inflation(self) -> float:
        """``variance_inflation`` floored at 1: what ranges use (module docstring)."""
        return max(self.variance_inflation, 1.0)

    @property
    def is_white(self) -> bool:
        return self.kind == "white" or (self.phi == 0.0 and self.phi2 == 0.0 and self.theta == 0.0)

    def autocorrelations(self, max_lag: int) -> np.ndarray:
        """rho_0 .. rho_max_lag; for k >= 2 every kind obeys rho_k = phi rho_{k-1} + phi2 rho_{k-2} (Box & Jenkins)."""
        rho = np.zeros(max(int(max_lag), 0) + 1)
        rho[0] = 1.0
        if max_lag >= 1 and not self.is_white:
            rho[1] = self.rho1
            if max_lag >= 2:
                zi = [self.phi * rho[1] + self.phi2, self.phi2 * rho[1]]
                rho[2:] = lfilter([1.0], [1.0, -self.phi, -self.phi2], np.zeros(max_lag - 1), zi=zi)[0]
        return rho

    def autocovariances(self, n: int) -> np.ndarray:
        """gamma_0 .. gamma_{n-1}: the first row of the covariance matrix of n consecutive values."""
        return self.marginal_sd ** 2 * self.autocorrelations(n - 1)[:max(int(n), 0)]


def covariance_quadratic_forms(weights: np.ndarray, noise: NoiseModel) -> np.ndarray:
    """w' Gamma w for every row w of ``weights`` (p, n), Gamma the noise's covariance of n consecutive values.

    w' Gamma w = gamma_0 c_0 + 2 sum_k gamma_k c_k with c_k = sum_i w_i w_{i+k}, the rows'
    autocorrelation sums, which scipy's correlate computes directly or by FFT (whichever is
    faster): O(n log n) time and O(n) memory, so 50,000-point records need no n x n matrix.
    Lags are steps: the points are treated as equally spaced.
    """
    w = np.atleast_2d(np.asarray(weights, dtype=float))
    n = w.shape[1]
    gamma = noise.autocovariances(n)
    if noise.is_white:
        return gamma[0] * np.einsum("ij,ij->i", w, w)
    sums = np.array([correlate(row, row, mode="full")[n - 1:] for row in w])
    return gamma[0] * sums[:, 0] + 2.0 * sums[:, 1:] @ gamma[1:]


def check_noise_kind(kind: str, field: str = "noise", allow_chosen: bool = False) -> None:
    """A kind of the vocabulary; ``allow_chosen`` also admits ``CHOSEN_BY_DATA``."""
    allowed = NOISE_CHOICES if allow_chosen else NOISE_KINDS
    if kind not in allowed:
        raise InputError(f"unknown noise model '{kind}'", location=Location(field=field),
                         fix="Use one of: " + ", ".join(allowed))


def check_noise_parameters(phi: float, phi2: float, theta: float) -> None:
    """Stationary and invertible, and not both an AR(2) and an ARMA(1,1) part."""
    if phi2 != 0.0 and theta != 0.0:
        raise InputError("a noise model has either a second autoregressive term or a moving-average term, not both",
                         location=Location(field="noise"), fix="Use kind ar2 (theta = 0) or arma11 (phi2 = 0)")
    # AR(2) stationarity triangle (Box, Jenkins & Reinsel 2008, section 3.2; from memory); AR(1) is the phi2 = 0 edge.
    stationary = abs(phi2) < 1 and phi + phi2 < 1 and phi2 - phi < 1
    if not (stationary and abs(theta) < 1 and all(map(math.isfinite, (phi, phi2, theta)))):
        raise InputError(f"noise parameters phi={phi}, phi2={phi2}, theta={theta} are not stationary and invertible",
                         location=Location(field="noise"),
                         fix="Keep |phi2| < 1, phi + phi2 < 1, phi2 - phi < 1 and |theta| < 1")


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
    return float(_thetas_from_moments(np.asarray(phi, dtype=float), np.asarray(rho1, dtype=float)))


def estimate_ar2(residuals: np.ndarray, n_regressors: int = TREND_REGRESSORS) -> NoiseModel:
    """AR(2) by Yule-Walker (``estimate_noise_rows``) on one series."""
    r = np.asarray(residuals, dtype=float)
    rows = estimate_noise_rows(r[None, :], "ar2", n_regressors)
    return NoiseModel(kind="ar2", phi=float(rows.phi[0]), phi2=float(rows.phi2[0]), sigma=float(rows.sigma[0]),
                      r1=autocorrelation(r, 1), r2=autocorrelation(r, 2), n=r.size, n_regressors=n_regressors)


def estimate_noise(residuals: np.ndarray, kind: str, bias_correct: bool = True,
                   n_regressors: int = TREND_REGRESSORS) -> NoiseModel:
    """The named model fitted to residuals by moments; any kind outside ``NOISE_KINDS`` means AR(1)."""
    if kind == "white":
        return estimate_white(residuals)
    if kind == "arma11":
        return estimate_arma11(residuals, bias_correct, n_regressors)
    if kind == "ar2":
        return estimate_ar2(residuals, n_regressors)
    return estimate_ar1(residuals, bias_correct, n_regressors)


@dataclass(frozen=True)
class NoiseRows:
    """Per-row moment estimates of one noise kind, for many simulated series at once."""

    kind: str
    phi: np.ndarray
    phi2: np.ndarray
    theta: np.ndarray
    sigma: np.ndarray
    marginal_variance: np.ndarray
    variance_inflation: np.ndarray  # long-run over marginal variance, not floored

    @property
    def long_run_variance(self) -> np.ndarray:
        return self.marginal_variance * self.variance_inflation


def estimate_noise_rows(rows: np.ndarray, kind: str, n_regressors: int = TREND_REGRESSORS) -> NoiseRows:
    """Moment estimates of ``kind`` for every row of residuals (S, n), vectorised.

    AR(1): the bias-corrected lag-1 autocorrelation; AR(2): Yule-Walker from r1 and r2
    (phi = r1 (1 - r2) / (1 - r1^2), phi2 = (r2 - r1^2) / (1 - r1^2); Box, Jenkins & Reinsel 2008,
    section 3.2; from memory), pulled inside the stationarity triangle; ARMA(1,1): phi = r2 / r1 with theta from
    the bias-corrected rho1 (``arma11_moments``). The marginal variance divides by n - n_regressors.
    """
    check_noise_kind(kind)
    x = np.atleast_2d(np.asarray(rows, dtype=float))
    size, n = x.shape
    zeros = np.zeros(size)
    marginal = np.einsum("ij,ij->i", x, x) / max(n - n_regressors, 1)
    phi, phi2, theta = zeros.copy(), zeros.copy(), zeros.copy()
    if kind == "ar1":
        phi = bias_corrected_phis(lag_autocorrelations(x, 1), n, n_regressors)
    elif kind == "ar2":
        r1 = np.clip(lag_autocorrelations(x, 1), -PHI_LIMIT, PHI_LIMIT)
        r2 = lag_autocorrelations(x, 2)
        phi = r1 * (1 - r2) / (1 - r1 * r1)
        phi2 = np.clip((r2 - r1 * r1) / (1 - r1 * r1), -PHI_LIMIT, PHI_LIMIT)
        # Inside the triangle with a margin: |phi| <= PHI_LIMIT (1 - phi2) keeps 1 - phi - phi2 away from 0.
        phi = np.clip(phi, -PHI_LIMIT * (1 - phi2), PHI_LIMIT * (1 - phi2))
    elif kind == "arma11":
        phi, rho1 = arma11_moments(lag_autocorrelations(x, 1), lag_autocorrelations(x, 2), n,
                                   n_regressors=n_regressors)
        theta = _thetas_from_moments(phi, rho1)
    ratio = np.where(phi2 != 0.0, (1 - phi2) / ((1 + phi2) * ((1 - phi2) ** 2 - phi * phi)),
                     (1 + 2 * phi * theta + theta * theta) / (1 - phi * phi))
    inflation = (1 + theta) ** 2 / (1 - phi - phi2) ** 2 / ratio
    return NoiseRows(kind=kind, phi=phi, phi2=phi2, theta=theta, sigma=np.sqrt(marginal / ratio),
                     marginal_variance=marginal, variance_inflation=inflation)


def _thetas_from_moments(phi: np.ndarray, rho1: np.ndarray) -> np.ndarray:
    """``theta_from_moments`` elementwise: the invertible root of a theta^2 + b theta + a = 0, a = rho1 - phi.

    The roots' product is 1, so at most one lies inside the unit circle; b = -(1 - 2 rho1 phi + phi^2) < 0
    makes it (-b - sqrt(b^2 - 4 a^2)) / (2 a). No real root: the vertex -b / (2 a), clipped.
    """
    a = rho1 - phi
    b = 2 * rho1 * phi - phi * phi - 1
    disc = b * b - 4 * a * a
    safe_a = np.where(np.abs(a) < 1e-12, 1.0, a)
    root = np.where(disc >= 0, (-b - np.sqrt(np.maximum(disc, 0.0))) / (2 * safe_a),
                    np.clip(-b / (2 * safe_a), -0.98, 0.98))
    root = np.where(np.abs(root) < 1, root, 0.0)
    return np.where(np.abs(a) < 1e-12, 0.0, root)


Shocks = Callable[[tuple[int, int]], np.ndarray]  # draws standardised innovations (mean 0, variance 1) of a shape


def simulate_noise(model: NoiseModel, n: int, size: int, rng: np.random.Generator,
                   shocks: Shocks | None = None) -> np.ndarray:
    """``size`` independent stationary realisations of length ``n``, shape (size, n).

    One call to lfilter filters every row at once; AR(1) and AR(2) start from their stationary
    distribution, ARMA(1,1) after a burn-in long enough for phi^burn to be negligible. ``shocks`` draws
    the standardised innovations (Gaussian by default; ``resampled_shocks`` for a residual bootstrap).
    """
    draw = shocks or rng.standard_normal
    if model.is_white:
        return draw((size, n)) * model.sigma
    phi, theta = model.phi, model.theta
    if model.phi2 != 0.0:
        return _simulate_ar2(model, n, size, draw)
    if theta == 0.0:
        e = draw((size, n)) * model.sigma
        e[:, 0] /= np.sqrt(1.0 - phi * phi)
        return lfilter([1.0], [1.0, -phi], e, axis=1)
    burn = int(min(500, np.ceil(np.log(1e-8) / np.log(max(abs(phi), 1e-3)))))
    e = draw((size, n + burn)) * model.sigma
    return lfilter([1.0, theta], [1.0, -phi], e, axis=1)[:, burn:]


def resampled_shocks(innovations: np.ndarray, rng: np.random.Generator) -> Shocks:
    """Draws from the given innovations, standardised, with replacement: the residual bootstrap of an ARMA
    model (Efron & Tibshirani 1993, section 8.5, from memory), which keeps the innovations' own tails."""
    z = np.asarray(innovations, dtype=float).ravel()
    if z.size < 2 or not np.all(np.isfinite(z)) or not np.std(z) > 0:
        raise InputError("at least two finite, not all equal innovations are needed to resample",
                         location=Location(field="innovations"), fix="Pass the whitened residuals of a fit")
    z = (z - z.mean()) / z.std()
    return lambda shape: z[rng.integers(0, z.size, size=shape)]


def _simulate_ar2(model: NoiseModel, n: int, size: int, draw: Shocks) -> np.ndarray:
    """The first two values from their stationary joint normal, the rest by the recursion (lfilter's state)."""
    phi, phi2, rho1, sd = model.phi, model.phi2, model.rho1, model.marginal_sd
    z = draw((size, n))
    x = np.empty((size, n))
    x[:, 0] = sd * z[:, 0]
    if n > 1:
        x[:, 1] = rho1 * x[:, 0] + sd * np.sqrt(1.0 - rho1 * rho1) * z[:, 1]
    if n > 2:
        state = np.column_stack([phi * x[:, 1] + phi2 * x[:, 0], phi2 * x[:, 1]])
        x[:, 2:] = lfilter([1.0], [1.0, -phi, -phi2], model.sigma * z[:, 2:], axis=1, zi=state)[0]
    return x
