"""Covariate adjustment: take known short-term factors out of a series before judging its trend.

Model, in the manner of Foster & Rahmstorf (2011, Environ. Res. Lett. 6, 044022):

    y(t) = a + b t + sum_i beta_i x_i(t - lag_i) + noise(t),

with each lag chosen over 0..max_lag steps of the response (default two years: 0-24 months for monthly
data, 0-2 years for annual). The adjusted series is the response minus the covariate contributions,
re-centred to the response's own mean, so it can be audited like the raw one.

Alignment. Covariate values are matched to response times on the decimal-year axis within a quarter of
the response's step, so a covariate must share the response's sampling (monthly with monthly, annual
with annual). A response time is used only when every covariate has a value at every candidate lag,
so all lag choices are compared on one sample; the times lost that way are listed in ``dropped_times``.

Lag search. All lags of one covariate are scored at once (a stack of least-squares problems solved by
one batched QR); the joint choice is found by coordinate descent from each covariate's best lag on its
own, sweeping until no lag moves. Two criteria:

- ``ls``: the smallest residual sum of squares of the OLS fit, the "best fit" rule.
- ``aic``: the smallest AIC of the regression with AR(1) errors (exact Gaussian likelihood through the
  Prais-Winsten transform, phi and the coefficients at their optimum for each candidate). Every
  candidate has the same number of parameters, so this ranks by likelihood; unlike ``ls`` it
  down-weights fit gained by following slow, autocorrelated wanderings of the residuals.

Ranges. Coefficients are OLS. The variance of an OLS coefficient under stationary noise with
autocorrelations rho_k is sigma^2 w' R w, where w is that coefficient's row of (X'X)^-1 X' (the
regressor with the others partialled out, scaled) and R_st = rho_|s-t| (the sandwich; e.g. Greene,
Econometric Analysis, the OLS covariance under a general Omega). We express it as a variance inflation
nu = w' R w / w' w, an effective sample n_eff = n / nu, and then proceed exactly as Santer et al. (2008)
do for a trend (``app.stats.trend``): standard error scaled by sqrt((n - p) / (n_eff - p)), a t
distribution with n_eff - p degrees of freedom. For a smooth regressor such as time, nu is
(1 + phi) / (1 - phi) for AR(1) noise, Santer's factor; for a quickly varying covariate it is close to 1,
as it should be: its coefficient is pinned by many independent wiggles. The lag search is not counted
in the ranges (the lag is treated as known), as in Foster & Rahmstorf.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np
from scipy import stats

from app.errors import ClaimError, InputError, Location, SeriesContentError, SeriesFormatError
from app.stats.noise import (CHOSEN_BY_DATA, PHI_LIMIT, NoiseModel, check_noise_kind, covariance_quadratic_forms,
                             estimate_noise, lag_autocorrelations)
from app.stats.noise_fit import select_noise_model
from app.stats.ols import check_fraction, fit_linear

LAG_RULES = ("ls", "aic")
DEFAULT_LAG_YEARS = 2.0  # Foster & Rahmstorf (2011) searched lags up to about two years
MAX_COVARIATES = 8
MAX_SWEEPS = 25
MATCH_TOLERANCE_STEPS = 0.25  # a covariate time matches a response time within a quarter of a step
AR_ITERATIONS = 30  # Cochrane-Orcutt steps for the AIC rule's phi; it usually settles in under ten
AR_TOLERANCE = 1e-6
MIN_POINTS_PER_PARAMETER = 3  # fewer usable points than this per fitted coefficient is refused


@dataclass(frozen=True, eq=False)
class Covariate:
    """A factor that moves the response: its own times (decimal years) and values, and how far it may lag."""

    name: str
    time: np.ndarray
    value: np.ndarray  # NaN where missing
    max_lag: int | None = None  # in steps of the response; None: two years' worth (at most a quarter of the record)


@dataclass(frozen=True)
class ArRegression:
    """OLS coefficients of y = X @ coef with ranges that allow for autocorrelated noise (module docstring)."""

    coef: np.ndarray
    stderr: np.ndarray  # +inf where the data cannot bound the coefficient
    ci: np.ndarray  # (p, 2)
    p_value: np.ndarray  # two-sided, against zero
    dof: np.ndarray
    n_effective: np.ndarray
    variance_inflation: np.ndarray
    noise: NoiseModel  # of the residuals, bias-corrected for p regressors
    fitted: np.ndarray
    residuals: np.ndarray
    rss: float
    n: int
    confidence: float


@dataclass(frozen=True)
class FactorEstimate:
    name: str
    coefficient: float  # response units per covariate unit
    ci: tuple[float, float]
    stderr: float
    p_value: float
    lag: int  # steps of the response
    lag_years: float
    variance_share: float  # variance of the factor's contribution over the response's variance
    n_effective: float
    lag_profile: tuple[float, ...]  # the lag criterion at lags 0..max_lag, the other factors at their chosen lags


@dataclass(frozen=True, eq=False)
class AdjustmentResult:
    factors: tuple[FactorEstimate, ...]
    trend_slope: float  # per year, with the factors in the model
    trend_ci: tuple[float, float]
    trend_stderr: float
    trend_p_value: float
    time: np.ndarray  # the response times used
    raw: np.ndarray  # the response at those times
    adjusted: np.ndarray  # raw minus the factors' contributions, re-centred to raw's mean
    contributions: np.ndarray  # (k, n_used) each factor's beta * x(t - lag)
    fitted: np.ndarray  # trend plus factors
    residual_sd_raw: float  # about a straight line, on the same points
    residual_sd_adjusted: float  # about the full model
    noise: NoiseModel  # of the final residuals
    n_used: int
    dropped_times: tuple[float, ...]
    lag_rule: str
    noise_kind: str
    confidence: float
    sweeps: int  # coordinate-descent sweeps until no lag moved


# ---------------------------------------------------------------------------------------------------------------
# Regression with autocorrelation-aware ranges


def coefficient_inflation(weights: np.ndarray, noise: NoiseModel) -> np.ndarray:
    """nu_j = w_j' R w_j / w_j' w_j for each row w_j of ``weights`` (p, n); R from the noise's autocorrelations.

    Any noise kind (``app.stats.noise.covariance_quadratic_forms``). Floored at 1, as ranges are
    (``NoiseModel.range_inflation``).
    """
    w = np.atleast_2d(np.asarray(weights, dtype=float))
    ww = np.einsum("ij,ij->i", w, w)
    if noise.is_white:
        return np.ones(w.shape[0])
    quad = covariance_quadratic_forms(w, noise) / noise.marginal_sd ** 2
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.maximum(np.where(ww > 0, quad / np.where(ww > 0, ww, 1.0), 1.0), 1.0)


def ar_regression(design: np.ndarray, y: np.ndarray, noise_kind: str = "ar1", confidence: float = 0.95,
                  noise: NoiseModel | None = None) -> ArRegression:
    """OLS fit of ``y`` on ``design`` (n, p) with each coefficient's range inflated for the noise's memory.

    ``noise`` given from outside replaces the model estimated on the residuals (its autocorrelation is
    used; the residual variance still comes from these data).
    """
    check_noise_kind(noise_kind, "options.noise", allow_chosen=True)
    check_fraction(confidence, "confidence")
    X = np.asarray(design, dtype=float)
    n, p = X.shape
    fit = fit_linear(X, y)
    if noise is not None:
        model = noise
    elif noise_kind == CHOSEN_BY_DATA:
        model = select_noise_model(fit.residuals, design=X).chosen
    else:
        model = estimate_noise(fit.residuals, noise_kind, n_regressors=p)
    weights = fit.cov_unscaled @ X.T
    nu = coefficient_inflation(weights, model)
    n_eff = np.minimum(n / nu, float(n))
    bounded = n_eff > p
    white_se = np.sqrt(fit.rss / max(n - p, 1) * np.diag(fit.cov_unscaled))
    stderr = np.where(bounded, white_se * np.sqrt((n - p) / np.where(bounded, n_eff - p, 1.0)), np.inf)
    dof = np.maximum(n_eff - p, 0.0)
    q = stats.t.ppf(0.5 + confidence / 2.0, np.where(bounded, dof, 1.0))
    half = np.where(bounded, q * np.where(bounded, stderr, 0.0), np.inf)
    ci = np.column_stack([fit.coef - half, fit.coef + half])
    with np.errstate(invalid="ignore", divide="ignore"):
        t_stat = np.abs(fit.coef) / np.where(bounded & (stderr > 0), stderr, 1.0)
    p_value = np.where(bounded & (stderr > 0), 2.0 * stats.t.sf(t_stat, np.where(bounded, dof, 1.0)), 1.0)
    return ArRegression(coef=fit.coef, stderr=stderr, ci=ci, p_value=p_value, dof=dof, n_effective=n_eff,
                        variance_inflation=nu, noise=model, fitted=fit.fitted, residuals=fit.residuals, rss=fit.rss,
                        n=n, confidence=confidence)


# ---------------------------------------------------------------------------------------------------------------
# Alignment on the decimal-year axis


def match_times(targets: np.ndarray, source_times: np.ndarray, tolerance: float) -> np.ndarray:
    """Index into ``source_times`` (sorted) of the time nearest each target, or -1 if none lies within tolerance."""
    targets = np.asarray(targets, dtype=float)
    source = np.asarray(source_times, dtype=float)
    if source.size == 0:
        return np.full(targets.shape, -1, dtype=np.int64)
    right = np.clip(np.searchsorted(source, targets), 1, max(source.size - 1, 1))
    left = right - 1
    if source.size == 1:
        left = right = np.zeros(targets.shape, dtype=np.int64)
    nearest = np.where(np.abs(source[left] - targets) <= np.abs(source[right] - targets), left, right)
    return np.where(np.abs(source[nearest] - targets) <= tolerance, nearest, -1)


def lagged_values(response_time: np.ndarray, covariate: Covariate, step: float, max_lag: int) -> np.ndarray:
    """(max_lag + 1, n): row L holds the covariate at t - L steps for every response time t, NaN when it has none."""
    offsets = np.arange(max_lag + 1)[:, None] * step
    idx = match_times(np.asarray(response_time)[None, :] - offsets, covariate.time, MATCH_TOLERANCE_STEPS * step)
    values = np.asarray(covariate.value, dtype=float)
    return np.where(idx >= 0, values[np.maximum(idx, 0)], np.nan)


# ---------------------------------------------------------------------------------------------------------------
# Input checks


def _check_lag_rule(rule: str) -> None:
    if rule not in LAG_RULES:
        raise ClaimError(f"unknown lag rule '{rule}'", location=Location(field="options.lag_rule"),
                         fix="Use one of: " + ", ".join(LAG_RULES))


def default_max_lag(points_per_year: float) -> int:
    return int(round(DEFAULT_LAG_YEARS * points_per_year))


def _check_covariate(cov: object, index: int, n_response: int, points_per_year: float) -> Covariate:
    where = f"covariates[{index}]"
    if not isinstance(cov, Covariate):
        raise SeriesFormatError(f"expected a covariate with name, time and value, got {type(cov).__name__}",
                                location=Location(field=where), fix='Send {"name", "time": [...], "value": [...]}')
    if not isinstance(cov.name, str) or not cov.name.strip():
        raise SeriesFormatError("a covariate needs a name", location=Location(field=f"{where}.name"),
                                fix="Name it, for example 'ENSO index'")
    time = np.asarray(cov.time, dtype=float)
    value = np.asarray(cov.value, dtype=float)
    if time.ndim != 1 or value.ndim != 1 or time.size != value.size:
        raise SeriesFormatError(f"'{cov.name}' has {time.size} times and {value.size} values",
                                location=Location(field=f"{where}.value"), fix="Give exactly one value per time")
    bad = np.flatnonzero(~np.isfinite(time))
    if bad.size:
        raise SeriesFormatError(f"time {bad[0]} of '{cov.name}' is not a number",
                                location=Location(field=f"{where}.time[{bad[0]}]"), fix="Give every time as a number")
    unsorted = np.flatnonzero(np.diff(time) <= 0)
    if unsorted.size:
        raise SeriesContentError(f"the times of '{cov.name}' are not strictly increasing at position "
                                 f"{unsorted[0] + 1}", location=Location(field=f"{where}.time[{unsorted[0] + 1}]"),
                                 fix="Sort the covariate by time and remove repeated times")
    infinite = np.flatnonzero(np.isinf(value))
    if infinite.size:
        raise SeriesFormatError(f"value {infinite[0]} of '{cov.name}' is infinite",
                                location=Location(field=f"{where}.value[{infinite[0]}]"),
                                fix="Give a finite number, or leave the value missing")
    max_lag = cov.max_lag
    if max_lag is None:  # two years, or a quarter of a short record
        max_lag = min(default_max_lag(points_per_year), n_response // 4)
    elif isinstance(max_lag, bool) or not isinstance(max_lag, (int, np.integer)) or max_lag < 0:
        raise ClaimError(f"max_lag of '{cov.name}' must be a whole number of steps, 0 or more, got {max_lag!r}",
                         location=Location(field=f"{where}.max_lag"), fix="Give for example 24 for two years of months")
    elif max_lag > n_response // 4:
        raise ClaimError(f"max_lag {max_lag} of '{cov.name}' is more than a quarter of the response's "
                         f"{n_response} points", location=Location(field=f"{where}.max_lag"),
                         fix="Give a shorter maximum lag")
    return Covariate(name=cov.name.strip(), time=time, value=value, max_lag=int(max_lag))


def _check_inputs(t, y, covariates, points_per_year) -> tuple[np.ndarray, np.ndarray, list[Covariate]]:
    t = np.asarray(t, dtype=float)
    y = np.asarray(y, dtype=float)
    if t.ndim != 1 or t.shape != y.shape or t.size < 3:
        raise SeriesContentError("the response needs matching time and value arrays of at least three points",
                                 location=Location(field="series"), fix="Give one value per time")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(y))) or np.any(np.diff(t) <= 0):
        raise SeriesContentError("the response must be finite and strictly increasing in time",
                                 location=Location(field="series"), fix="Drop missing values and sort by time")
    if not (math.isfinite(points_per_year) and points_per_year > 0):
        raise InputError(f"points per year must be positive, got {points_per_year}",
                         location=Location(field="points_per_year"))
    if not isinstance(covariates, Sequence) or len(covariates) == 0:
        raise SeriesFormatError("give at least one covariate", location=Location(field="covariates"),
                                fix='Send "covariates": [{"name", "time": [...], "value": [...]}]')
    if len(covariates) > MAX_COVARIATES:
        raise InputError(f"{len(covariates)} covariates is more than {MAX_COVARIATES}",
                         location=Location(field="covariates"), fix="Keep the factors that matter most")
    checked = [_check_covariate(c, i, t.size, points_per_year) for i, c in enumerate(covariates)]
    seen: dict[str, int] = {}
    for i, cov in enumerate(checked):
        if cov.name.lower() in seen:
            raise SeriesFormatError(f"two covariates are named '{cov.name}'",
                                    location=Location(field=f"covariates[{i}].name"),
                                    fix="Give each covariate its own name")
        seen[cov.name.lower()] = i
    return t, y, checked


def _usable_sample(t, step, covariates, lagged) -> np.ndarray:
    """Response points where every covariate has a value at every candidate lag; errors name the culprit."""
    usable = np.ones(t.size, dtype=bool)
    for i, (cov, rows) in enumerate(zip(covariates, lagged)):
        present = np.all(np.isfinite(rows), axis=0)
        if not present.any():
            matched = int(np.isfinite(rows[0]).sum())
            raise SeriesContentError(
                f"'{cov.name}' ({cov.time[0]:.4g} to {cov.time[-1]:.4g}, {matched} times matching the response's "
                f"within a quarter step) does not cover the response ({t[0]:.4g} to {t[-1]:.4g}) at lags "
                f"0 to {cov.max_lag}", location=Location(field=f"covariates[{i}].time"),
                fix="Give the covariate on the response's time step, starting at least max_lag steps before it")
        usable &= present
    n_params = 2 + len(covariates)
    needed = max(MIN_POINTS_PER_PARAMETER * n_params, 10)
    if usable.sum() < needed:
        raise SeriesContentError(f"only {int(usable.sum())} response times have every covariate at every lag; "
                                 f"at least {needed} are needed", location=Location(field="covariates"),
                                 fix="Give covariates that overlap the response for longer, or shorter maximum lags")
    return usable


# ---------------------------------------------------------------------------------------------------------------
# Lag search


def _criteria(stack: np.ndarray, y: np.ndarray, rule: str) -> np.ndarray:
    """The lag criterion of each design in ``stack`` (m, n, p): RSS for "ls", -2 log-likelihood (AR(1)) for "aic"."""
    q, r = np.linalg.qr(stack)
    # A rank-deficient candidate (a lag at which a covariate is constant, say) gets an arbitrary extra
    # direction from QR, which would flatter its fit: such candidates are ruled out instead.
    diagonal = np.abs(np.diagonal(r, axis1=1, axis2=2))
    singular = diagonal.min(axis=1) <= 1e-10 * diagonal.max(axis=1)
    qty = np.einsum("mnp,n->mp", q, y)
    residuals = y[None, :] - np.einsum("mnp,mp->mn", q, qty)
    if rule == "ls":
        return np.where(singular, np.inf, np.einsum("mn,mn->m", residuals, residuals))
    return np.where(singular, np.inf, _ar1_deviance(stack, y, residuals))


def _ar1_deviance(stack: np.ndarray, y: np.ndarray, residuals: np.ndarray) -> np.ndarray:
    """-2 x the exact Gaussian log-likelihood of each design with AR(1) errors, phi and beta at their optimum.

    For a given phi the Prais-Winsten transform makes the errors white, so beta and sigma^2 have closed
    forms and -2 log L = n (log(2 pi RSS_w / n) + 1) - log(1 - phi^2). phi is found by iterating
    Cochrane-Orcutt style (phi from the lag-1 autocorrelation of y - X beta_gls) for all candidates at once
    until it settles; on the Okun data of the tests this reproduces statsmodels' ARIMA(1,0,0) likelihood.
    """
    phi = np.clip(lag_autocorrelations(residuals, 1), -PHI_LIMIT, PHI_LIMIT)
    for _ in range(AR_ITERATIONS):
        deviance, gls_residuals = _whitened_fit(stack, y, phi)
        updated = np.clip(lag_autocorrelations(gls_residuals, 1), -PHI_LIMIT, PHI_LIMIT)
        settled = np.max(np.abs(updated - phi)) < AR_TOLERANCE
        phi = updated
        if settled:
            break
    deviance, _ = _whitened_fit(stack, y, phi)
    return deviance


def _whitened_fit(stack: np.ndarray, y: np.ndarray, phi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    n = stack.shape[1]
    head = np.sqrt(1.0 - phi * phi)

    def whiten(x: np.ndarray, f: np.ndarray, h: np.ndarray) -> np.ndarray:
        return np.concatenate([h * x[:, :1], x[:, 1:] - f * x[:, :-1]], axis=1)

    yw = whiten(np.broadcast_to(y, (stack.shape[0], n)), phi[:, None], head[:, None])
    xw = whiten(stack, phi[:, None, None], head[:, None, None])
    qw, rw = np.linalg.qr(xw)
    proj = np.einsum("mnp,mn->mp", qw, yw)
    rss_w = np.einsum("mn,mn->m", yw, yw) - np.einsum("mp,mp->m", proj, proj)
    beta = np.linalg.solve(rw, proj[:, :, None])[:, :, 0]
    gls_residuals = y[None, :] - np.einsum("mnp,mp->mn", stack, beta)
    sigma2 = np.maximum(rss_w, 1e-300) / n
    return n * (np.log(2.0 * np.pi * sigma2) + 1.0) - np.log(head * head), gls_residuals


def _scores_for(i: int, base: np.ndarray, columns: list[np.ndarray], lags: list[int], y: np.ndarray,
                rule: str, include: Sequence[int]) -> np.ndarray:
    """Criterion for every lag of covariate ``i``, the covariates in ``include`` held at ``lags``."""
    candidates = columns[i]  # (L, n)
    fixed = [columns[j][lags[j]] for j in include if j != i]
    parts = [np.broadcast_to(base, (candidates.shape[0],) + base.shape)]
    if fixed:
        parts.append(np.broadcast_to(np.column_stack(fixed), (candidates.shape[0], base.shape[0], len(fixed))))
    parts.append(candidates[:, :, None])
    return _criteria(np.concatenate(parts, axis=2), y, rule)


def choose_lags(base: np.ndarray, columns: list[np.ndarray], y: np.ndarray,
                rule: str) -> tuple[list[int], list[np.ndarray], int]:
    """Coordinate descent over the lag grid: each covariate's lag in turn, all its lags scored at once.

    Starts from each covariate's best lag alone (with the trend), sweeps until no lag moves. Ties go to
    the shorter lag. Returns the lags, each covariate's criterion profile at the end, and the sweeps used.
    """
    k = len(columns)
    lags = [int(np.argmin(_scores_for(i, base, columns, [0] * k, y, rule, include=[i]))) for i in range(k)]
    profiles = [np.empty(0)] * k
    sweeps = 0
    if k == 1:
        profiles[0] = _scores_for(0, base, columns, lags, y, rule, include=[0])
        return lags, profiles, 1
    for sweeps in range(1, MAX_SWEEPS + 1):
        moved = False
        for i in range(k):
            profiles[i] = _scores_for(i, base, columns, lags, y, rule, include=range(k))
            best = int(np.argmin(profiles[i]))
            current = profiles[i][lags[i]]
            if best != lags[i] and profiles[i][best] < current - 1e-12 * abs(current):
                lags[i] = best
                moved = True
        if not moved:
            break
    return lags, profiles, sweeps


# ---------------------------------------------------------------------------------------------------------------
# The fit


def fit_covariates(t: np.ndarray, y: np.ndarray, covariates: Sequence[Covariate], points_per_year: float,
                   noise_kind: str = "ar1", confidence: float = 0.95, lag_rule: str = "ls") -> AdjustmentResult:
    """Fit trend plus lagged covariates to the response (t, y) and build the adjusted series (module docstring)."""
    check_noise_kind(noise_kind, "options.noise", allow_chosen=True)
    _check_lag_rule(lag_rule)
    check_fraction(confidence, "confidence")
    t, y, covs = _check_inputs(t, y, covariates, points_per_year)
    step = 1.0 / points_per_year
    lagged = [lagged_values(t, cov, step, int(cov.max_lag)) for cov in covs]
    usable = _usable_sample(t, step, covs, lagged)
    for i, (cov, rows) in enumerate(zip(covs, lagged)):
        if np.ptp(rows[:, usable]) == 0:
            raise SeriesContentError(f"'{cov.name}' does not vary over the response's times",
                                     location=Location(field=f"covariates[{i}].value"),
                                     fix="Drop a constant covariate: it cannot explain any change")
    tu, yu = t[usable], y[usable]
    tc = tu - tu.mean()
    base = np.column_stack([np.ones(tu.size), tc / max(np.abs(tc).max(), 1e-12)])
    columns = [_standardised(rows[:, usable]) for rows in lagged]
    lags, profiles, sweeps = choose_lags(base, columns, yu, lag_rule)

    chosen = np.column_stack([rows[lag, usable] for rows, lag in zip(lagged, lags)])
    design = np.column_stack([np.ones(tu.size), tc, chosen])
    reg = ar_regression(design, yu, noise_kind, confidence)
    contributions = (chosen * reg.coef[2:]).T
    total = contributions.sum(axis=0)
    adjusted = yu - (total - total.mean())
    y_var = float(yu.var())
    factors = tuple(
        FactorEstimate(name=cov.name, coefficient=float(reg.coef[2 + i]),
                       ci=(float(reg.ci[2 + i, 0]), float(reg.ci[2 + i, 1])), stderr=float(reg.stderr[2 + i]),
                       p_value=float(reg.p_value[2 + i]), lag=int(lags[i]), lag_years=float(lags[i] * step),
                       variance_share=float(contributions[i].var() / y_var) if y_var > 0 else 0.0,
                       n_effective=float(reg.n_effective[2 + i]), lag_profile=tuple(float(v) for v in profiles[i]))
        for i, cov in enumerate(covs))
    line = fit_linear(design[:, :2], yu)
    n_used, p = int(tu.size), design.shape[1]
    return AdjustmentResult(
        factors=factors, trend_slope=float(reg.coef[1]), trend_ci=(float(reg.ci[1, 0]), float(reg.ci[1, 1])),
        trend_stderr=float(reg.stderr[1]), trend_p_value=float(reg.p_value[1]), time=tu, raw=yu, adjusted=adjusted,
        contributions=contributions, fitted=reg.fitted, residual_sd_raw=float(np.sqrt(line.rss / (n_used - 2))),
        residual_sd_adjusted=float(np.sqrt(reg.rss / (n_used - p))), noise=reg.noise, n_used=n_used,
        dropped_times=tuple(float(v) for v in t[~usable]), lag_rule=lag_rule, noise_kind=noise_kind,
        confidence=confidence, sweeps=sweeps)


def _standardised(rows: np.ndarray) -> np.ndarray:
    """Lagged columns on a common unit scale: the QR in the lag search then sees well-conditioned stacks."""
    spread = float(np.std(rows))
    return (rows - rows.mean()) / (spread if spread > 0 else 1.0)
