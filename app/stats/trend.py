"""The uncertainty of a straight-line trend under six noise assumptions, side by side.

Every method shares the OLS slope except ``gls_ar1``; they differ in its standard error,
degrees of freedom and effective sample size:

- ``white``: classical OLS, n - 2 degrees of freedom. Far too narrow for autocorrelated data.
- ``ar1`` (default): Santer et al. (2008, Int. J. Climatol. 28, 1703, eqs. 4-6).
  n_eff = n (1 - r1) / (1 + r1), the white-noise standard error scaled by
  sqrt((n - 2) / (n_eff - 2)), a t distribution with n_eff - 2 degrees of freedom. r1 is the
  bias-corrected lag-1 autocorrelation of the residuals (``noise.bias_corrected_phi``).
- ``arma11``: Foster & Rahmstorf (2011): the variance is inflated by
  nu = 1 + 2 rho1 / (1 - phi) with phi = rho2 / rho1 (AR(1) when the moments do not allow an
  ARMA(1,1)); we turn nu into n_eff = n / nu and then proceed exactly as ``ar1``, so an AR(1)
  (rho1 = phi, nu = (1 + phi) / (1 - phi)) gives the same answer by both routes.
- ``ar2``: as ``arma11``, with nu the variance inflation of the Yule-Walker AR(2) of the residuals
  (``noise.estimate_noise_rows``).
- ``gls_ar1``: generalised least squares with AR(1) errors (Prais-Winsten transform, equal
  to GLS with covariance phi^|i-j|), phi as for ``ar1``, one step, n - 2 degrees of freedom.
- ``hac``: OLS with a Newey-West (1987) Bartlett-kernel covariance and the Newey & West (1994)
  rule-of-thumb lag L = floor(4 (n / 100)^(2/9)), small-sample factor n / (n - 2) and
  n - 2 degrees of freedom (statsmodels cov_type="HAC", use_correction=True, use_t=True).

Why ``ar1`` is the default: it is the method climate trend studies use, it is simple to
explain, and with the bias-corrected r1 its 95% intervals cover the true slope close to 95%
of the time for AR(1) noise with phi = 0.6 both at n = 360 and at n = 60 (measured in
``tests/stats/test_trend.py``). GLS and HAC with estimated parameters keep n - 2 degrees of
freedom although the noise is what limits the information, and under-cover on short
autocorrelated series; ``arma11`` estimates phi from r2 / r1, which is noisy on short series.

Observations are treated as equally spaced: autocorrelation is per step, not per unit of time.
``n_effective`` is n for ``white``, ``gls_ar1`` and ``hac``, which have no such notion.

When n_eff <= 2 (a handful of strongly autocorrelated points) the data cannot bound the
slope: the standard error is +inf, the interval (-inf, +inf), the p-value 1 and dof 0.
n_eff is capped at n: negative autocorrelation never buys a narrower range than white noise.

A ``noise`` model given from outside (typically estimated on a long reference period and
applied to a short window) replaces the autocorrelation estimated from these residuals.

- A fitted model (``noise.n > 0``, e.g. from ``noise_fit.select_noise_model``) with ``ar1``,
  ``ar2`` or ``arma11``: the slope's variance is the model's own, exact for any window,
  w' Gamma w with w the OLS slope weights and Gamma the model's autocovariance
  (``slope_variance_under``). For an anti-persistent model (variance inflation below 1) it is
  floored at the white-noise variance gamma_0 w'w (the floor of ``NoiseModel.range_inflation``);
  a persistent model is not floored, because over a window shorter than its memory the slope
  truly varies less than under white noise of the same marginal variance. The uncertainty of
  that variance is the uncertainty of the noise fit, so the t distribution's degrees of freedom
  come from the sample the noise was estimated on, not from the window: dof = noise.n / nu - 2
  (nu floored at 1), between 1 and noise.n - 2. A 4-point window then gets a wide but finite
  range; its own n_eff would be below 2 and give (-inf, inf). ``n_effective`` is the
  white-noise-equivalent count n gamma_0 w'w / var. With the model chosen by
  ``select_noise_model`` on a line's residuals, 95% ranges covered the true slope 92-97% of the
  time under AR(1), AR(2), ARMA(1,1) and heavy-tailed noise (``tests/stats/test_noise_models.py``).
- A model given only by its parameters (``noise.n == 0``: its sigma is not from data): ``ar1``
  and ``gls_ar1`` use its lag-1 autocorrelation rho1 (= phi for an AR(1)), ``ar2`` and
  ``arma11`` its variance inflation, in the n_eff route; the residual variance still comes from
  these data.

``white`` and ``hac`` ignore ``noise``; ``gls_ar1`` always uses only its rho1.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import stats

from app.errors import InputError, Location
from app.stats.detect import check_alternative, years_to_detect
from app.stats.noise import (NOISE_KINDS, PHI_LIMIT, TREND_REGRESSORS, NoiseModel, arma11_moments,
                             bias_corrected_phis, covariance_quadratic_forms, estimate_noise, estimate_noise_rows,
                             lag_autocorrelations, variance_inflation)
from app.stats.nonparam import MannKendallResult, SenSlope, mann_kendall, sen_slope
from app.stats.ols import (MIN_TREND_POINTS, TrendFit, TrendRows, check_fraction, check_trend_inputs, fit_trend,
                           fit_trend_rows)

METHODS = ("white", "ar1", "ar2", "arma11", "gls_ar1", "hac")
MODEL_METHODS = ("ar1", "ar2", "arma11")  # the methods that take a fitted noise model's own variance
MIN_MODEL_DOF = 1.0  # the t distribution's floor: still a finite quantile (12.7 at 95%)
# Fewer degrees of freedom than this and the t quantile (12.7 at one, 95%) makes a range wider than anything the
# data could justify: the range and the p-value are then reported as undetermined rather than printed.
MIN_RANGE_DOF = 2.0
DEFAULT_METHOD = "ar1"


@dataclass(frozen=True)
class SlopeEstimate:
    method: str
    slope: float
    stderr: float
    ci: tuple[float, float]
    p_value: float  # two-sided, against a zero slope
    dof: float
    n: int
    n_effective: float
    confidence: float


@dataclass(frozen=True)
class SlopeRows:
    """Slope estimates for every row of a (size, n) array: the vectorised form behind ``slope_uncertainty``."""

    method: str
    confidence: float
    n: int
    slope: np.ndarray
    stderr: np.ndarray  # +inf where the data cannot bound the slope
    dof: np.ndarray
    n_effective: np.ndarray

    @property
    def half_width(self) -> np.ndarray:
        bounded = np.isfinite(self.stderr) & (self.dof >= MIN_RANGE_DOF)
        q = stats.t.ppf(0.5 + self.confidence / 2.0, np.where(bounded, self.dof, 1.0))
        return np.where(bounded, q * np.where(bounded, self.stderr, 0.0), np.inf)

    @property
    def lower(self) -> np.ndarray:
        return self.slope - self.half_width

    @property
    def upper(self) -> np.ndarray:
        return self.slope + self.half_width

    @property
    def p_value(self) -> np.ndarray:
        bounded = np.isfinite(self.stderr) & (self.dof >= MIN_RANGE_DOF) & (self.stderr > 0)
        t_stat = np.abs(self.slope) / np.where(bounded, self.stderr, 1.0)
        return np.where(bounded, 2.0 * stats.t.sf(t_stat, np.where(bounded, self.dof, 1.0)), 1.0)

    def estimate(self, row: int = 0) -> SlopeEstimate:
        return SlopeEstimate(method=self.method, slope=float(self.slope[row]), stderr=float(self.stderr[row]),
                             ci=(float(self.lower[row]), float(self.upper[row])), p_value=float(self.p_value[row]),
                             dof=float(self.dof[row]), n=self.n, n_effective=float(self.n_effective[row]),
                             confidence=self.confidence)


@dataclass(frozen=True)
class SlopeComparison:
    difference: float  # a.slope - b.slope
    stderr: float
    z: float
    p_value: float
    alternative: str  # "two-sided" | "less" (a < b) | "greater" (a > b)


@dataclass(frozen=True)
class TrendSummary:
    fit: TrendFit
    chosen: SlopeEstimate
    methods: tuple[SlopeEstimate, ...]
    mann_kendall: MannKendallResult
    sen: SenSlope
    years_to_detect: float
    noise: NoiseModel


def _check_method(method: str) -> None:
    if method not in METHODS:
        raise InputError(f"unknown trend method '{method}'", location=Location(field="method"),
                         fix="Use one of: " + ", ".join(METHODS))


def newey_west_lag(n: int) -> int:
    """Newey & West (1994, Rev. Econ. Stud. 61, 631) rule of thumb for the Bartlett kernel: floor(4 (n/100)^(2/9))."""
    return int(math.floor(4.0 * (n / 100.0) ** (2.0 / 9.0)))


def _lag1(fit: TrendRows, noise: NoiseModel | None) -> np.ndarray:
    """Lag-1 autocorrelation of each row's noise: given, or bias-corrected from its residuals."""
    if noise is not None:
        return np.full(fit.slope.shape, np.clip(noise.rho1, -PHI_LIMIT, PHI_LIMIT))
    return bias_corrected_phis(lag_autocorrelations(fit.residuals, 1), fit.n)


def _inflated(fit: TrendRows, nu: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Santer et al. (2008): n_eff = n / nu, stderr scaled by sqrt((n - 2) / (n_eff - 2)), dof n_eff - 2."""
    n = fit.n
    n_eff = np.minimum(n / nu, n)
    bounded = n_eff > 2.0
    scale = np.sqrt((n - 2.0) / np.where(bounded, n_eff - 2.0, 1.0))
    stderr = np.where(bounded, fit.slope_stderr_white * scale, np.inf)
    return fit.slope, stderr, np.maximum(n_eff - 2.0, 0.0), n_eff


def _white(rows: np.ndarray, fit: TrendRows, noise: NoiseModel | None):
    n = np.full(fit.slope.shape, float(fit.n))
    return fit.slope, fit.slope_stderr_white, n - 2.0, n


def _ar1(rows: np.ndarray, fit: TrendRows, noise: NoiseModel | None):
    rho1 = _lag1(fit, noise)
    return _inflated(fit, variance_inflation(rho1, rho1))


def _ar2(rows: np.ndarray, fit: TrendRows, noise: NoiseModel | None):
    if noise is not None:
        nu = np.full(fit.slope.shape, noise.range_inflation)
    else:
        nu = np.maximum(estimate_noise_rows(fit.residuals, "ar2").variance_inflation, 1.0)
    return _inflated(fit, nu)


def _arma11(rows: np.ndarray, fit: TrendRows, noise: NoiseModel | None):
    if noise is not None:
        nu = np.full(fit.slope.shape, noise.range_inflation)
    else:
        phi, rho1 = arma11_moments(lag_autocorrelations(fit.residuals, 1), lag_autocorrelations(fit.residuals, 2),
                                   fit.n)
        nu = variance_inflation(phi, rho1)
    return _inflated(fit, nu)


def slope_variance_under(t: np.ndarray, noise: NoiseModel) -> float:
    """Exact variance of the OLS slope over times ``t`` under the noise model: w' Gamma w, w the slope weights.

    Lags are counted in steps (points treated as equally spaced); O(n log n), no n x n matrix
    (``noise.covariance_quadratic_forms``).
    """
    t = np.asarray(t, dtype=float)
    tc = t - t.mean()
    weights = tc / float(tc @ tc)
    return float(covariance_quadratic_forms(weights[None, :], noise)[0])


def model_dof(noise: NoiseModel, n_regressors: int = TREND_REGRESSORS) -> float:
    """Degrees of freedom of a range built on a fitted noise model: its sample's effective size less the regressors."""
    return float(np.clip(noise.n / noise.range_inflation - n_regressors, MIN_MODEL_DOF,
                         max(noise.n - n_regressors, MIN_MODEL_DOF)))


def _model_variance(fit: TrendRows, noise: NoiseModel):
    """The fitted model's own slope variance (module docstring): the same for every row."""
    white = noise.marginal_sd ** 2 / fit.sxx
    variance = slope_variance_under(fit.t_centred, noise)
    if noise.variance_inflation < 1.0:  # an anti-persistent model never narrows a range below white noise
        variance = max(variance, white)
    shape = fit.slope.shape
    return (fit.slope, np.full(shape, np.sqrt(variance)), np.full(shape, model_dof(noise)),
            np.full(shape, fit.n * white / variance))


def _gls_ar1(rows: np.ndarray, fit: TrendRows, noise: NoiseModel | None):
    """Prais-Winsten: whiten rows and design with each row's phi, then solve the 2x2 normal equations per row."""
    phi = _lag1(fit, noise)[:, None]
    head = np.sqrt(1.0 - phi * phi)

    def whiten(x: np.ndarray) -> np.ndarray:
        x = np.broadcast_to(x, rows.shape)
        return np.concatenate([head * x[:, :1], x[:, 1:] - phi * x[:, :-1]], axis=1)

    y, ones, tc = whiten(rows), whiten(np.ones(fit.n)), whiten(fit.t_centred)
    a11, a12, a22 = (np.einsum("ij,ij->i", u, v) for u, v in ((ones, ones), (ones, tc), (tc, tc)))
    b1, b2 = np.einsum("ij,ij->i", ones, y), np.einsum("ij,ij->i", tc, y)
    det = a11 * a22 - a12 * a12
    slope = (a11 * b2 - a12 * b1) / det
    level = (a22 * b1 - a12 * b2) / det
    resid = y - level[:, None] * ones - slope[:, None] * tc
    scale2 = np.einsum("ij,ij->i", resid, resid) / (fit.n - 2.0)
    n = np.full(slope.shape, float(fit.n))
    return slope, np.sqrt(scale2 * a11 / det), n - 2.0, n


def _hac(rows: np.ndarray, fit: TrendRows, noise: NoiseModel | None):
    """Newey-West variance of the slope; with centred time the slope's sandwich element needs no matrix algebra."""
    n = fit.n
    score = fit.t_centred * fit.residuals
    long_run = np.einsum("ij,ij->i", score, score)
    lags = newey_west_lag(n)
    for lag in range(1, min(lags, n - 1) + 1):
        weight = 1.0 - lag / (lags + 1.0)
        long_run += 2.0 * weight * np.einsum("ij,ij->i", score[:, lag:], score[:, :-lag])
    variance = long_run / fit.sxx ** 2 * n / (n - 2.0)
    dof = np.full(fit.slope.shape, n - 2.0)
    return fit.slope, np.sqrt(np.maximum(variance, 0.0)), dof, np.full(fit.slope.shape, float(n))


_ESTIMATORS = {"white": _white, "ar1": _ar1, "ar2": _ar2, "arma11": _arma11, "gls_ar1": _gls_ar1, "hac": _hac}


def slope_uncertainty_rows(t: np.ndarray, rows: np.ndarray, method: str = DEFAULT_METHOD, confidence: float = 0.95,
                           noise: NoiseModel | None = None) -> SlopeRows:
    """Slope, standard error and interval of every row of ``rows`` (size, n) against one time axis, at once."""
    _check_method(method)
    check_fraction(confidence, "confidence")
    t, rows = check_trend_inputs(t, np.atleast_2d(rows), MIN_TREND_POINTS)
    fit = fit_trend_rows(t, rows)
    if noise is not None and noise.n > 0 and method in MODEL_METHODS:
        slope, stderr, dof, n_eff = _model_variance(fit, noise)
    else:
        slope, stderr, dof, n_eff = _ESTIMATORS[method](rows, fit, noise)
    return SlopeRows(method=method, confidence=confidence, n=fit.n, slope=np.asarray(slope, dtype=float),
                     stderr=np.asarray(stderr, dtype=float), dof=np.asarray(dof, dtype=float),
                     n_effective=np.asarray(n_eff, dtype=float))


def slope_uncertainty(t: np.ndarray, y: np.ndarray, method: str = DEFAULT_METHOD, confidence: float = 0.95,
                      noise: NoiseModel | None = None) -> SlopeEstimate:
    """The trend of one series with its uncertainty under ``method`` (see the module docstring)."""
    return slope_uncertainty_rows(t, np.asarray(y, dtype=float)[None, :], method, confidence, noise).estimate(0)


def slope_all_methods(t: np.ndarray, y: np.ndarray, confidence: float = 0.95,
                      noise: NoiseModel | None = None) -> tuple[SlopeEstimate, ...]:
    """The same trend under every method, in the order of ``METHODS``."""
    return tuple(slope_uncertainty(t, y, method, confidence, noise) for method in METHODS)


def compare_slopes(a: SlopeEstimate, b: SlopeEstimate, alternative: str = "two-sided") -> SlopeComparison:
    """z-test of a.slope - b.slope, treating the two estimates as independent.

    A window's slope and the long-term slope share the window's data, so their errors are
    positively correlated and the true variance of the difference is smaller than the sum
    used here: the test is conservative (rejects less often than its nominal level).
    """
    check_alternative(alternative)
    difference = a.slope - b.slope
    stderr = math.hypot(a.stderr, b.stderr)
    if not math.isfinite(stderr) or stderr == 0.0:
        z = 0.0 if not math.isfinite(stderr) else math.copysign(math.inf, difference) if difference else 0.0
    else:
        z = difference / stderr
    if alternative == "two-sided":
        p = 2.0 * stats.norm.sf(abs(z))
    elif alternative == "less":
        p = stats.norm.cdf(z)
    else:
        p = stats.norm.sf(z)
    return SlopeComparison(difference=float(difference), stderr=float(stderr), z=float(z), p_value=float(min(p, 1.0)),
                           alternative=alternative)


def summarise_trend(t: np.ndarray, y: np.ndarray, method: str = DEFAULT_METHOD, confidence: float = 0.95,
                    noise: NoiseModel | None = None, points_per_year: float = 1.0) -> TrendSummary:
    """Everything the audit reports about one trend: the fit, every method, rank tests and detectability.

    ``noise`` is the model given, else the method's own kind for ``ar2`` and ``arma11`` and an AR(1)
    for every other method (even "white": years-to-detect must not pretend the noise is white).
    """
    _check_method(method)
    fit = fit_trend(t, y)
    check_trend_inputs(t, y, MIN_TREND_POINTS)
    kind = method if method in NOISE_KINDS and method != "white" else "ar1"
    model = noise if noise is not None else estimate_noise(fit.residuals, kind)
    methods = slope_all_methods(t, y, confidence, noise)
    chosen = methods[METHODS.index(method)]
    return TrendSummary(fit=fit, chosen=chosen, methods=methods,
                        mann_kendall=mann_kendall(y, alpha=1.0 - confidence), sen=sen_slope(t, y, confidence),
                        years_to_detect=years_to_detect(fit.slope, model, points_per_year, alpha=1.0 - confidence),
                        noise=model)
