"""Driver and response: how closely they move together, and how weak a short window may look by chance.

A strong long-run link between a driver (CO2, say) and a response (temperature) does not make every
short stretch of the two move together: over ten or fifteen years the driver changes little while the
response's own variability does not shrink, so short-window correlations scatter widely. The question
this module answers is whether the weak windows seen are more than that scatter explains.

- ``regress_on_driver``: the full-record line response = a + b driver, with the range of b allowing for
  autocorrelated residuals (``app.stats.adjust.ar_regression``).
- ``correlation_set``: Pearson's r of the levels, of the two series each detrended by its own straight
  line, and of their first differences, with each series' trend test. Two trending series correlate in
  their levels whatever their link (Granger & Newbold 1974, J. Econometrics 2, 111, "Spurious
  regressions in econometrics"); the detrended and differenced correlations are what is left once the
  shared trend is removed.
- ``rolling_correlations``: r in every run of ``window`` consecutive points, for one response or for
  thousands at once, from prefix sums of x, y, x^2, y^2 and xy (O(n) per series).
- ``correlation_null``: the simulated null "the response follows the fitted relationship exactly, plus
  noise with the fitted AR memory": every simulated response at once, their rolling correlations, the
  share of weak windows and the weakest window of each, and the pointwise band per window start.

The null's noise is fitted to the residuals about the full-record line. If the relationship itself
changed (the response stopped following the driver for decades), the residuals carry that change as
long runs, the fitted noise becomes very persistent and the null lenient: a share of weak windows that
the change produced can then look ordinary. The weakest-window probability is less affected (a
transient decoupling shows up there), and the orchestration warns when the residuals are that persistent.

"Weak" is measured along the full-record relationship: r oriented by the sign of the fitted slope
(so for a falling relationship, r = -0.3 is a weak window) and called weak below ``WEAK_R`` = 0.5.
Observations are treated as equally spaced, as in ``app.stats.trend``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from app.errors import ClaimError, Location, SeriesContentError
from app.stats.adjust import ar_regression
from app.stats.noise import NoiseModel, simulate_noise
from app.stats.nonparam import mann_kendall
from app.stats.trend import slope_uncertainty

WEAK_R = 0.5
NULL_BAND = (0.05, 0.95)  # the null's central 90%
MIN_WINDOW_POINTS = 5  # a correlation of fewer points says almost nothing
SIMULATION_CHUNK = 500  # simulated responses per block: bounds memory, keeps the work vectorised
GAP_STEPS = 1.5  # consecutive points farther apart than this many steps are not differenced
TRANSFORMS = ("none", "log", "cumulative")


@dataclass(frozen=True, eq=False)
class DriverRegression:
    intercept: float  # response at driver = 0
    slope: float  # response units per driver unit
    stderr: float
    ci: tuple[float, float]
    p_value: float
    dof: float
    n_effective: float
    n: int
    r_squared: float
    confidence: float
    noise: NoiseModel  # of the residuals
    fitted: np.ndarray
    residuals: np.ndarray


@dataclass(frozen=True)
class CorrelationSet:
    levels: float
    detrended: float
    differences: float
    n: int
    n_differences: int
    driver_trend_p: float  # each series' trend test: the smaller of the AR(1) and Mann-Kendall p-values
    response_trend_p: float
    both_trending: bool  # both trends significant at 1 - confidence: the levels' r is open to the spurious reading


@dataclass(frozen=True, eq=False)
class RollingCorrelation:
    window_points: int
    starts: np.ndarray  # time of each window's first point
    ends: np.ndarray  # time of each window's last point
    r: np.ndarray  # NaN where either series is constant in the window
    sign: int  # +1 or -1: the direction of the full-record relationship
    share_below_half: float  # share of windows with sign * r < WEAK_R
    min_r: float  # the weakest window's sign * r

    @property
    def oriented(self) -> np.ndarray:
        return self.sign * self.r


@dataclass(frozen=True, eq=False)
class CorrelationNull:
    n_simulations: int
    share_below_half_mean: float
    share_below_half_band: tuple[float, float]  # the null's central 90%
    probability_share: float  # chance under the null of at least as large a share of weak windows
    probability_min_r: float  # chance under the null that the weakest window is as weak as the weakest observed
    min_r_band: tuple[float, float]  # central 90% of the weakest window's r under the null
    band_lower: np.ndarray  # per window start, the null's 5th percentile of r (in the data's own sign)
    band_median: np.ndarray
    band_upper: np.ndarray
    share_samples: np.ndarray  # each simulation's share of weak windows (the report's histogram)


def transform_driver(t: np.ndarray, x: np.ndarray, kind: str, step: float) -> np.ndarray:
    """The driver as the response is thought to follow it.

    ``log``: the natural logarithm (radiative forcing grows with the logarithm of CO2, so a slope on it
    times ln 2 is the response per doubling). ``cumulative``: the running integral from the driver's
    first value, reading the driver as a rate per year (sum of value times step): cumulative emissions
    from annual emissions. It needs a record without holes.
    """
    t = np.asarray(t, dtype=float)
    x = np.asarray(x, dtype=float)
    if kind not in TRANSFORMS:
        raise ClaimError(f"unknown transform '{kind}'", location=Location(field="transform"),
                         fix="Use one of: " + ", ".join(TRANSFORMS))
    if kind == "log":
        bad = np.flatnonzero(~(x > 0))
        if bad.size:
            raise SeriesContentError(f"the driver is {x[bad[0]]:g} at {t[bad[0]]:g}; a logarithm needs positive values",
                                     location=Location(field="driver.value"),
                                     fix="Use the 'none' transform, or a driver in absolute units "
                                         "(ppm rather than an anomaly)")
        return np.log(x)
    if kind == "cumulative":
        holes = np.flatnonzero(np.diff(t) > GAP_STEPS * step)
        if holes.size:
            raise SeriesContentError(f"the driver has a hole after {t[holes[0]]:g}; a running total would skip it",
                                     location=Location(field="driver.time"),
                                     fix="Fill the driver's missing values, or use the 'none' transform")
        return np.cumsum(x) * step
    return x


def regress_on_driver(x: np.ndarray, y: np.ndarray, confidence: float = 0.95, noise_kind: str = "ar1") -> DriverRegression:
    """Response on driver by OLS; the slope's range inflated for the residuals' memory."""
    x, y = _check_pair(x, y)
    xc = x - x.mean()
    reg = ar_regression(np.column_stack([np.ones(x.size), xc]), y, noise_kind, confidence)
    slope = float(reg.coef[1])
    total = float(((y - y.mean()) ** 2).sum())
    return DriverRegression(intercept=float(reg.coef[0] - slope * x.mean()), slope=slope, stderr=float(reg.stderr[1]),
                            ci=(float(reg.ci[1, 0]), float(reg.ci[1, 1])), p_value=float(reg.p_value[1]),
                            dof=float(reg.dof[1]), n_effective=float(reg.n_effective[1]), n=int(x.size),
                            r_squared=1.0 - reg.rss / total if total > 0 else 0.0, confidence=confidence,
                            noise=reg.noise, fitted=reg.fitted, residuals=reg.residuals)


def pearson_rows(x: np.ndarray, rows: np.ndarray) -> np.ndarray:
    """Pearson's r of ``x`` with every row of ``rows`` (m, n); NaN where either is constant."""
    x = np.asarray(x, dtype=float)
    rows = np.atleast_2d(np.asarray(rows, dtype=float))
    xc = x - x.mean()
    yc = rows - rows.mean(axis=1, keepdims=True)
    denom = np.sqrt((xc @ xc) * np.einsum("ij,ij->i", yc, yc))
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(denom > 0, (yc @ xc) / np.where(denom > 0, denom, 1.0), np.nan)


def pearson(x: np.ndarray, y: np.ndarray) -> float:
    return float(pearson_rows(x, np.asarray(y, dtype=float)[None, :])[0])


def _detrended(t: np.ndarray, v: np.ndarray) -> np.ndarray:
    tc = t - t.mean()
    return v - v.mean() - (v @ tc) / (tc @ tc) * tc


def correlation_set(t: np.ndarray, x: np.ndarray, y: np.ndarray, step: float, confidence: float = 0.95) -> CorrelationSet:
    """r of levels, of detrended series and of first differences (consecutive points only), with trend tests."""
    t = np.asarray(t, dtype=float)
    x, y = _check_pair(x, y)
    consecutive = np.diff(t) <= GAP_STEPS * step
    dx, dy = np.diff(x)[consecutive], np.diff(y)[consecutive]
    alpha = 1.0 - confidence
    driver_p, response_p = _trend_p(t, x, confidence), _trend_p(t, y, confidence)
    return CorrelationSet(levels=pearson(x, y), detrended=pearson(_detrended(t, x), _detrended(t, y)),
                          differences=pearson(dx, dy) if dx.size >= 3 else float("nan"), n=int(x.size),
                          n_differences=int(dx.size), driver_trend_p=float(driver_p), response_trend_p=float(response_p),
                          both_trending=bool(driver_p < alpha and response_p < alpha))


def _trend_p(t: np.ndarray, v: np.ndarray, confidence: float) -> float:
    """The stronger of the AR(1) trend test and Mann-Kendall (Hamed-Rao): on a smooth, nearly noiseless record
    (a concentration) the AR(1) effective sample collapses and its test alone would miss an obvious trend,
    the reason ``app.audit`` asks both tests before calling a record trendless."""
    return min(slope_uncertainty(t, v, "ar1", confidence).p_value, mann_kendall(v, alpha=1.0 - confidence).p_value)


def _prefix(values: np.ndarray) -> np.ndarray:
    pad = [(0, 0)] * (values.ndim - 1) + [(1, 0)]
    return np.pad(np.cumsum(values, axis=-1), pad)


def rolling_correlation_rows(x: np.ndarray, rows: np.ndarray, window: int) -> np.ndarray:
    """r of every run of ``window`` consecutive points, for each row of ``rows`` (m, n) against ``x`` (n,).

    Returns (m, n - window + 1). Correlation ignores a shift or a scale of either series, so each is
    centred and scaled on its whole length first: the prefix sums then stay small and exact enough
    (checked against numpy.corrcoef window by window in the tests).
    """
    x = np.asarray(x, dtype=float)
    rows = np.atleast_2d(np.asarray(rows, dtype=float))
    x = (x - x.mean()) / (x.std() or 1.0)
    scale = rows.std(axis=1, keepdims=True)
    rows = (rows - rows.mean(axis=1, keepdims=True)) / np.where(scale > 0, scale, 1.0)
    m = float(window)

    def sums(v: np.ndarray) -> np.ndarray:
        cum = _prefix(v)
        return cum[..., window:] - cum[..., :-window]

    sx, sxx = sums(x), sums(x * x)
    sy, syy, sxy = sums(rows), sums(rows * rows), sums(rows * x)
    var_x = sxx - sx * sx / m
    var_y = syy - sy * sy / m
    cov = sxy - sx * sy / m
    # Relative floor: a window in which a series is constant has a variance of rounding size, not zero.
    floor = 1e-12 * m
    valid = (var_x > floor) & (var_y > floor)
    with np.errstate(invalid="ignore", divide="ignore"):
        r = np.where(valid, cov / np.sqrt(np.where(valid, var_x * var_y, 1.0)), np.nan)
    return np.clip(r, -1.0, 1.0)


def _weak_share(oriented: np.ndarray) -> np.ndarray:
    finite = np.isfinite(oriented)
    count = finite.sum(axis=-1)
    weak = (np.where(finite, oriented, np.inf) < WEAK_R).sum(axis=-1)
    return np.where(count > 0, weak / np.maximum(count, 1), np.nan)


def _weakest(oriented: np.ndarray) -> np.ndarray:
    return np.min(np.where(np.isfinite(oriented), oriented, np.inf), axis=-1)


def rolling_correlations(t: np.ndarray, x: np.ndarray, y: np.ndarray, window: int, sign: int = 1) -> RollingCorrelation:
    """Every window of ``window`` consecutive points of one driver-response pair."""
    t = np.asarray(t, dtype=float)
    x, y = _check_pair(x, y)
    check_window(window, x.size)
    r = rolling_correlation_rows(x, y[None, :], window)[0]
    oriented = sign * r
    return RollingCorrelation(window_points=int(window), starts=t[: t.size - window + 1], ends=t[window - 1:], r=r,
                              sign=int(sign), share_below_half=float(_weak_share(oriented)),
                              min_r=float(_weakest(oriented)))


def correlation_null(x: np.ndarray, fitted: np.ndarray, noise: NoiseModel, observed: RollingCorrelation,
                     n_simulations: int, rng: np.random.Generator) -> CorrelationNull:
    """Responses that follow the driver exactly plus AR noise: how weak do their windows look?

    Each simulated response is ``fitted`` (the full-record line through the observed driver) plus an
    independent draw of ``noise``; every simulated response is correlated with the same observed driver
    over the same windows as the data.
    """
    x = np.asarray(x, dtype=float)
    fitted = np.asarray(fitted, dtype=float)
    window, sign = observed.window_points, observed.sign
    chunks = []
    for size in _chunk_sizes(n_simulations):
        responses = fitted[None, :] + simulate_noise(noise, fitted.size, size, rng)
        chunks.append(rolling_correlation_rows(x, responses, window))
    r = np.concatenate(chunks, axis=0)
    oriented = sign * r
    shares = _weak_share(oriented)
    weakest = _weakest(oriented)
    lo, hi = NULL_BAND
    band = np.nanquantile(r, [lo, 0.5, hi], axis=0)
    return CorrelationNull(
        n_simulations=int(n_simulations), share_below_half_mean=float(np.nanmean(shares)),
        share_below_half_band=(float(np.nanquantile(shares, lo)), float(np.nanquantile(shares, hi))),
        probability_share=float(np.mean(shares >= observed.share_below_half - 1e-12)),
        probability_min_r=float(np.mean(weakest <= observed.min_r + 1e-12)),
        min_r_band=(float(np.quantile(weakest, lo)), float(np.quantile(weakest, hi))),
        band_lower=band[0], band_median=band[1], band_upper=band[2], share_samples=shares)


def _chunk_sizes(total: int) -> list[int]:
    full, rest = divmod(int(total), SIMULATION_CHUNK)
    return [SIMULATION_CHUNK] * full + ([rest] if rest else [])


def check_window(window: int, n: int) -> None:
    if window < MIN_WINDOW_POINTS:
        raise ClaimError(f"a window of {window} points is too short for a correlation (at least "
                         f"{MIN_WINDOW_POINTS})", location=Location(field="window_years"), fix="Choose a longer window")
    if window > n - 2:
        raise ClaimError(f"a window of {window} points leaves fewer than three windows in the {n} overlapping "
                         "points", location=Location(field="window_years"),
                         fix="Choose a shorter window, or give series that overlap for longer")


def _check_pair(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    if x.ndim != 1 or x.shape != y.shape:
        raise SeriesContentError(f"the driver has {x.size} values at the shared times but the response {y.size}",
                                 location=Location(field="driver"), fix="Give both series on the same times")
    if x.size < 3 or not (np.all(np.isfinite(x)) and np.all(np.isfinite(y))):
        raise SeriesContentError("driver and response need at least three shared finite values",
                                 location=Location(field="driver"), fix="Give series that overlap in time")
    if np.ptp(x) == 0 or np.ptp(y) == 0:
        which = "driver" if np.ptp(x) == 0 else "response"
        raise SeriesContentError(f"the {which} is constant over the shared times", location=Location(field=which),
                                 fix="A constant series cannot correlate with anything")
    return x, y
